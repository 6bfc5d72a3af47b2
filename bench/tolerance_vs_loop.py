"""Benchmark: a batched tolerance run against a per-sample loop of scipy solve_ivp.

10,000 samples of a 6-state circuit (a three-section LC ladder fed through a
contactor, every part toleranced) over 2,000 output steps, run by
circuitode.tolerance (batched matrix exponential), against scipy's solve_ivp
(RK45, rtol 1e-6) called once per sample, timed on 50 samples and scaled to
10,000.  Prints the speed ratio and the largest disagreement of the figures on
those 50 samples.  Timings are wall-clock on whatever machine runs this; the
ratio is the result, not a test.

    python3 bench/tolerance_vs_loop.py [--samples 10000] [--loop-samples 50]
"""
from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from circuitode.analysis.measure import measure  # noqa: E402
from circuitode.netlist import loads  # noqa: E402
from circuitode.model import SourceBank  # noqa: E402
from circuitode.equations.statespace import assemble  # noqa: E402
from circuitode.tolerance import run_batch  # noqa: E402
from circuitode.tolerance.batch import _element_values, batch_figure_keys  # noqa: E402
from circuitode.tolerance.engine import output_grid  # noqa: E402

LADDER = """
circuit "three-section LC ladder energised through a contactor"
param L_a = 20 uH ± 10 %
param L_b = 20 uH ± 10 %
param L_c = 20 uH ± 10 %
param C_a = 10 uF ± 20 % uniform
param C_b = 10 uF ± 20 % uniform
param C_c = 10 uF ± 20 % uniform
param R_d = 1.5 Ω ± 5 %
ground gnd
voltage_source V1 src -- gnd constant 400 V
resistor R_s src -- p 50 mΩ
switch K1 p -- n1 closes at 10 us off 10 kΩ
inductor L1 n1 -- m1 L_a initial 0 A
capacitor C1 m1 -- gnd C_a initial 0 V
inductor L2 m1 -- m2 L_b initial 0 A
capacitor C2 m2 -- gnd C_b initial 0 V
inductor L3 m2 -- m3 L_c initial 0 A
capacitor C3 m3 -- gnd C_c initial 0 V
resistor R_load m3 -- gnd R_d
transient until 2 ms step 1 us method exact initial given
record voltage at m3, current through L1
"""


def loop_figures(circuit, table, keys, probes, count):
    """Per-sample solve_ivp (RK45, rtol 1e-6) on the same state-space model; returns figures, seconds."""
    t_grid = output_grid(circuit)
    values = _element_values(circuit, table.names, table.values[:count])
    bank = SourceBank.of(circuit)
    before = assemble(circuit, (False,), probes, values)
    after = assemble(circuit, (True,), probes, values)
    t_switch = 10e-6
    labels = [p.label for p in probes]
    out = np.empty((count, len(keys)))
    start = time.perf_counter()
    for i in range(count):  # the per-sample loop being measured
        rows = []
        x0 = np.zeros(before.A.shape[1])
        ts = []
        for ss, (a, b) in ((before.sample(i), (0.0, t_switch)), (after.sample(i), (t_switch, t_grid[-1]))):
            inside = t_grid[(t_grid >= a) & (t_grid <= b)]
            A, B, C, D = ss.A, ss.B, ss.C, ss.D
            sol = solve_ivp(lambda t, x: A @ x + B @ bank.values(t), (a, b), x0, method="RK45",
                            rtol=1e-6, atol=1e-9, t_eval=inside)
            x0 = sol.y[:, -1]
            u = bank.values(sol.t)
            rows.append(C @ sol.y + D @ u.T)
            ts.append(sol.t)
        t = np.concatenate(ts)
        y = np.concatenate(rows, axis=1)
        for j, (fig, label) in enumerate(keys):
            out[i, j] = measure(fig, t, y[labels.index(label)], signal_unit=probes[labels.index(label)].unit)
    return out, time.perf_counter() - start


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=10_000)
    ap.add_argument("--loop-samples", type=int, default=50)
    args = ap.parse_args(argv)
    circuit = loads(LADDER)
    print(f"circuit: {len(circuit.state_names)} states, {output_grid(circuit).size - 1} steps")
    with tempfile.TemporaryDirectory() as out:
        start = time.perf_counter()
        result = run_batch(circuit, samples=args.samples, sampler="lhs", seed=1, out_dir=out,
                           progress=False, plots=False)
        batch_seconds = time.perf_counter() - start
    probes, keys = batch_figure_keys(circuit)
    loop, loop_seconds = loop_figures(circuit, result.samples, keys, probes, args.loop_samples)
    scaled = loop_seconds / args.loop_samples * args.samples
    batch = result.figures[: args.loop_samples]
    with np.errstate(all="ignore"):
        scale = np.nanmax(np.abs(batch), axis=0)
        rel = np.abs(batch - loop) / np.where(scale > 0, scale, 1.0)
    worst = int(np.nanargmax(np.nanmax(rel, axis=0)))
    print(f"batch:  {args.samples} samples in {batch_seconds:.2f} s ({int((~result.ok).sum())} failed)")
    print(f"loop:   {args.loop_samples} samples in {loop_seconds:.2f} s, scaled to {args.samples}: {scaled:.1f} s")
    print(f"speed ratio (loop / batch): {scaled / batch_seconds:.0f}x")
    print(f"largest figure disagreement on {args.loop_samples} samples: {np.nanmax(rel):.2e} of the "
          f"figure's scale ({keys[worst][0]} of {keys[worst][1]})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
