"""Dense products with one BLAS thread against the default (two on this machine), side by side.

    python3 bench/blas_threads.py [--states 200 400] [--repeats 5]

The dense path's work is matrix products and exponentials (the exact method at a few
hundred states).  Each run is a whole fresh process of ``co.simulate`` on the RLC
ladder of bench/ladder_scaling.py (2 ms, 1 µs output step, ``method exact``), once with
OPENBLAS_NUM_THREADS / OMP_NUM_THREADS / MKL_NUM_THREADS = 1 and once with them unset
(the library's default), interleaved repeat by repeat; the script prints the medians,
the ratio and the spread (largest / smallest of each side), and the load average.
"""
from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

THREAD_VARS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def child(sections: int) -> None:
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    import circuitode as co
    from ladder_scaling import ladder_text

    co.simulate(ladder_text(sections, method="exact"))


def timed(sections: int, one_thread: bool) -> float:
    env = {k: v for k, v in os.environ.items() if k not in THREAD_VARS}
    if one_thread:
        env.update({k: "1" for k in THREAD_VARS})
    start = time.perf_counter()
    subprocess.run([sys.executable, __file__, "--child", str(sections)], env=env, check=True)
    return time.perf_counter() - start


def main() -> None:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--states", type=int, nargs="+", default=[200, 400])
    p.add_argument("--repeats", type=int, default=5)
    p.add_argument("--child", type=int, help=argparse.SUPPRESS)
    args = p.parse_args()
    if args.child:
        child(args.child)
        return
    print(f"dense exact method on the RLC ladder, whole processes, medians of {args.repeats}; "
          f"{os.cpu_count()} CPUs, load average {os.getloadavg()[0]:.1f} at the start")
    print(f"{'states':>7} {'1 thread':>9} {'default':>9} {'default / 1':>12} {'spread 1':>9} {'spread default':>15}")
    for states in args.states:
        one, default = [], []
        for _ in range(args.repeats):
            one.append(timed(states // 2, True))
            default.append(timed(states // 2, False))
        m1, md = statistics.median(one), statistics.median(default)
        print(f"{states:>7} {m1:>8.2f}s {md:>8.2f}s {md / m1:>11.2f}× {max(one) / min(one):>8.2f}× "
              f"{max(default) / min(default):>14.2f}×")
    print(f"load average at the end {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
