"""Command line: argument parsing and printing only; every action is a public API call.

Exit codes: 0 all limits met, 1 a limit failed (or the yield is below
``--min-yield``), 2 bad input, 3 numerical failure, 4 the environment (disk
full, permission denied, folder locked, scheduler unreachable).
"""
from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path
from typing import Sequence

from . import __version__
from .errors import CircuitodeError, NetlistError, environment_fault
from .cli_help import COMMAND_EXAMPLES, EXAMPLES
from .netlist.limits import reading_policy

__all__ = ["main", "build_parser"]

def _quantity(unit: str):
    """argparse type: a number with optional SI prefix and unit, e.g. "5us", "60 ms"."""

    def parse(text: str) -> float:
        from .quantities import parse_quantity

        try:
            return parse_quantity(text, unit)
        except CircuitodeError as exc:
            raise argparse.ArgumentTypeError(getattr(exc, "message", str(exc))) from None

    parse.__name__ = f"quantity in {unit}"
    return parse


def _assignment(text: str) -> tuple[str, str]:
    name, sep, value = text.partition("=")
    if not sep or not name.strip() or not value.strip():
        raise argparse.ArgumentTypeError(f"expected NAME=VALUE (e.g. R_pre=47Ω), got {text!r}")
    return name.strip(), value.strip()


def _percent(text: str) -> float:
    t = text.strip().rstrip("%").strip()
    try:
        value = float(t)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a percentage such as 95% or 99.5, got {text!r}") from None
    if not 0 <= value <= 100:
        raise argparse.ArgumentTypeError(f"a percentage lies between 0 and 100, got {text!r}")
    return value / 100.0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="circuitode",
        description="Switch-on transients, damping and tolerance batches of RLC networks.",
        epilog=EXAMPLES,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"circuitode {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser("check", help="parse a netlist and list nodes, elements, states, switches and faults",
                       epilog=COMMAND_EXAMPLES["check"], formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", help="a .cnet file")

    p = sub.add_parser("run", help="simulate the transient, measure it, check limits, write a run folder",
                       epilog=COMMAND_EXAMPLES["run"], formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", help="a .cnet file")
    p.add_argument("--method", help="integrator: auto, exact, rk4, rk45, dop853, radau, bdf, trapezoidal, trbdf2")
    p.add_argument("--step", type=_quantity("s"), help="output (and rk4) step, e.g. 5us")
    p.add_argument("--until", type=_quantity("s"), help="end of the window, e.g. 60ms")
    p.add_argument("--set", dest="overrides", action="append", type=_assignment, default=[],
                   metavar="NAME=VALUE", help="replace a param or part value, e.g. --set R_pre=47Ω, --set K_main.on=5mΩ "
                   "(repeatable)")
    p.add_argument("--out", type=Path, help="run folder (default: <netlist>-results next to the netlist)")
    p.add_argument("--no-plots", action="store_true", help="skip the PNG")
    p.add_argument("--running", action="append", default=[], metavar="QUANTITY",
                   help='also plot the running I²t of a recorded current (or energy of a power), e.g. '
                        '--running "current through K_main" (repeatable; limited ones are drawn anyway)')
    p.add_argument("--insist", action="store_true",
                   help="run rk45 or dop853 even on a circuit too stiff for them (refused otherwise)")

    p = sub.add_parser("modes", help="damping table (ζ, ωn, Q, τ) of every switch configuration",
                       epilog=COMMAND_EXAMPLES["modes"], formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", help="a .cnet file")
    p.add_argument("--until", type=_quantity("s"), help="window whose switch configurations count")
    p.add_argument("--set", dest="overrides", action="append", type=_assignment, default=[],
                   metavar="NAME=VALUE", help="replace a param or part value (repeatable)")
    p.add_argument("--json", type=Path, metavar="FILE", help="also write the table as JSON ('-': print it instead)")

    p = sub.add_parser("tolerance", help="batch over component tolerances: statistics, yield, sensitivity",
                       epilog=COMMAND_EXAMPLES["tolerance"], formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", help="a .cnet file")
    p.add_argument("--samples", type=int,
                   help="number of samples (needed for mc, lhs and sobol; corners always run every ± extreme)")
    p.add_argument("--sampler", choices=("mc", "lhs", "sobol", "corners"), default="lhs",
                   help="Monte Carlo, Latin hypercube (default), Sobol, or every ± corner")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    p.add_argument("--tol", dest="tol_overrides", action="append", type=_assignment, default=[],
                   metavar="NAME=SPREAD", help="set a tolerance on a param or part, e.g. --tol C_link=10%%, --tol R1=5%% "
                   "(repeatable)")
    where = p.add_mutually_exclusive_group()
    where.add_argument("--workers", type=int, help="local worker processes (default: in this process)")
    where.add_argument("--scheduler", metavar="ADDRESS", help="Dask scheduler address, e.g. tcp://host:8786")
    p.add_argument("--method", choices=("exact", "rk4"), default="exact",
                   help="batched integrator: exact (matrix exponential, default) or rk4")
    p.add_argument("--keep-waveforms", type=int, default=0, metavar="K",
                   help="also write the (decimated) waveforms of the first K samples")
    p.add_argument("--chunk", type=int, help="samples per chunk")
    p.add_argument("--min-yield", type=_percent, help="exit 1 when the yield is below this, e.g. 99%%")
    p.add_argument("--out", type=Path, help="folder (default: <netlist>-tolerance next to the netlist)")
    p.add_argument("--no-plots", action="store_true", help="skip the PNGs")
    _study_parsers(sub)
    _add_bench_commands(sub)
    for command in sub.choices.values():
        command.add_argument("--include-path", dest="include_paths", action="append", type=Path, default=[],
                             metavar="FOLDER", help="a folder (besides the netlist's own) that include "
                             "statements may read from (repeatable)")
        command.add_argument("--allow-large", action="store_true",
                             help="raise every size limit (file, line, includes, points, events, memory) "
                             "when you really mean a large job")
    return parser


def _study_parsers(sub) -> None:
    """The design-study commands: sweep and size."""
    p = sub.add_parser("sweep", help="grid over one to three parameters or parts: table of figures and limits, plot",
                       epilog=COMMAND_EXAMPLES["sweep"], formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", help="a .cnet file")
    p.add_argument("--vary", action="append", required=True, metavar="NAME=SPEC",
                   help="LOW..HIGH/COUNT[/log] or V1,V2,…, e.g. R_pre=4.7Ω..100Ω/20/log (repeat for 2 or 3 names)")
    p.add_argument("--set", dest="overrides", action="append", type=_assignment, default=[],
                   metavar="NAME=VALUE", help="replace a param or part value first (repeatable)")
    p.add_argument("--method", choices=("exact", "rk4"), default="exact", help="batched integrator")
    p.add_argument("--out", type=Path, help="folder (default: <netlist>-sweep next to the netlist)")
    p.add_argument("--no-plots", action="store_true", help="skip the PNG")
    p.add_argument("--refine-worst", action="store_true",
                   help="one name only: narrow down the worst point of each limit between grid points")

    p = sub.add_parser("size", help="the values of one part over which every 'require' holds, with E12/E24 values",
                       epilog=COMMAND_EXAMPLES["size"], formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", help="a .cnet file")
    p.add_argument("--part", required=True, metavar="NAME", help="a param or part name, e.g. R_pre, R1, K_main.on")
    p.add_argument("--range", dest="within", required=True, metavar="LOW..HIGH", help="values to search, e.g. 1Ω..1kΩ")
    p.add_argument("--points", type=int, default=33, help="values swept before refining (default 33)")
    p.add_argument("--set", dest="overrides", action="append", type=_assignment, default=[],
                   metavar="NAME=VALUE", help="replace a param or part value first (repeatable)")
    p.add_argument("--method", choices=("exact", "rk4"), default="exact", help="batched integrator")
    p.add_argument("--yield", dest="target_yield", type=_percent, metavar="P",
                   help="size so that at least P of the tolerance samples meet every requirement, e.g. 99%%")
    p.add_argument("--samples", type=int, default=500, help="tolerance samples for --yield (default 500)")
    p.add_argument("--seed", type=int, default=0, help="random seed for --yield (default 0)")


def _add_bench_commands(sub) -> None:
    """Commands that look at frequency response and at measured captures."""
    p = sub.add_parser("response", help="frequency response (Bode plots) and impedance at a node, per configuration",
                       epilog=COMMAND_EXAMPLES["response"], formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", help="a .cnet file")
    p.add_argument("--from", dest="from_source", metavar="SOURCE", help="the independent source that drives")
    p.add_argument("--to", metavar="QUANTITY", help='the response, e.g. "voltage at out"')
    p.add_argument("--impedance-at", metavar="NODE", help="also the impedance seen at NODE (sources set to zero)")
    p.add_argument("--lowest", type=_quantity("Hz"), help="lowest frequency (default: two decades below the poles)")
    p.add_argument("--highest", type=_quantity("Hz"), help="highest frequency (default: two decades above)")
    p.add_argument("--points", type=int, default=801, help="log-spaced frequencies (default 801)")
    p.add_argument("--until", type=_quantity("s"), help="window whose switch configurations count")
    p.add_argument("--set", dest="overrides", action="append", type=_assignment, default=[],
                   metavar="NAME=VALUE", help="replace a param value (repeatable)")
    p.add_argument("--out", type=Path, help="folder (default: <netlist>-response next to the netlist)")
    p.add_argument("--no-plots", action="store_true", help="skip the PNGs")

    p = sub.add_parser("compare", help="a measured capture (CSV) against the model: alignment, errors, ringing",
                       epilog=COMMAND_EXAMPLES["compare"], formatter_class=argparse.RawDescriptionHelpFormatter)
    _capture_arguments(p)
    p.add_argument("--out", type=Path, help="folder (default: <netlist>-compare next to the netlist)")
    p.add_argument("--no-plots", action="store_true", help="skip the PNG")

    p = sub.add_parser("fit", help="fit toleranced parameters to a measured capture (least squares, intervals)",
                       epilog=COMMAND_EXAMPLES["fit"], formatter_class=argparse.RawDescriptionHelpFormatter)
    _capture_arguments(p)
    p.add_argument("--free", required=True, metavar="NAMES",
                   help="comma-separated parameters to fit, each with a tolerance (its bounds), e.g. L_cab,R_damp")


def _capture_arguments(p) -> None:
    """The netlist, the capture, its channel and how to line it up: shared by compare and fit."""
    p.add_argument("netlist", help="a .cnet file")
    p.add_argument("--measured", required=True, metavar="CSV", help="the capture (layouts: docs/captures.md)")
    p.add_argument("--channel", required=True, help="channel name, or number (CH2, channel 2 or the 2nd column)")
    p.add_argument("--as", dest="quantity", required=True, metavar="QUANTITY",
                   help='what the channel measured, e.g. "voltage at link"')
    align = p.add_mutually_exclusive_group()
    align.add_argument("--trigger-level", type=float, metavar="LEVEL",
                       help="align on the first crossing of this level (in the channel's unit; "
                            "default halfway through the model's step)")
    align.add_argument("--shift", type=_quantity("s"), help="add this to the capture's clock instead, e.g. 102us")
    p.add_argument("--set", dest="overrides", action="append", type=_assignment, default=[],
                   metavar="NAME=VALUE", help="replace a param or part value (repeatable)")

# --------------------------------------------------------------------------
# commands
# --------------------------------------------------------------------------


def _load(path: str, overrides: Sequence[tuple[str, str]] = ()):
    from .netlist import load

    if not Path(path).is_file():
        raise NetlistError(f"no netlist file at {path!r}", hint="give the path to a .cnet file")
    return load(path, overrides=dict(overrides) or None)


def _check(args: argparse.Namespace) -> int:
    from .output.report import check_text
    from .checks.topology import diagnose

    from .analysis.configuration_states import configuration_states
    from .output.report import caution_text

    circuit = _load(args.netlist)
    diagnostics = diagnose(circuit)
    ready = circuit.switches and not any(d.severity == "error" for d in diagnostics)
    configurations = configuration_states(circuit) if ready else ()
    print(check_text(circuit, diagnostics, path=args.netlist, configurations=configurations))
    print(f"\n{caution_text()}")
    return 2 if any(d.severity == "error" for d in diagnostics) else 0


def _run(args: argparse.Namespace) -> int:
    from .output.report import run_text
    from .jobs.run import default_out_dir, run_job
    from .output.progress import Ticker

    circuit = _load(args.netlist, args.overrides)
    out = args.out or default_out_dir(args.netlist)
    with Ticker("simulating"):  # elapsed time on a terminal once a run takes more than 3 s
        result = run_job(circuit, out_dir=out, method=args.method, step=args.step, until=args.until,
                         plots=not args.no_plots, running=tuple(args.running), insist=args.insist,
                         command=args.argv)
    if result.replaced:
        print(f"replaced the earlier run in {out}")
    print(run_text(circuit, result.waveforms, result.figures, result.limits, result.files, path=args.netlist))
    for problem in result.problems:
        print(f"warning: {problem}", file=sys.stderr)
    return result.exit_code


def _modes(args: argparse.Namespace) -> int:
    from .analysis.modes import circuit_modes
    from .output.report import modes_text
    from .checks.topology import verify

    circuit = _load(args.netlist, args.overrides)
    verify(circuit, args.until)
    configurations = circuit_modes(circuit, until=args.until)
    if args.json is not None:
        from .output.mode_table import write_modes_json

        write_modes_json(args.json, configurations, circuit)
        if str(args.json) == "-":
            return 0
    from .output.report import SAFETY_LINE

    print(modes_text(configurations, path=args.netlist, title=circuit.title, caution=SAFETY_LINE))
    if args.json is not None:
        print(f"table written to {args.json}")
    return 0


def _tolerance(args: argparse.Namespace) -> int:
    from .jobs.run import default_out_dir
    from .tolerance import format_batch_summary, run_batch

    if args.samples is None and args.sampler != "corners":
        raise NetlistError(f"--samples is needed for the {args.sampler} sampler",
                           hint="give e.g. --samples 1000, or use --sampler corners, which runs every ± extreme")
    _load(args.netlist)  # bad input is reported before any worker starts
    out = args.out or default_out_dir(args.netlist, "tolerance")
    result = run_batch(
        args.netlist,
        samples=args.samples or 0,
        sampler=args.sampler,
        seed=args.seed,
        workers=args.workers,
        scheduler=args.scheduler,
        out_dir=out,
        chunk_size=args.chunk,
        tol_overrides=dict(args.tol_overrides) or None,
        min_yield=args.min_yield,
        progress=sys.stderr.isatty(),
        plots=not args.no_plots,
        method=args.method,
        keep_waveforms=args.keep_waveforms,
    )
    print(format_batch_summary(result))
    return int(result.exit_code)


def _sweep(args: argparse.Namespace) -> int:
    from .jobs.run import default_out_dir
    from .studies import sweep
    from .studies.report import sweep_text

    out = args.out or default_out_dir(args.netlist, "sweep")
    result = sweep(args.netlist, args.vary, overrides=dict(args.overrides) or None, method=args.method,
                   out_dir=out, plots=not args.no_plots, refine=args.refine_worst)
    print(sweep_text(result, path=args.netlist))
    return result.exit_code


def _size(args: argparse.Namespace) -> int:
    from .studies.report import size_text
    from .studies.sizing import size

    result = size(args.netlist, args.part, args.within, overrides=dict(args.overrides) or None,
                  points=args.points, method=args.method, yield_target=args.target_yield,
                  yield_samples=args.samples, seed=args.seed)
    print(size_text(result, path=args.netlist))
    return result.exit_code


def _interrupted_words(args: argparse.Namespace, argv: Sequence[str] | None) -> str:
    """What a Ctrl-C left behind and how to carry on."""
    if args.command != "tolerance":
        return "interrupted; files already written are kept."
    import shlex

    words = shlex.join(list(argv if argv is not None else sys.argv[1:]))
    return ("interrupted; finished chunks are kept on disk. To resume, run the same command again:\n"
            f"  circuitode {words}\n"
            "only the chunks not yet finished are computed. The output folder accepts only this same batch:\n"
            "a changed --samples, --seed, --sampler, --tol or netlist needs another --out.")


def _response(args: argparse.Namespace) -> int:
    from .jobs.response import response_job
    from .output.response_text import response_text
    from .jobs.run import default_out_dir

    if (args.from_source is None) != (args.to is None):
        raise CircuitodeError("give --from SOURCE and --to QUANTITY together (or only --impedance-at NODE)")
    if args.to is None and args.impedance_at is None:
        raise CircuitodeError('nothing to compute: give --from SOURCE --to "voltage at NODE", --impedance-at NODE, or both')
    circuit = _load(args.netlist, args.overrides)
    result = response_job(circuit, from_source=args.from_source, to=args.to, impedance_at=args.impedance_at,
                          until=args.until, f_min=args.lowest, f_max=args.highest, points=args.points,
                          out_dir=args.out or default_out_dir(args.netlist, "response"), plots=not args.no_plots)
    print(response_text(result.curves, result.problems, result.files, path=args.netlist, title=circuit.title))
    return 0 if result.curves else 3


def _compare(args: argparse.Namespace) -> int:
    from .jobs.compare import compare_job
    from .output.compare_text import compare_text
    from .jobs.run import default_out_dir

    circuit = _load(args.netlist, args.overrides)
    result = compare_job(circuit, measured=args.measured, channel=args.channel, quantity=args.quantity,
                         shift=args.shift, level=args.trigger_level,
                         out_dir=args.out or default_out_dir(args.netlist, "compare"), plots=not args.no_plots)
    print(compare_text(result, path=args.netlist))
    return 0


def _fit(args: argparse.Namespace) -> int:
    from .jobs.fit import fit_job
    from .output.fit_text import fit_text

    circuit = _load(args.netlist, args.overrides)
    result = fit_job(circuit, measured=args.measured, channel=args.channel, quantity=args.quantity,
                     free=args.free.split(","), shift=args.shift, level=args.trigger_level)
    print(fit_text(result, path=args.netlist))
    return 0


def _reader_left() -> int:
    """Output piped into e.g. `head`: the reader left, not an error of ours."""
    devnull = os.open(os.devnull, os.O_WRONLY)
    os.dup2(devnull, sys.stdout.fileno())
    return 0


COMMANDS = {"check": _check, "run": _run, "modes": _modes, "tolerance": _tolerance, "sweep": _sweep, "size": _size,
            "response": _response, "compare": _compare, "fit": _fit}


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``circuitode`` command; returns the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    args.argv = ["circuitode", *(argv if argv is not None else sys.argv[1:])]  # for summary.json
    if args.command is None:
        parser.print_help()
        return 2
    try:
        with reading_policy(args.include_paths, args.allow_large):
            return COMMANDS[args.command](args)
    except CircuitodeError as exc:
        print(str(exc), file=sys.stderr)
        if exc.kept:
            print(f"what was computed before the failure is kept in {exc.kept}", file=sys.stderr)
        return exc.exit_code
    except OSError as exc:  # the machine, not the input: disk full, permissions, …
        if isinstance(exc, BrokenPipeError):
            return _reader_left()
        fault = environment_fault(exc)
        print(str(fault), file=sys.stderr)
        return fault.exit_code
    except MemoryError:
        print("error: the machine ran out of memory\n  what to do: shorten the window, lengthen the step, "
              "record fewer quantities or use fewer samples per chunk (--chunk)", file=sys.stderr)
        return 4
    except KeyboardInterrupt:
        print(_interrupted_words(args, argv), file=sys.stderr)
        return 130
    except Exception as exc:  # noqa: BLE001 - a bug of ours, not the user's: say so without a traceback
        if os.environ.get("CIRCUITODE_DEBUG"):
            raise
        print(
            f"internal error: {type(exc).__name__}: {exc}\n"
            "This is a fault in circuitode, not in your netlist. Files already written are kept.\n"
            "Rerun with CIRCUITODE_DEBUG=1 for the traceback and please report it.",
            file=sys.stderr,
        )
        return 3


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
