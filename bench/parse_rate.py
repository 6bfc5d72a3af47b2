"""Parser throughput and memory on generated large netlists (prints MB/s; no assertion).

Four inputs of a few MB each, parsed side by side in one run by ``parse_text``
(the fast path for plain lines, lark for the rest) and by ``parse_with_lark``
(lark alone, the reference it must equal):
  ladder      the RLC ladder of bench/ladder_scaling.py (element lines with a
              value and a unit: what large generated netlists are made of),
  statements  resistor / capacitor lines with tolerances, initial values and
              comments, every third line a parameter expression (lark's part),
  blank lines a run of newlines (was about 500 bytes of memory per newline),
  sums        many parameter lines, each a sum of 200 terms (the operator limit).

Run: .venv/bin/python bench/parse_rate.py [MEGABYTES]
"""
import sys
import time
import tracemalloc
from pathlib import Path

from circuitode.netlist.parse import parse_text, parse_with_lark

sys.path.insert(0, str(Path(__file__).resolve().parent))
from ladder_scaling import ladder_text  # noqa: E402


def ladder(size: int) -> str:
    return ladder_text(max(size // 110, 1))  # about 110 bytes per section


def statements(size: int) -> str:
    lines, k = ["ground gnd", "voltage_source V1 n0 -- gnd constant 1 V"], 0
    while sum(map(len, lines)) < size:
        lines.append(f"resistor R{k} n{k} -- n{k + 1} 1.5 kΩ ± 5 %   # section {k}")
        lines.append(f"capacitor C{k} n{k + 1} -- gnd 2.2 nF initial 0 V")
        lines.append(f"param p{k} = 1 + 2*3 - (4/5) + sqrt(2)*R_x")
        k += 1
    return "\n".join(lines) + "\n"


def blank_lines(size: int) -> str:
    return "ground gnd\n" + "\n" * size + "resistor R1 a -- gnd 1 Ω\n"


def sums(size: int) -> str:
    line = "param p{} = " + " + ".join(["1"] * 200)
    count = max(size // len(line), 1)
    return "ground gnd\n" + "\n".join(line.format(k) for k in range(count)) + "\n"


def rate(parse, text: str) -> tuple[float, float]:
    """MB/s of one parse by the wall clock and by this process's CPU time, without tracing.

    On a shared machine the wall clock counts the other processes' turns too;
    the CPU time is what the parse itself costs.
    """
    wall, cpu = time.perf_counter(), time.process_time()
    parse(text, "bench.cnet")
    megabytes = len(text.encode()) / 1e6
    return megabytes / (time.perf_counter() - wall), megabytes / (time.process_time() - cpu)


def peak_per_char(text: str) -> float:
    """Peak traced bytes per input character of ``parse_text``."""
    tracemalloc.start()
    parse_text(text, "bench.cnet")
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return peak / max(len(text), 1)


def main() -> None:
    megabytes = float(sys.argv[1]) if len(sys.argv) > 1 else 2.0
    size = int(megabytes * 1e6)
    parse_text("ground gnd\n")  # compile the grammar outside the timing
    print(f"{'':<21}{'MB/s wall clock':^29}{'MB/s CPU time':^29}")
    print(f"{'input':<14}{'MB':>7}{'parse_text':>11}{'lark alone':>11}{'ratio':>7}"
          f"{'parse_text':>11}{'lark alone':>11}{'ratio':>7}{'peak bytes/char':>17}")
    for name, make in (("ladder", ladder), ("statements", statements), ("blank lines", blank_lines),
                       ("sums", sums)):
        text = make(size)
        (fast, fast_cpu), (slow, slow_cpu) = rate(parse_text, text), rate(parse_with_lark, text)
        print(f"{name:<14}{len(text.encode()) / 1e6:>7.2f}{fast:>11.3f}{slow:>11.3f}{fast / slow:>6.1f}×"
              f"{fast_cpu:>11.3f}{slow_cpu:>11.3f}{fast_cpu / slow_cpu:>6.1f}×{peak_per_char(text):>17.1f}")


if __name__ == "__main__":
    main()
