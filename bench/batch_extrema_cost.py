"""Benchmark: what locating peaks between rows costs a tolerance chunk.

The LC ladder of bench/tolerance_vs_loop.py (6 states, 2,000 output steps,
every part toleranced), one chunk of Latin-hypercube samples through
``tolerance.run_chunk`` with the exact method, timed side by side with and
without :mod:`circuitode.tolerance.batch_extrema` (its two hooks replaced by
no-ops for the second timing), best of several alternating rounds.  Prints the
two times and their ratio, and the largest change the located peaks make to the
rows' peaks.  Wall-clock on whatever machine runs this; the ratio is the result.

    python3 bench/batch_extrema_cost.py [--samples 2000] [--rounds 3]
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from tolerance_vs_loop import LADDER  # noqa: E402

from circuitode.netlist import loads  # noqa: E402
from circuitode.tolerance import batch_extrema  # noqa: E402
from circuitode.tolerance.batch import batch_figure_keys, run_chunk  # noqa: E402
from circuitode.tolerance.sampling import draw_samples, spreads_with_overrides  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=2000)
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args()
    circuit = loads(LADDER)
    table = draw_samples(spreads_with_overrides(circuit), args.samples, "lhs", 0)
    probes, keys = batch_figure_keys(circuit)
    task = {"circuit": circuit, "names": table.names, "values": table.values, "start": 0, "keys": keys,
            "probes": probes, "method": "exact"}
    hooks = batch_extrema.ChunkExtrema.steps, batch_extrema.ChunkExtrema.finish

    def timed(locate: bool):
        batch_extrema.ChunkExtrema.steps = hooks[0] if locate else (lambda *a, **k: None)
        batch_extrema.ChunkExtrema.finish = hooks[1] if locate else (lambda self: None)
        start = time.perf_counter()
        out = run_chunk(task)
        return time.perf_counter() - start, out

    timed(True)  # warm-up (imports, caches)
    with_, without = [], []
    for _ in range(args.rounds):
        t, located = timed(True)
        with_.append(t)
        t, rows = timed(False)
        without.append(t)
    batch_extrema.ChunkExtrema.steps, batch_extrema.ChunkExtrema.finish = hooks
    peaks = [j for j, (fig, _) in enumerate(keys) if fig == "peak"]
    change = np.max(np.abs(located["figures"][:, peaks] - rows["figures"][:, peaks]) /
                    np.abs(rows["figures"][:, peaks]))
    print(f"{args.samples} samples, one chunk: rows only {min(without):.3f} s, "
          f"located between rows {min(with_):.3f} s, ratio {min(with_) / min(without):.2f}")
    print(f"largest relative change of a peak by locating it: {change:.2e}")


if __name__ == "__main__":
    main()
