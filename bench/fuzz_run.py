"""Long fuzz run: ≥ 100,000 cases in process; prints counts by exit code, internal errors
and hangs (20 s per case).  The fixed-seed CI slice is tests/test_fuzz.py.

Cases: mutations of the example netlists (checked; every 50th also run with a
short window, every 50th from the 25th through `modes`) and grammar-aware netlists drawn by hypothesis (checked).

Run: .venv/bin/python bench/fuzz_run.py [CASES] [SEED]
"""
import collections
import random
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from hypothesis import HealthCheck, given, settings  # noqa: E402

from fuzzing import EXAMPLES, mutate, netlists, run_case, shorten_window  # noqa: E402


def main() -> None:
    cases = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    seed = int(sys.argv[2]) if len(sys.argv) > 2 else 1
    rng = random.Random(seed)
    texts = [p.read_text(encoding="utf-8") for p in EXAMPLES]
    counts: collections.Counter = collections.Counter()
    internal: list = []
    started = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)

        def record(result, text):
            counts[result[0]] += 1
            if result[0] in ("internal", "hang"):
                internal.append((result, text[:300]))

        mutated = int(cases * 0.8)
        for k in range(mutated):
            text = mutate(rng.choice(texts), rng)
            if k % 50 == 0 and "cable" not in text:
                record(run_case(shorten_window(text), folder, "run"), text)
            elif k % 50 == 25:
                record(run_case(text, folder, "modes"), text)
            else:
                record(run_case(text, folder, "check"), text)
            if (k + 1) % 5000 == 0:
                tally = ", ".join(f"exit {c}: {n}" for c, n in sorted(counts.items(), key=lambda kv: str(kv[0])))
                print(f"  {k + 1} mutated cases, {time.perf_counter() - started:.0f} s ({tally})", flush=True)

        @settings(max_examples=cases - mutated, database=None, deadline=None, derandomize=False,
                  suppress_health_check=list(HealthCheck))
        @given(text=netlists())
        def generated(text):
            record(run_case(text, folder, "check"), text)

        generated()
    total = sum(counts.values())
    print(f"cases: {total} in {time.perf_counter() - started:.0f} s (seed {seed})")
    for code, count in sorted(counts.items(), key=lambda kv: str(kv[0])):
        print(f"  exit {code}: {count}")
    print(f"internal errors: {counts['internal']}   hangs: {counts['hang']}")
    for result, text in internal[:10]:
        print("---", result, repr(text))


if __name__ == "__main__":
    main()
