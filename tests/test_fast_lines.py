"""The fast path for plain lines (circuitode/netlist/fast_lines.py) equals lark's path.

``parse_text`` (fast path + lark for the rest) must give exactly what
``parse_with_lark`` (lark alone, the language's definition in grammar.lark) gives:
the same statements with the same values and the same file:line:col on every
part (compared field by field, including the places that ``==`` ignores), or
the same error at the same place with the same words.  Checked on every example
netlist, on generated ladders, on the mutation corpus of tests/fuzzing.py, on
its grammar-aware generator, and on plain lines edited character by character.
"""
from __future__ import annotations

import dataclasses
import random
import sys
from pathlib import Path

import pytest
from hypothesis import given, settings, strategies as st

from circuitode.errors import NetlistError
from circuitode.netlist.fast_lines import claim_lines
from circuitode.netlist.parse import parse_text, parse_with_lark
from fuzzing import EXAMPLES, mutate, netlists

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "bench"))
from ladder_scaling import ladder_text  # noqa: E402


def _deep(obj):
    """Every field of a syntax tree, recursively, including those excluded from ``==`` (places)."""
    if dataclasses.is_dataclass(obj):
        return (type(obj).__name__, tuple((f.name, _deep(getattr(obj, f.name))) for f in dataclasses.fields(obj)))
    if isinstance(obj, (tuple, list)):
        return tuple(_deep(x) for x in obj)
    if isinstance(obj, float):
        return ("float", obj.hex())
    return obj


def _outcome(parse, text):
    try:
        netlist = parse(text, "t.cnet")
    except NetlistError as err:
        return ("error", str(err), _deep(err.where), err.hint)
    return ("ok", _deep(netlist))


def assert_same(text: str) -> tuple:
    fast, slow = _outcome(parse_text, text), _outcome(parse_with_lark, text)
    assert fast == slow, text[:300]
    return fast


def _claimed(text: str) -> int:
    """How many statements the fast path itself reads from ``text``."""
    lines = [line.rstrip("\r") for line in text.split("\n")]
    return len(claim_lines(text, lines, "t.cnet")[1])


@pytest.mark.parametrize("path", EXAMPLES + sorted((ROOT / "netlists" / "parts").glob("*")), ids=lambda p: p.name)
def test_examples_parse_the_same(path):
    text = path.read_text(encoding="utf-8")
    assert assert_same(text)[0] == "ok"
    assert assert_same(text.replace("\n", "\r\n"))[0] == "ok"  # files saved with CRLF line ends


def test_generated_ladders_parse_the_same_and_take_the_fast_path():
    text = ladder_text(300)
    assert assert_same(text)[0] == "ok"
    assert _claimed(text) == 3 * 300 + 3  # ground, every section's three elements, both terminations
    lines = [f"resistor R{k} n{k} -- n{k + 1} 1.5 kΩ ± 5 %   # section {k}\n"
             f"\tcapacitor C{k} n{k + 1}--gnd 2.2nF±10%uniform initial 0 V\n"
             f"inductor L{k} n{k} -- x{k} L_sec initial -1e-3 A # negative: lark's\n"
             f"param p{k} = 4k7 ± 1 % normal\n\n# a comment\n" for k in range(50)]
    text = "ground gnd\n" + "".join(lines) + 'voltage_source V1 n0 -- gnd constant 1 V\ncircuit "x"'
    assert assert_same(text)[0] == "ok"
    assert _claimed(text) == 1 + 3 * 50


#: The grammar rules the fast path reads lines of, as it was written for them.  When one of
#: these lines of grammar.lark changes, check circuitode/netlist/fast_lines.py against it and
#: update this copy; the equality tests below only see the shapes they are given.
FAST_PATH_RULES = """\
param_stmt: "param" NAME "=" value
ground_stmt: "ground" NAME
element_stmt: ELEMENT_KIND NAME NAME "--" NAME value initial_value?
initial_value: "initial" value
value: expr tolerance?
tolerance: PLUSMINUS NUMBER UNIT? DISTRIBUTION?
quantity: NUMBER UNIT?
_NL: /(?:\\r?\\n[ \\t]*(?:#[^\\n]*)?)++/
COMMENT: /#[^\\n]*/
WHITESPACE: /[ \\t\\f]+/"""


def test_the_fast_path_was_written_for_these_rules():
    grammar = (ROOT / "circuitode" / "netlist" / "grammar.lark").read_text(encoding="utf-8").splitlines()
    heads = [rule.split(":")[0] + ":" for rule in FAST_PATH_RULES.splitlines()]
    found = "\n".join(line for line in grammar if any(line.startswith(h) for h in heads))
    assert found == FAST_PATH_RULES


def test_names_spelled_like_keywords_parse_the_same():
    # the contextual lexer reads a keyword where only a name can stand as a name
    text = ("ground initial\nresistor initial param -- ground initial\nparam initial = normal ± 5 % uniform\n"
            "capacitor resistor initial -- in 1 uF initial initial\ninductor L1 at -- to 1 H initial 0 A\n")
    assert assert_same(text)[0] == "ok"
    assert _claimed(text) == 5


def test_record_continuation_is_left_to_lark():
    # lark reads the line after a trailing comma as the list's next probe: a plain line there is a mistake
    for text in ("ground g\nrecord voltage at a,\nresistor R1 a -- g 1 Ω\nvoltage at b\n",
                 "ground g\nrecord voltage at a, # more\n\n# c\nresistor R1 a -- g 1 Ω\n",
                 "ground g\nrecord voltage at a,\n  voltage at b\nresistor R1 a -- g 1 Ω\n"):
        assert_same(text)


@pytest.mark.parametrize("text", [
    "ground g\nresistor R1 a -- g 1 kΩ ± 5 V\n",          # a tolerance not in percent
    "ground g\nresistor R1 a -- g 1 kΩ ± 150 %\n",        # out of range
    "ground g\nresistor R1 a -- g 1e9999999999999999999 Ω\n",
    "ground g\nresistor R1 a -- g 1 kΩ\nresistor R2 a -- g 1 kx\n",
    "ground g\nresistor R1 a -- g 4k7 kΩ\n",
    "ground g\n\f\nresistor R1 a -- g 1 Ω\n",              # a form feed alone is not a blank line to the grammar
    "ground g\nresistor R1 a -- g 1 Ω\r",                 # a lone carriage return at the end
    "ground g\nresistor R1 a -- g 1 Ωinitial 0 V\n",
    "ground g\nresistor R1 a -- g 1 Ω initialx 0 V\n",
    "ground g\nparam x = 1 V\nresistor R1 a -- g 1 Ω\nswitch S1 a -- g closes at\n",
])
def test_mistakes_are_located_as_before(text):
    assert assert_same(text)[0] == "error"


def test_mutated_examples_parse_the_same():
    rng = random.Random(20261202)
    texts = [p.read_text(encoding="utf-8") for p in EXAMPLES]
    outcomes = {assert_same(mutate(rng.choice(texts), rng))[0] for _ in range(1500)}
    assert outcomes == {"ok", "error"}


_PIECES = [" ", "\t", "\f", "\r", "\n", "#", "±", "+-", "%", "k", "Ω", "e", "1", "0", ".", "-", "--", ",", "(", ")",
           "initial", "normal", "uniform", "_", "µ", "R", "x", "é", "٣", "=", "*", "resistor", "param", "ground"]
_PLAIN = ["resistor R1 a -- b 1.5 kΩ ± 5 %  # c", "capacitor C2 b -- gnd 2.2 nF initial 0 V",
          "inductor L3 a -- b L_x ± 1 % uniform initial 1 A", "param p = 4k7 ± 1 % normal", "ground gnd",
          "resistor R4 a--b 1e-3Ω", "  # a comment", ""]


@settings(max_examples=600)
@given(st.lists(st.tuples(st.sampled_from(_PLAIN), st.integers(0, 60), st.integers(0, 3),
                          st.sampled_from(_PIECES)), min_size=1, max_size=6))
def test_plain_lines_edited_parse_the_same(edits):
    lines = []
    for line, at, cut, piece in edits:
        at = min(at, len(line))
        lines.append(line[:at] + piece + line[at + cut:])
    assert_same("ground gnd\n" + "\n".join(lines) + "\n")


@settings(max_examples=300)
@given(text=netlists())
def test_generated_netlists_parse_the_same(text):
    assert_same(text)
