"""Large RLC ladders: circuitode against the hand-written sparse solve_ivp script, side by side.

    python3 bench/ladder_scaling.py [--states 100 1000 4000 40000] [--repeats 3]

The ladder: a 1 V step source through Z₀ = √(L/C); per section a series 50 mΩ +
10 µH and a shunt 1 µF (2 states per section); terminated in Z₀; 2 ms window,
1 µs output step (2,001 rows).  Each side runs as a whole fresh process (imports,
netlist parsing or matrix building, solving, keeping the waveforms), one BLAS
thread for both, the sides interleaved size by size and repeat by repeat; the
script prints medians of wall time and of peak resident memory, the time ratio
per size and the exponent of a power-law fit of time against states, and
asserts that the voltages at the far end and after section 200 agree within
AGREEMENT (largest difference against the RK45 baseline, of a 0.5 V plateau).

circuitode side: ``co.loads(netlist text)`` then ``co.simulate`` with ``method auto``
(above 500 states the sparse path, which picks rk45, bdf or trbdf2 by estimated cost;
on this ladder rk45 at every size above 500); the two calls are timed apart, since
parsing and checking are not the solver's work.  With ``--method trbdf2`` the circuitode side names TR-BDF2 at the
1 µs output step instead (second order: it agrees to about 7 mV).
Baseline: a careful user's script: scipy.sparse A and B written from the
section equations, ``solve_ivp`` (RK45; and BDF with ``jac`` = sparse A),
rtol 1e-6, atol 1e-9, ``t_eval`` on the output grid.
"""
from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"  # one BLAS thread for both sides (inherited by the child processes)

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's circuitode, not an installed one

import numpy as np  # noqa: E402

L_SEC, C_SEC, R_SEC = 10e-6, 1e-6, 50e-3
Z0 = float(np.sqrt(L_SEC / C_SEC))
UNTIL, STEP = 2e-3, 1e-6
#: Largest disagreement accepted, V (of a 0.5 V plateau), per method circuitode used: rk45 and
#: exact as the baseline's own global error at rtol 1e-6 (measured: 1e-5 at 100 states);
#: trbdf2 the second-order error at the 1 µs step (measured: 7 mV).
AGREEMENT = {"exact": 1e-4, "rk45": 1e-4, "bdf": 1e-3, "trbdf2": 0.03}
#: Besides the far end, both sides record the voltage after this section: the 2 ms
#: window is 632 section delays √(LC), so on longer ladders the front never reaches
#: the far end and only this node shows the comparison.
PROBED = 200


def ladder_text(sections: int, method: str = "auto", step: str = "1 us") -> str:
    """The ladder as circuitode netlist text (2 states per section)."""
    lines = ['circuit "RLC ladder"', "ground gnd",
             "voltage_source V1 src -- gnd constant 1 V",
             f"resistor R_s src -- n0 {Z0!r} Ω"]
    for k in range(1, sections + 1):
        lines += [f"resistor R{k} n{k - 1} -- m{k} 50 mΩ",
                  f"inductor L{k} m{k} -- n{k} 10 uH",
                  f"capacitor C{k} n{k} -- gnd 1 uF"]
    lines += [f"resistor R_t n{sections} -- gnd {Z0!r} Ω",
              f"transient until 2 ms step {step} method {method} initial rest",
              f"record voltage at n{sections}, voltage at n{min(sections, PROBED)}"]
    return "\n".join(lines) + "\n"


def run_circuitode(sections: int, out: str, method: str = "auto") -> None:
    """The whole run as a user calls it; the parsing, building and checking (co.loads) timed
    apart from the rest (assembly, stepping, recording), which ``co.simulate`` does."""
    start = time.perf_counter()
    import circuitode as co

    imported = time.perf_counter()
    circuit = co.loads(ladder_text(sections, method=method))
    loaded = time.perf_counter()
    w = co.simulate(circuit)
    np.savez(out, t=w.t, v=w[f"voltage at n{sections}"], v_mid=w[f"voltage at n{min(sections, PROBED)}"],
             method=w.method, imports=imported - start, load=loaded - imported,
             simulate=time.perf_counter() - loaded)


def run_baseline(sections: int, out: str, method: str) -> None:
    """The careful user's script: states [v_1 … v_S, i_1 … i_S], sparse A, B."""
    import scipy.sparse as sp
    from scipy.integrate import solve_ivp

    S = sections
    k = np.arange(S)
    # C v_k' = i_k − i_{k+1} (− v_S/Z0 at the end);  L i_k' = v_{k−1} − v_k − R i_k
    # with v_0 = the source node: 1 V − Z0 i_1 (the source resistor carries i_1).
    rows = np.concatenate([k, k[:-1], S + k, S + k[1:], S + k, [S + 0, S - 1]])
    cols = np.concatenate([S + k, S + k[1:], k, k[:-1], S + k, [S + 0, S - 1]])
    vals = np.concatenate([np.full(S, 1 / C_SEC), np.full(S - 1, -1 / C_SEC),
                           np.full(S, -1 / L_SEC), np.full(S - 1, 1 / L_SEC),
                           np.full(S, -R_SEC / L_SEC), [-Z0 / L_SEC, -1 / (Z0 * C_SEC)]])
    A = sp.csr_matrix((vals, (rows, cols)), shape=(2 * S, 2 * S))
    b = np.zeros(2 * S)
    b[S] = 1.0 / L_SEC  # the 1 V source drives the first inductor
    t = np.linspace(0.0, UNTIL, int(round(UNTIL / STEP)) + 1)
    options = {"jac": A.tocsc()} if method == "BDF" else {}
    sol = solve_ivp(lambda _t, x: A @ x + b, (0.0, UNTIL), np.zeros(2 * S), method=method,
                    t_eval=t, rtol=1e-6, atol=1e-9, **options)
    np.savez(out, t=sol.t, v=sol.y[S - 1], v_mid=sol.y[min(S, PROBED) - 1], method=method)


SIDES = {"circuitode": ("circuitode",), "RK45": ("baseline", "RK45"), "BDF": ("baseline", "BDF")}


def timed(side: str, sections: int, folder: str, method: str) -> tuple[float, float, dict]:
    """(wall time s, peak resident memory MiB, saved waveform) of one whole child process."""
    out = os.path.join(folder, f"{side}_{sections}.npz")
    start = time.perf_counter()
    child = subprocess.Popen([sys.executable, __file__, "--child", side, str(sections), out, method])
    _, status, usage = os.wait4(child.pid, 0)  # this child's own rusage (Linux: ru_maxrss in KiB)
    elapsed = time.perf_counter() - start
    child.returncode = os.waitstatus_to_exitcode(status)
    if child.returncode:
        raise SystemExit(f"{side} at {2 * sections} states failed (exit {child.returncode})")
    return elapsed, usage.ru_maxrss / 1024, dict(np.load(out))


def fitted_exponent(states, times) -> float:
    return float(np.polyfit(np.log(states), np.log(times), 1)[0])


def main() -> None:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--states", type=int, nargs="+", default=[100, 1000, 4000, 40000])
    p.add_argument("--repeats", type=int, default=3)
    p.add_argument("--method", choices=("auto", "trbdf2"), default="auto", help="circuitode's method")
    p.add_argument("--child", nargs=4, help=argparse.SUPPRESS)
    args = p.parse_args()
    if args.child:
        side, sections, out, method = args.child
        if side == "circuitode":
            run_circuitode(int(sections), out, method)
        else:
            run_baseline(int(sections), out, side)
        return
    print(f"RLC ladder, 2 ms at 1 µs output step; one BLAS thread; medians of {args.repeats} "
          "whole-process runs, sides interleaved")
    print(f"{'states':>7} {'circuitode':>11} {'method':>9} {'RK45':>8} {'BDF':>8} "
          f"{'ratio (co / best baseline)':>27} {'largest diff [V]':>17} {'memory co/RK45/BDF [MiB]':>25}")
    medians = {side: [] for side in SIDES}
    split = []
    with tempfile.TemporaryDirectory() as folder:
        for states in args.states:
            sections = states // 2
            times = {side: [] for side in SIDES}
            ours_all = []
            memory = {side: [] for side in SIDES}
            for _ in range(args.repeats):
                for side in SIDES:
                    elapsed, peak, data = timed(side, sections, folder, args.method)
                    times[side].append(elapsed)
                    memory[side].append(peak)
                    if side == "circuitode":
                        ours = data
                        ours_all.append(data)
                    elif side == "RK45":
                        theirs = data
            med = {side: statistics.median(v) for side, v in times.items()}
            parts = {key: statistics.median(float(d[key]) for d in ours_all) for key in ("imports", "load", "simulate")}
            for side in SIDES:
                medians[side].append(med[side])
            diff = max(float(np.max(np.abs(ours[key] - theirs[key]))) for key in ("v", "v_mid"))
            best = min(med["RK45"], med["BDF"])
            print(f"{states:>7} {med['circuitode']:>10.2f}s {str(ours['method']):>9} {med['RK45']:>7.2f}s "
                  f"{med['BDF']:>7.2f}s {med['circuitode'] / best:>26.2f}× {diff:>17.2e} "
                  f"{'/'.join(f'{statistics.median(memory[side]):.0f}' for side in SIDES):>25}")
            split.append((states, parts, med["circuitode"] - parts["load"], best))
            assert ours["t"].shape == theirs["t"].shape and np.allclose(ours["t"], theirs["t"])
            allowed = AGREEMENT[str(ours["method"])]  # the method circuitode used
            assert diff < allowed, f"voltages disagree by {diff:.3g} V (> {allowed:g} V) at {states} states"
    print("circuitode's own parts (medians, in its process): `import circuitode` (lazy: the libraries load "
          "in the parts after it), parse+build+checks (co.loads), simulate (checks again, assembly, stepping, "
          "recording); the whole process without co.loads against the best baseline")
    for states, parts, rest, best in split:
        print(f"{states:>7}  imports {parts['imports']:.2f}s  loads {parts['load']:.2f}s  simulate "
              f"{parts['simulate']:.2f}s  without loads {rest:.2f}s = {rest / best:.2f}× best baseline")
    if len(args.states) > 1:
        print("fitted exponent (time ∝ states^p): " + ", ".join(
            f"{side} p = {fitted_exponent(args.states, medians[side]):.2f}" for side in SIDES))


if __name__ == "__main__":
    main()
