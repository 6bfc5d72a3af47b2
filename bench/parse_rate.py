"""Parser throughput and memory on generated large netlists (prints MB/s; no assertion).

Three inputs of a few MB each, parsed side by side in one run:
  statements  a ladder of resistor / capacitor / param lines with units, tolerances
              and comments (typical text),
  blank lines a run of newlines (was about 500 bytes of memory per newline),
  sums        many parameter lines, each a sum of 200 terms (the operator limit).

Run: .venv/bin/python bench/parse_rate.py [MEGABYTES]
"""
import sys
import time
import tracemalloc

from circuitode.netlist.parse import parse_text


def statements(size: int) -> str:
    lines, k = ["ground gnd", "voltage_source V1 n0 -- gnd dc 1 V"], 0
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


def measure(text: str) -> tuple[float, float]:
    """(MB/s timed without tracing, peak traced bytes per input character from a second pass)."""
    start = time.perf_counter()
    parse_text(text, "bench.cnet")
    elapsed = time.perf_counter() - start
    tracemalloc.start()
    parse_text(text, "bench.cnet")
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return len(text.encode()) / 1e6 / elapsed, peak / max(len(text), 1)


def main() -> None:
    megabytes = float(sys.argv[1]) if len(sys.argv) > 1 else 2.0
    size = int(megabytes * 1e6)
    parse_text("ground gnd\n")  # compile the grammar outside the timing
    print(f"{'input':<14}{'MB':>8}{'MB/s':>10}{'peak bytes/char':>18}")
    for name, make in (("statements", statements), ("blank lines", blank_lines), ("sums", sums)):
        text = make(size)
        rate, per_char = measure(text)
        print(f"{name:<14}{len(text.encode()) / 1e6:>8.2f}{rate:>10.3f}{per_char:>18.1f}")


if __name__ == "__main__":
    main()
