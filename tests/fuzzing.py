"""Fuzz inputs for the command line: a grammar-aware hypothesis generator and a seeded
mutation fuzzer over the example netlists, and an in-process case runner.

Shared by tests/test_fuzz.py (a fixed-seed slice in CI) and bench/fuzz_run.py
(≥ 100,000 cases, counts by exit code).  A case passes when the exit code is
one of the documented ones and no "internal error" or traceback is printed.
"""
from __future__ import annotations

import contextlib
import io
import random
import signal
from pathlib import Path

from hypothesis import strategies as st

from circuitode.cli import main

EXAMPLES = sorted((Path(__file__).resolve().parent.parent / "netlists").glob("*.cnet"))
DOCUMENTED_EXIT_CODES = {0, 1, 2, 3, 4}

# -- grammar-aware generator --------------------------------------------------

NAMES = ["a", "b", "out", "gnd", "n1", "R1", "C1", "L1", "V1", "K1", "p", "in", "at", "x_2"]
UNITS = ["", "V", "A", "Ω", "ohm", "F", "H", "s", "Hz", "%", "deg", "mV", "kΩ", "uF", "mH", "ms", "us", "ns",
         "GHz", "A²s", "J", "W", "V/us", "m", "k", "M", "µ"]
INCLUDE_TARGETS = ["/etc/passwd", "../x.cnet", "a\0b", "/dev/zero", "", ".", "case.cnet", "nothing.cnet"]
NUMBERS = ["0", "1", "2.5", "47", "4k7", "4R7", "1e-3", "1e9999999999999999999", "1e-99999999", ".5", "10",
           "0.000000000001", "1e12", "3", "65535", "1e308", "1e-308", "999999999999999999999999"]


@st.composite
def values(draw):
    number = draw(st.sampled_from(NUMBERS))
    unit = draw(st.sampled_from(UNITS))
    text = f"{draw(st.sampled_from(['', '-']))}{number} {unit}".strip()
    if draw(st.booleans()):
        text = draw(st.sampled_from(["", "p", "(p)", "sqrt(p)", "2 *"])) + " " + text
    if draw(st.integers(0, 5)) == 0:
        text += f" ± {draw(st.sampled_from(['5 %', '0 %', '150 %', '1e999 %', '-3 %']))}"
        text += draw(st.sampled_from(["", " uniform", " normal"]))
    return text


def _name(draw):
    return draw(st.sampled_from(NAMES))


@st.composite
def statements(draw):
    kind = draw(st.integers(0, 11))
    n = lambda: _name(draw)  # noqa: E731
    v = lambda: draw(values())  # noqa: E731
    if kind == 0:
        return f"ground {n()}"
    if kind == 1:
        return f"{draw(st.sampled_from(['resistor', 'capacitor', 'inductor']))} {n()} {n()} -- {n()} {v()}" + \
            draw(st.sampled_from(["", f" initial {v()}"]))
    if kind == 2:
        wave = draw(st.sampled_from([
            f"constant {v()}", f"step from {v()} to {v()} at {v()}", f"points ({v()}, {v()}) ({v()}, {v()})",
            f"pulses base {v()} top {v()} every {v()} hold {v()}", f"sine amplitude {v()} frequency {v()}",
            f"ramp from {v()} to {v()} start {v()} duration {v()}",
            f"exponential from {v()} to {v()} delay {v()} time_constant {v()}"]))
        return f"{draw(st.sampled_from(['voltage_source', 'current_source']))} {n()} {n()} -- {n()} {wave}"
    if kind == 3:
        control = draw(st.sampled_from([f"closes at {v()}", f"opens at {v()} closes at {v()}",
                                        f"toggles every {v()} duty {v()}",
                                        f"closes when voltage at {n()} > {v()}"]))
        return f"switch {n()} {n()} -- {n()} {control}" + draw(st.sampled_from(["", f" on {v()}"]))
    if kind == 4:
        settings = draw(st.lists(st.sampled_from([f"until {v()}", f"step {v()}", f"points {v()}",
                                                  "method exact", "method rk4", "method bdf", "method zzz",
                                                  "initial rest", "initial steady"]), min_size=1, max_size=4))
        return "transient " + " ".join(settings)
    if kind == 5:
        return f"record {draw(st.sampled_from(['voltage at', 'current through', 'power in']))} {n()}"
    if kind == 6:
        return f"require peak voltage at {n()} < {v()}"
    if kind == 7:
        return f"param {n()} = {v()}"
    if kind == 8:
        return f"coupling K1 {n()} {n()} k {v()}"
    if kind == 9:
        target = draw(st.sampled_from(INCLUDE_TARGETS))
        return f'include "{target}"'
    if kind == 10:
        return f'circuit "{draw(st.text(max_size=20).filter(lambda s: chr(34) not in s and chr(10) not in s))}"'
    return draw(st.sampled_from(["", "# comment", "\t", "((((", "±", "\ufeff", "--", "\r"]))


@st.composite
def netlists(draw):
    return "\n".join(draw(st.lists(statements(), min_size=1, max_size=12))) + "\n"


# -- mutation fuzzer ------------------------------------------------------------

TOKENS = ["1e9999999999999999999", "(", ")", "±", "%", "--", "\0", "\ufeff", '"', "#", "\n", "\n\n\n",
          'include "/etc/passwd"', "0", "-1", "1e-16", "points 2", "step 1 s", "nan", "inf", "é", "\x7f",
          "((((((((((", "1/0", "^", "Ω", "µ", " ", "\t", "+-", "sqrt(", "ms", "GHz"]


def mutate(text: str, rng: random.Random) -> str:
    """Apply one to four random edits: delete, duplicate, swap lines, insert a token or bytes."""
    for _ in range(rng.randint(1, 4)):
        choice = rng.randrange(6)
        if not text:
            text = rng.choice(TOKENS)
        i = rng.randrange(len(text) + 1)
        if choice == 0:
            text = text[:i] + text[i + rng.randint(1, 20):]
        elif choice == 1:
            text = text[:i] + rng.choice(TOKENS) + text[i:]
        elif choice == 2:
            lines = text.split("\n")
            a, b = rng.randrange(len(lines)), rng.randrange(len(lines))
            lines[a], lines[b] = lines[b], lines[a]
            text = "\n".join(lines)
        elif choice == 3:
            j = min(len(text), i + rng.randint(1, 40))
            text = text[:i] + text[i:j] * rng.randint(2, 5) + text[j:]
        elif choice == 4:
            text = text[:i] + "".join(chr(rng.randrange(1, 0x3000)) for _ in range(rng.randint(1, 4))) + text[i:]
        else:
            digits = [k for k, ch in enumerate(text) if ch.isdigit()]
            if digits:
                k = rng.choice(digits)
                text = text[:k] + rng.choice(["0", "9" * 30, "1e999", "1e-999", "-1"]) + text[k + 1:]
    return text


def shorten_window(text: str) -> str:
    """Keep a mutated run cheap: every case gets a short window appended (the last wins)."""
    return text + "\ntransient until 1 ms points 200\n"


# -- running a case ---------------------------------------------------------------


class Hang(Exception):
    pass


def _alarm(signum, frame):
    raise Hang()


def run_case(text: str, folder: Path, command: str = "check", timeout: int = 20) -> tuple[int | str, str]:
    """Write ``text`` to a netlist in ``folder`` and run one command in process.

    Returns (exit code, or "hang" / "internal"; the first line of stderr).
    """
    path = folder / "case.cnet"
    path.write_bytes(text.encode("utf-8", "surrogatepass"))
    argv = [command, str(path)]
    if command == "run":
        argv += ["--out", str(folder / "out"), "--no-plots"]
    err = io.StringIO()
    previous = signal.signal(signal.SIGALRM, _alarm)
    signal.alarm(timeout)
    try:
        with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(err):
            code = main(argv)
    except Hang:
        return "hang", ""
    except SystemExit as exc:  # argparse
        code = exc.code if isinstance(exc.code, int) else 2
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)
    message = err.getvalue()
    if "internal error" in message or "Traceback" in message:
        return "internal", message.strip().splitlines()[0] if message.strip() else ""
    return code, message.strip().splitlines()[0] if message.strip() else ""
