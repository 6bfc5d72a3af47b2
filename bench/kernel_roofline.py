"""Benchmark: GFLOP/s of the tolerance batch's block kernel against this machine's dgemm.

The block kernel (circuitode/tolerance/kernel.py) takes K equal steps w ← Φ w of
every sample of a chunk, with the outputs y = G w and the sums Σ w, Σ w wᵀ of the
steps' start states.  This script times it on the chunk shapes the batches use
(samples N, state size s with the inputs' generator, outputs p, K = 256 steps),
counts its floating-point operations (kernel.flops: 2s² + 2ps + s + 2s² a
sample and step), and prints GFLOP/s beside the dgemm peak: numpy's matmul of
two 3,000 × 3,000 matrices, with one BLAS thread (in a child process) and
with the library's default threads.  The kernel itself is one thread.  Also
timed, for the same work: the numpy fallback (the recurrence as stacked
products) and the engine's previous way (a table of the powers Φ¹…Φᴷ, then
stacked products).  Best of --repeats; ratios are the result.

    python3 bench/kernel_roofline.py [--repeats 7]
"""
from __future__ import annotations

import argparse
import os
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from circuitode.tolerance import kernel  # noqa: E402

#: (label, N, s, p): chunk shapes of the batches in bench/ and the README.
SHAPES = (
    ("pre-charge example (2 states)", 370, 2, 4),
    ("LC ladder of tolerance_vs_loop (7)", 2083, 7, 2),
    ("a 16-state circuit", 512, 16, 4),
)
K = 256


def best(fn, repeats: int) -> float:
    fn()
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def dgemm_gflops(repeats: int, n: int = 3000) -> float:
    rng = np.random.default_rng(0)
    a, b = rng.normal(size=(n, n)), rng.normal(size=(n, n))
    return 2.0 * n ** 3 / best(lambda: a @ b, repeats) / 1e9


def power_table_way(phi, G, w, Kb):
    """The engine before the kernel: Φ¹…Φᴷ by doubling, states and outputs by stacked
    products, the sums from the stacked start states."""
    P = np.empty((phi.shape[0], Kb) + phi.shape[1:])
    P[:, 0] = phi
    m = 1
    while m < Kb:
        r = min(m, Kb - m)
        P[:, m:m + r] = P[:, m - 1:m] @ P[:, :r]
        m += r
    N, s = w.shape
    W = (P.reshape(N, Kb * s, s) @ w[:, :, None]).reshape(N, Kb, s)
    Y = G @ np.swapaxes(W, 1, 2)
    starts = np.concatenate([w[:, None], W[:, :-1]], axis=1)
    return W, Y, starts.sum(axis=1), np.swapaxes(starts, 1, 2) @ starts


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=7)
    ap.add_argument("--dgemm-only", action="store_true", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.dgemm_only:
        print(f"{dgemm_gflops(args.repeats):.3f}")
        return 0
    one = dict(os.environ, OPENBLAS_NUM_THREADS="1", OMP_NUM_THREADS="1", MKL_NUM_THREADS="1")
    child = subprocess.run([sys.executable, __file__, "--dgemm-only", "--repeats", str(args.repeats)],
                           env=one, capture_output=True, text=True, check=True)
    peak_one = float(child.stdout)
    peak_all = dgemm_gflops(args.repeats)
    print(f"dgemm peak (numpy matmul 3000 x 3000): {peak_one:.1f} GFLOP/s one thread, "
          f"{peak_all:.1f} GFLOP/s default threads ({os.cpu_count()} cores)")
    print(f"block kernel: {kernel.kernel_name()}, one thread, K = {K} steps per call, best of {args.repeats}")
    print(f"{'chunk shape':36s} {'N':>5s} {'s':>3s} {'p':>3s} {'GFLOP/s':>8s} {'of 1-thr':>9s} "
          f"{'of all':>7s} {'numpy fb':>9s} {'powers':>8s}")
    rng = np.random.default_rng(1)
    for label, N, s, p in SHAPES:
        M = rng.normal(size=(N, s, s)) - 2.0 * np.eye(s)
        phi = np.eye(s) + 1e-3 * M  # a step matrix near identity (a short step)
        G = rng.normal(size=(N, p, s))
        w = rng.normal(size=(N, s))
        work = kernel.flops(N, K, s, p)
        t_kernel = best(lambda: kernel.block_steps(phi, G, w, K), args.repeats)
        os.environ["CIRCUITODE_NO_NUMBA"] = "1"
        try:
            t_numpy = best(lambda: kernel.block_steps(phi, G, w, K), max(2, args.repeats // 2))
        finally:
            del os.environ["CIRCUITODE_NO_NUMBA"]
        t_powers = best(lambda: power_table_way(phi, G, w, K), max(2, args.repeats // 2))
        rate = work / t_kernel / 1e9
        print(f"{label:36s} {N:5d} {s:3d} {p:3d} {rate:8.2f} {rate / peak_one:8.1%} {rate / peak_all:7.1%} "
              f"{t_numpy / t_kernel:8.1f}x {t_powers / t_kernel:7.1f}x")
    print("numpy fb, powers: their time over the kernel's for the same states, outputs and sums")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
