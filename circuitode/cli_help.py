"""The examples and exit codes printed under ``circuitode --help`` and each subcommand's ``--help``.

Text only: kept apart from :mod:`circuitode.cli` so that the parser reads at a glance.
"""

__all__ = ["EXAMPLES", "COMMAND_EXAMPLES"]

EXAMPLES = """\
examples:
  circuitode check netlists/precharge.cnet
  circuitode run netlists/precharge.cnet
  circuitode run netlists/lc_filter.cnet --method rk4 --step 1us --out /tmp/lc
  circuitode run netlists/precharge.cnet --set R_pre=47Ω --no-plots
  circuitode modes netlists/lc_filter.cnet
  circuitode tolerance netlists/precharge.cnet --samples 10000 --sampler lhs --seed 7
  circuitode sweep netlists/precharge.cnet --vary R_pre=4.7Ω..100Ω/20/log --vary C_link=1mF,1.5mF,2.2mF
  circuitode sweep netlists/reactor_inrush.cnet --vary K_on.angle=0deg..360deg/73 --refine-worst
  circuitode size netlists/precharge.cnet --part R_pre --range 1Ω..1kΩ
  circuitode size netlists/precharge.cnet --part R_pre --range 1Ω..1kΩ --yield 99%
  circuitode response netlists/dc_link_ring.cnet --from batt --to "voltage at link" --impedance-at link
  circuitode compare netlists/dc_link_ring.cnet --measured netlists/captures/dc_link_ring_decimal_comma.csv \\
      --channel 2 --as "voltage at link"
  circuitode fit netlists/dc_link_ring.cnet --measured netlists/captures/dc_link_ring_decimal_comma.csv \\
      --channel 2 --as "voltage at link" --free L_cab,R_damp

exit codes: 0 all limits met, 1 a limit failed, 2 bad input, 3 numerical failure,
  4 the environment (disk full, permission denied, folder locked, scheduler unreachable).
"""

#: The examples printed at the end of each subcommand's --help.
COMMAND_EXAMPLES = {
    "check": """\
examples:
  circuitode check netlists/precharge.cnet
  circuitode check netlists/cable_ladder.cnet

exit codes: 0 usable, 2 bad input or a fault that stops a run.
""",
    "run": """\
examples:
  circuitode run netlists/precharge.cnet
  circuitode run netlists/lc_filter.cnet --method rk4 --step 1us --out /tmp/lc
  circuitode run netlists/precharge.cnet --set R_pre=47Ω --until 100ms --no-plots

exit codes: 0 all limits met, 1 a limit failed, 2 bad input, 3 numerical failure.
""",
    "modes": """\
examples:
  circuitode modes netlists/lc_filter.cnet
  circuitode modes netlists/precharge.cnet --set R_pre=22Ω
  circuitode modes netlists/cable_ladder.cnet --json modes.json

exit codes: 0 done, 2 bad input, 3 numerical failure.
""",
    "tolerance": """\
examples:
  circuitode tolerance netlists/precharge.cnet --samples 10000
  circuitode tolerance netlists/precharge.cnet --samples 2000 --sampler sobol --seed 7 --tol C_link=10%
  circuitode tolerance netlists/precharge.cnet --sampler corners
  circuitode tolerance netlists/lc_filter.cnet --samples 5000 --workers 2 --min-yield 99%

Interrupted (Ctrl-C)? Run the same command again: finished chunks are kept
on disk and are not redone.

exit codes: 0 all limits met, 1 a limit failed or the yield is below
--min-yield, 2 bad input, 3 numerical failure.
""",
    "sweep": """\
examples:
  circuitode sweep netlists/precharge.cnet --vary R_pre=4.7Ω..100Ω/20/log
  circuitode sweep netlists/precharge.cnet --vary R_pre=4.7Ω..100Ω/20/log --vary C_link=1mF,1.5mF,2.2mF

exit codes: 0 at least one point meets every limit, 1 none does, 2 bad input.
""",
    "size": """\
examples:
  circuitode size netlists/precharge.cnet --part R_pre --range 1Ω..1kΩ
  circuitode size netlists/precharge.cnet --part R_pre --range 1Ω..1kΩ --yield 99%

exit codes: 0 an interval was found, 1 none, 2 bad input.
""",
    "response": """\
examples:
  circuitode response netlists/lc_filter.cnet --from Vin --to "voltage at out"
  circuitode response netlists/dc_link_ring.cnet --from batt --to "voltage at link" --impedance-at link

exit codes: 0 done, 2 bad input, 3 nothing could be computed.
""",
    "compare": """\
examples:
  circuitode compare netlists/dc_link_ring.cnet --measured netlists/captures/dc_link_ring_decimal_comma.csv \\
      --channel 2 --as "voltage at link"

exit codes: 0 done, 2 bad input (netlist or capture), 3 numerical failure.
""",
    "fit": """\
examples:
  circuitode fit netlists/dc_link_ring.cnet --measured netlists/captures/dc_link_ring_decimal_comma.csv \\
      --channel 2 --as "voltage at link" --free L_cab,R_damp

exit codes: 0 done, 2 bad input or parameters the capture cannot tell apart, 3 numerical failure.
""",
}
