"""Benchmark: a sweep through the batch engine against a Python loop of single runs.

The pre-charge example (netlists/precharge.cnet) swept over R_pre × C_link
(default 20 × 10 = 200 points): ``circuitode.sweep`` (every point stepped in
stacked arrays, each with its own bypass-closing instant) against the loop a
careful user writes today: for each point, load the netlist with ``overrides``,
``co.simulate`` with the exact method, measure the same figures with
``co.summarise`` and check the limits with ``co.check_requirements``.  The loop
is timed on a subset and scaled linearly.  Prints both times, the speed ratio
and the largest disagreement of the peak R1 current and the verdicts on the
subset.  Wall-clock on whatever machine runs it; the ratio is the result.

    python3 bench/sweep_vs_loop.py [--r-values 20] [--c-values 10] [--loop-points 20]
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import circuitode as co  # noqa: E402

NETLIST = ROOT / "netlists" / "precharge.cnet"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--r-values", type=int, default=20)
    parser.add_argument("--c-values", type=int, default=10)
    parser.add_argument("--loop-points", type=int, default=20)
    args = parser.parse_args()

    start = time.perf_counter()
    study = co.sweep(NETLIST, {"R_pre": f"4.7Ω..47Ω/{args.r_values}/log",
                               "C_link": f"0.5mF..3mF/{args.c_values}"})
    batch_seconds = time.perf_counter() - start
    n = study.points.shape[0]

    rng = np.random.default_rng(0)
    subset = rng.choice(n, size=min(args.loop_points, n), replace=False)
    peaks, verdicts = [], []
    start = time.perf_counter()
    for i in subset:  # the per-point loop being measured
        r, c = study.points[i]
        circuit = co.load(NETLIST, overrides={"R_pre": float(r), "C_link": float(c)})
        waves = co.simulate(circuit, method="exact")
        figures = co.summarise(waves)
        limits = co.check_requirements(circuit.requirements, waves)
        peaks.append(figures["current through R1"]["peak"][0])
        verdicts.append(all(limit.passed for limit in limits))
    loop_seconds = time.perf_counter() - start
    scaled = loop_seconds * n / subset.size

    cols = study.columns()
    peak_diff = np.max(np.abs(np.array(peaks) - cols["peak of current through R1"][subset])
                       / np.abs(cols["peak of current through R1"][subset]))
    same_verdicts = np.array_equal(np.array(verdicts), study.all_pass[subset])
    print(f"sweep, {n} points through the batch engine: {batch_seconds:.2f} s")
    print(f"loop, {subset.size} points: {loop_seconds:.2f} s (scaled to {n}: {scaled:.1f} s)")
    print(f"speed ratio: {scaled / batch_seconds:.1f}x")
    print(f"largest relative difference of the peak R1 current: {peak_diff:.2e}; "
          f"verdicts identical: {same_verdicts}")


if __name__ == "__main__":
    main()
