"""Benchmark: a batched tolerance run against per-sample loops a careful user writes.

10,000 samples of a 6-state circuit (a three-section LC ladder fed through a
contactor, every part toleranced) over 2,000 output steps, run by
circuitode.tolerance (batched matrix exponential), against three loops over
the samples on the same state-space matrices, each timed on 50 samples and
scaled to 10,000: each sample's own exact stepping (scipy.linalg.expm
of the step; the best of them), a stiff-aware solve_ivp
(BDF with the Jacobian through the 10 ns stiff start while the contact is
open, RK45 after; rtol 1e-6) and the first baseline, RK45 throughout.  Prints
each speed ratio and the largest disagreement of the figures on those 50
samples.  Timings are wall-clock on whatever machine runs this; the
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
from scipy.linalg import expm

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from circuitode.analysis.measure import measure  # noqa: E402
from circuitode.netlist import loads  # noqa: E402
from circuitode.model import SourceBank  # noqa: E402
from circuitode.equations.statespace import assemble  # noqa: E402
from circuitode.tolerance import run_batch  # noqa: E402
from circuitode.tolerance.batch import batch_figure_keys  # noqa: E402
from circuitode.tolerance.sample_values import element_values  # noqa: E402
from circuitode.tolerance.engine import output_grid  # noqa: E402
from circuitode.tolerance.kernel import kernel_name  # noqa: E402

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


def _segment_solve_ivp(method):
    """One segment by solve_ivp (rtol 1e-6, atol 1e-9); method "RK45", or "stiff": BDF with
    the Jacobian A on the open-contact segment (λ ≈ −5e8 1/s through 10 kΩ), RK45 after."""
    def solve(A, B, bank, a, b, x0, inside, first):
        kind = "BDF" if (method == "stiff" and first) else "RK45"
        extra = {"jac": A} if kind == "BDF" else {}
        sol = solve_ivp(lambda t, x: A @ x + B @ bank.values(t), (a, b), x0, method=kind,
                        rtol=1e-6, atol=1e-9, t_eval=inside, **extra)
        return sol.t, sol.y
    return solve


def _segment_exact(A, B, bank, a, b, x0, inside, first):
    """One segment by each sample's own exact stepping: Φ and Γ of a step from
    scipy.linalg.expm of the augmented matrix [[A, B], [0, 0]] h (exact for the constant
    source here; common practice, zero-order hold), one pair per distinct step length
    (the whole steps of the grid, the partial ones at the segment's ends), then
    x ← Φ x + Γ u along the output instants."""
    u = bank.values(np.array([a, b]))
    if not np.array_equal(u[0], u[1]):
        raise SystemExit("this loop assumes constant sources")
    u = u[0]
    n, m = A.shape[0], B.shape[1]
    marks = np.concatenate([[a], inside, [b]])
    lengths = np.diff(marks)
    pairs = {}
    x = np.empty((n, inside.size))
    cur = np.asarray(x0, dtype=float)
    for k, h in enumerate(lengths[:-1]):  # steps ending at the output instants
        key = round(h / (b - a), 9)  # equal grid steps (to rounding) share one exponential
        if key not in pairs:
            aug = np.zeros((n + m, n + m))
            aug[:n, :n], aug[:n, n:] = A * h, B * h
            E = expm(aug)
            pairs[key] = (E[:n, :n], E[:n, n:] @ u)
        phi, gam = pairs[key]
        cur = phi @ cur + gam
        x[:, k] = cur
    if lengths[-1] > 0:  # the partial step to the segment's end, not an output instant
        aug = np.zeros((n + m, n + m))
        aug[:n, :n], aug[:n, n:] = A * lengths[-1], B * lengths[-1]
        E = expm(aug)
        end = E[:n, :n] @ cur + E[:n, n:] @ u
        return np.append(inside, b), np.column_stack([x, end])
    return inside, x


#: Figures the batch reads between output rows (on the solution itself), the loops from rows.
BETWEEN_ROWS = ("peak", "time_of_peak", "minimum", "overshoot", "undershoot")

LOOPS = {"exact": _segment_exact, "stiff": _segment_solve_ivp("stiff"), "rk45": _segment_solve_ivp("RK45")}


def loop_figures(circuit, table, keys, probes, count, kind="exact"):
    """Per-sample loop on the same state-space model, segment by segment (LOOPS[kind]);
    returns figures, seconds."""
    solve = LOOPS[kind]
    t_grid = output_grid(circuit)
    values = element_values(circuit, table.names, table.values[:count])
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
        for first, (ss, (a, b)) in enumerate(((before.sample(i), (0.0, t_switch)),
                                              (after.sample(i), (t_switch, t_grid[-1])))):
            inside = t_grid[(t_grid >= a) & (t_grid <= b)]
            A, B, C, D = ss.A, ss.B, ss.C, ss.D
            t_seg, x = solve(A, B, bank, a, b, x0, inside, first == 0)
            x0 = x[:, -1]
            u = bank.values(t_seg)
            rows.append(C @ x + D @ u.T)
            ts.append(t_seg)
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
    batch = result.figures[: args.loop_samples]
    with np.errstate(all="ignore"):
        scale = np.nanmax(np.abs(result.figures), axis=0)
    print(f"batch:  {args.samples} samples in {batch_seconds:.2f} s ({int((~result.ok).sum())} failed; "
          f"block kernel: {kernel_name()})")
    print(f"{'per-sample loop':44s} {'loop s':>8s} {'scaled s':>10s} {'ratio':>8s} {'largest disagreement'}")
    for kind, title in (("exact", "exact: expm stepping per sample"),
                        ("stiff", "stiff-aware: BDF while open, then RK45"),
                        ("rk45", "RK45 throughout (the first baseline)")):
        loop, loop_seconds = loop_figures(circuit, result.samples, keys, probes, args.loop_samples, kind)
        scaled = loop_seconds / args.loop_samples * args.samples
        with np.errstate(all="ignore"):
            rel = np.abs(batch - loop) / np.where(scale > 0, scale, 1.0)
        worst = int(np.nanargmax(np.nanmax(rel, axis=0)))
        rows_only = [j for j, (fig, _) in enumerate(keys) if fig not in BETWEEN_ROWS]
        print(f"{title:44s} {loop_seconds:8.2f} {scaled:10.1f} {scaled / batch_seconds:7.0f}x "
              f"{np.nanmax(rel):.1e} ({keys[worst][0]} of {keys[worst][1]}); "
              f"{np.nanmax(rel[:, rows_only]):.1e} on the other figures")
    print("the batch locates peaks, minima and their instants between output rows, on the solution; "
          "the loops read them from the rows")
    print(f"ratio = loop time scaled to {args.samples} samples / batch time; disagreement of the figures "
          f"on {args.loop_samples} samples, relative to each figure's largest magnitude in the batch")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
