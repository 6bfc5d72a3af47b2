"""Front end against circuit size: parse, build, check, report and sparse assembly of RLC ladders.

For each size, in one process, times each stage of what ``circuitode check``
and the start of ``circuitode run`` do with a ladder netlist, as the command
line runs them (the collector as the parse leaves it), and prints the time per
stage (wall clock and CPU time), the time per section, and the fitted exponent
(time ∝ sections^p) of each stage over the sizes; linear stages have p ≈ 1.

Two ladders: ``literal`` (bench/ladder_scaling.py: every value written out) and
``params`` (every element's value a parameter name with a tolerance, so the
checks and the report follow parameter recipes too).

Run: .venv/bin/python bench/front_end_scaling.py [--sections 2500 5000 10000 20000]
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from ladder_scaling import ladder_text  # noqa: E402

from circuitode.checks.topology import diagnose  # noqa: E402
from circuitode.equations.sparse_statespace import assemble_sparse  # noqa: E402
from circuitode.netlist.build import build_circuit  # noqa: E402
from circuitode.netlist.parse import parse_text  # noqa: E402
from circuitode.output.report import check_text  # noqa: E402


def params_ladder(sections: int) -> str:
    """A ladder whose elements take their values from toleranced parameters."""
    lines = ['circuit "parameter ladder"', "ground gnd", "param R_sec = 50 mΩ ± 5 %", "param L_sec = 10 uH ± 10 %",
             "param C_sec = 1 uF ± 10 % uniform", "voltage_source V1 src -- gnd constant 1 V",
             "resistor R_s src -- n0 3.16 Ω"]
    for k in range(1, sections + 1):
        lines += [f"resistor R{k} n{k - 1} -- m{k} R_sec", f"inductor L{k} m{k} -- n{k} L_sec",
                  f"capacitor C{k} n{k} -- gnd C_sec"]
    lines += [f"resistor R_t n{sections} -- gnd 3.16 Ω", "transient until 2 ms step 1 us",
              f"record voltage at n{sections}"]
    return "\n".join(lines) + "\n"


def _timed(stage, *args):
    wall, cpu = time.perf_counter(), time.process_time()
    result = stage(*args)
    return result, time.perf_counter() - wall, time.process_time() - cpu


def stages(text: str) -> dict[str, tuple[float, float]]:
    """(wall s, CPU s) of each stage on one netlist text."""
    out = {}
    netlist, *out["parse"] = _timed(parse_text, text, "ladder.cnet")
    circuit, *out["build"] = _timed(build_circuit, list(netlist.statements))
    diagnostics, *out["check"] = _timed(diagnose, circuit)
    _, *out["report"] = _timed(check_text, circuit, diagnostics, "ladder.cnet")
    _, *out["assemble"] = _timed(assemble_sparse, circuit, ())
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--sections", type=int, nargs="+", default=[2500, 5000, 10000, 20000])
    args = parser.parse_args()
    stages(ladder_text(10))  # imports and the grammar outside the timing
    for name, make in (("literal", ladder_text), ("params", params_ladder)):
        rows = {n: stages(make(n)) for n in args.sections}
        names = list(next(iter(rows.values())))
        print(f"\n{name} ladder: seconds per stage, wall clock / CPU time")
        print(f"{'sections':>9}" + "".join(f"{s:>17}" for s in names) + f"{'total CPU':>11}{'µs/section':>12}")
        for n, row in rows.items():
            total = sum(cpu for _, cpu in row.values())
            print(f"{n:>9}" + "".join(f"{w:>8.2f} /{c:>6.2f}" for w, c in row.values())
                  + f"{total:>11.2f}{total / n * 1e6:>12.0f}")
        sizes = np.log(np.array(args.sections, dtype=float))
        exponents = []
        for s in names + ["total"]:
            cpu = [sum(c for _, c in rows[n].values()) if s == "total" else rows[n][s][1] for n in args.sections]
            exponents.append(f"{s} {np.polyfit(sizes, np.log(np.maximum(cpu, 1e-6)), 1)[0]:.2f}")
        print("fitted exponent of CPU time (∝ sections^p): " + ", ".join(exponents))


if __name__ == "__main__":
    main()
