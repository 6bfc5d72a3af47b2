"""Benchmark: how long the command line takes to start, against a bare import of numpy and scipy.

Runs, interleaved and each in a fresh process,

* ``python -c "import numpy, scipy"`` (the baseline: no tool can start faster
  than the libraries it stands on),
* ``circuitode check netlists/precharge.cnet``,
* ``circuitode run netlists/precharge.cnet --out TMP`` (plots included), and
  the same with ``--no-plots``,
* for reference, the bare imports of the libraries a run cannot do without
  (scipy.linalg for the matrix exponential, networkx for the topology checks)
  and of matplotlib's Figure (the plot),

``--rounds`` times (default 9) and prints the median wall-clock time of each
and the two ratios to the baseline.  ``--before DIR`` adds ``check`` and
``run`` of another checkout of circuitode (e.g. ``git worktree add DIR REV``),
interleaved with the rest, to compare two revisions side by side.  Interleaving spreads the load of a
shared machine evenly over the three; the medians drop the outliers.

    python3 bench/startup.py [--rounds 9]
"""
from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
NETLIST = ROOT / "netlists" / "precharge.cnet"


def _seconds(command: list[str], cwd: Path = ROOT) -> float:
    start = time.perf_counter()
    done = subprocess.run(command, cwd=cwd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    elapsed = time.perf_counter() - start
    if done.returncode not in (0, 1):
        raise SystemExit(f"{' '.join(command)} failed ({done.returncode}):\n{done.stderr}")
    return elapsed


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--rounds", type=int, default=9)
    parser.add_argument("--before", type=Path, help="another checkout whose check and run are timed alongside")
    args = parser.parse_args()
    py = sys.executable
    with tempfile.TemporaryDirectory() as out:
        commands = {
            "bare import numpy, scipy": [py, "-c", "import numpy, scipy"],
            "circuitode check": [py, "-m", "circuitode", "check", str(NETLIST)],
            "circuitode run": [py, "-m", "circuitode", "run", str(NETLIST), "--out", out],
            "circuitode run --no-plots": [py, "-m", "circuitode", "run", str(NETLIST), "--out", out, "--no-plots"],
            "import numpy, scipy.linalg, networkx": [py, "-c", "import numpy, scipy.linalg, networkx"],
            "import matplotlib.figure": [py, "-c", "import numpy; from matplotlib.figure import Figure"],
        }
        folders = {name: ROOT for name in commands}
        if args.before is not None:
            for name in ("circuitode check", "circuitode run"):
                commands[f"{name} (before)"] = commands[name]
                folders[f"{name} (before)"] = args.before.resolve()
        for name, command in commands.items():  # warm the file cache and lark's grammar cache once
            _seconds(command, folders[name])
        times: dict[str, list[float]] = {name: [] for name in commands}
        for _ in range(args.rounds):
            for name, command in commands.items():
                times[name].append(_seconds(command, folders[name]))
    median = {name: statistics.median(values) for name, values in times.items()}
    base = median["bare import numpy, scipy"]
    print(f"{args.rounds} interleaved rounds, median wall-clock per command:")
    for name, value in median.items():
        spread = f"{min(times[name]):.3f}–{max(times[name]):.3f} s"
        print(f"  {name:38s} {value:7.3f} s   (range {spread})   ratio {value / base:5.2f}")


if __name__ == "__main__":
    main()
