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
from .netlist.limits import reading_policy

__all__ = ["main", "build_parser"]

EXAMPLES = """\
examples:
  circuitode check netlists/precharge.cnet
  circuitode run netlists/precharge.cnet
  circuitode run netlists/lc_filter.cnet --method rk4 --step 1us --out /tmp/lc
  circuitode run netlists/precharge.cnet --set R_pre=47Ω --no-plots
  circuitode modes netlists/lc_filter.cnet
  circuitode tolerance netlists/precharge.cnet --samples 10000 --sampler lhs --seed 7

exit codes: 0 all limits met, 1 a limit failed, 2 bad input, 3 numerical failure,
  4 the environment (disk full, permission denied, folder locked, scheduler unreachable).
"""


def _quantity(unit: str):
    """argparse type: a number with optional SI prefix and unit, e.g. "5us", "60 ms"."""

    def parse(text: str) -> float:
        from .netlist.quantities import parse_quantity

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

    p = sub.add_parser("check", help="parse a netlist and list nodes, elements, states, switches and faults")
    p.add_argument("netlist", help="a .cnet file")

    p = sub.add_parser("run", help="simulate the transient, measure it, check limits, write a run folder",
                       epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", help="a .cnet file")
    p.add_argument("--method", help="integrator: auto, exact, rk4, rk45, dop853, radau, bdf")
    p.add_argument("--step", type=_quantity("s"), help="output (and rk4) step, e.g. 5us")
    p.add_argument("--until", type=_quantity("s"), help="end of the window, e.g. 60ms")
    p.add_argument("--set", dest="overrides", action="append", type=_assignment, default=[],
                   metavar="NAME=VALUE", help="replace a param value, e.g. --set R_pre=47Ω (repeatable)")
    p.add_argument("--out", type=Path, help="run folder (default: <netlist>-results next to the netlist)")
    p.add_argument("--no-plots", action="store_true", help="skip the PNG")

    p = sub.add_parser("modes", help="damping table (ζ, ωn, Q, τ) of every switch configuration")
    p.add_argument("netlist", help="a .cnet file")
    p.add_argument("--until", type=_quantity("s"), help="window whose switch configurations count")
    p.add_argument("--set", dest="overrides", action="append", type=_assignment, default=[],
                   metavar="NAME=VALUE", help="replace a param value (repeatable)")

    p = sub.add_parser("tolerance", help="batch over component tolerances: statistics, yield, sensitivity",
                       epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", help="a .cnet file")
    p.add_argument("--samples", type=int, required=True, help="number of samples")
    p.add_argument("--sampler", choices=("mc", "lhs", "sobol", "corners"), default="lhs",
                   help="Monte Carlo, Latin hypercube (default), Sobol, or every ± corner")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    p.add_argument("--tol", dest="tol_overrides", action="append", type=_assignment, default=[],
                   metavar="NAME=SPREAD", help="set a tolerance, e.g. --tol C_link=10%% (repeatable)")
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
    for command in sub.choices.values():
        command.add_argument("--include-path", dest="include_paths", action="append", type=Path, default=[],
                             metavar="FOLDER", help="a folder (besides the netlist's own) that include "
                             "statements may read from (repeatable)")
        command.add_argument("--allow-large", action="store_true",
                             help="raise every size limit (file, line, includes, points, events, memory) "
                             "when you really mean a large job")
    return parser


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

    circuit = _load(args.netlist)
    diagnostics = diagnose(circuit)
    print(check_text(circuit, diagnostics, path=args.netlist))
    return 2 if any(d.severity == "error" for d in diagnostics) else 0


def _run(args: argparse.Namespace) -> int:
    from .output.report import run_text
    from .output.progress import Ticker
    from .output.runner import default_out_dir, run_job

    circuit = _load(args.netlist, args.overrides)
    out = args.out or default_out_dir(args.netlist)
    with Ticker("simulating"):  # elapsed time on a terminal once a run takes more than 3 s
        result = run_job(circuit, out_dir=out, method=args.method, step=args.step, until=args.until,
                         plots=not args.no_plots)
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
    print(modes_text(configurations, path=args.netlist, title=circuit.title))
    return 0


def _tolerance(args: argparse.Namespace) -> int:
    from .output.runner import default_out_dir
    from .tolerance import format_batch_summary, run_batch

    _load(args.netlist)  # bad input is reported before any worker starts
    out = args.out or default_out_dir(args.netlist, "tolerance")
    result = run_batch(
        args.netlist,
        samples=args.samples,
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


def _reader_left() -> int:
    """Output piped into e.g. `head`: the reader left, not an error of ours."""
    devnull = os.open(os.devnull, os.O_WRONLY)
    os.dup2(devnull, sys.stdout.fileno())
    return 0


COMMANDS = {"check": _check, "run": _run, "modes": _modes, "tolerance": _tolerance}


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``circuitode`` command; returns the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
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
        print("interrupted; files already written are kept.", file=sys.stderr)
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
