"""lark's parse failures in plain words: what was found, what was expected, what to change.

:func:`syntax_error` turns a lark ``UnexpectedInput`` into a
:class:`~circuitode.errors.NetlistError` located at ``file:line:col`` with the
line and a hint; lark's own class and terminal names never reach the user.
Terminal names are described from the grammar of :func:`.lark_parser.cached_parser`,
and common slips (an unknown statement or waveform word, a misspelt keyword, a
malformed number, an unknown unit, an unclosed text) get their own wording.
:func:`too_deep` words an expression nested beyond what can be read.
"""
from __future__ import annotations

import re

from lark.exceptions import UnexpectedInput, UnexpectedToken

from ..errors import NetlistError, Where
from .expressions import did_you_mean
from ..quantities import split_unit
from .lark_parser import cached_parser
from .vocabulary import WAVEFORM_WORDS, word_hint

__all__ = ["STATEMENT_WORDS", "expected_literals", "syntax_error", "too_deep"]

#: Words that start a statement.
STATEMENT_WORDS = (
    "circuit", "param", "ground", "resistor", "capacitor", "inductor", "coupling", "voltage_source",
    "current_source", "switch", "diode", "transient", "record", "require", "include",
)

_TERMINAL_WORDS = {
    "NAME": "a name",
    "NUMBER": "a number",
    "UNIT": "a unit",
    "STRING": "a text in double quotes",
    "_NL": "the end of the line",
    "$END": "the end of the file",
    "COMPARE": "a comparison (<, <=, > or >=)",
    "FIGURE": "a figure (peak, minimum, final, overshoot, undershoot, rise time, settling time, rms, mean, "
              "i2t, max slope, damping ratio, damped frequency)",
    "ELEMENT_KIND": "'resistor', 'capacitor' or 'inductor'",
    "SOURCE_KIND": "'voltage_source' or 'current_source'",
    "MOVE": "'closes' or 'opens'",
    "PLUSMINUS": "a tolerance such as '± 5 %'",
    "DISTRIBUTION": "'normal' or 'uniform'",
}
_FIGURE_WORDS = ("peak", "minimum", "final", "overshoot", "undershoot", "rise", "settling", "rms", "mean", "i2t",
                 "max", "damping", "damped")
_OPERATORS = {"+", "-", "*", "/", "^"}


def _literal(name: str) -> str | None:
    """The fixed text of a string terminal (a keyword or punctuation), else None."""
    for term in cached_parser().terminals:
        if term.name == name and term.pattern.type == "str":
            return term.pattern.value
    return None


def _describe(expected: set[str]) -> tuple[str, list[str]]:
    """Plain words for a set of lark terminal names, and the keywords among them."""
    literals = {name: _literal(name) for name in expected}
    words: list[str] = []
    keywords: list[str] = []
    names = set(expected)
    if {"NUMBER", "NAME"} <= names and "(" in literals.values():
        words.append("a value (a number with a unit, a parameter name or an expression)")
        names -= {"NUMBER", "NAME"} | {n for n, lit in literals.items() if lit in ("(", "-", "+")}
    if "NAME" in names and {"constant", "points"} <= set(literals.values()):
        words.append("a waveform (" + ", ".join(WAVEFORM_WORDS[:-1]) + " or " + WAVEFORM_WORDS[-1] + ")")
        names -= {"NAME"} | {n for n, lit in literals.items() if lit in ("constant", "points")}
    if {"from", "after", "before"} <= set(literals.values()) and "COMPARE" in names:  # a requirement's window
        words.append("a window such as 'after 2 ms' or a comparison (< <= > >=)")
        names -= {n for n, lit in literals.items() if lit in ("from", "after", "before")} | {"COMPARE"}
    operators = {n for n, lit in literals.items() if lit in _OPERATORS}
    if operators and "UNIT" in names:
        words.append("a unit or an operator (+ - * / ^)")
        names -= {"UNIT"} | operators
    elif len(operators & names) >= 3:
        words.append("an operator (+ - * / ^)")
        names -= operators
    for name in sorted(names, key=lambda n: (n.startswith("_") or n.startswith("$"), n)):
        lit = literals.get(name)
        if lit == "--":
            words.append("'--' between the two nodes")
        elif lit is not None:
            words.append(f"'{lit}'")
            if lit.isidentifier():
                keywords.append(lit)
        else:
            words.append(_TERMINAL_WORDS.get(name, "something else"))
            if name == "ELEMENT_KIND":
                keywords += ["resistor", "capacitor", "inductor"]
            elif name == "SOURCE_KIND":
                keywords += ["voltage_source", "current_source"]
            elif name == "MOVE":
                keywords += ["closes", "opens"]
            elif name == "DISTRIBUTION":
                keywords += ["normal", "uniform"]
            elif name == "FIGURE":
                keywords += list(_FIGURE_WORDS)
    if len(words) > 1:
        text = ", ".join(words[:-1]) + " or " + words[-1]
    else:
        text = words[0] if words else "something else"
    return text, keywords


_WORD = re.compile(r"[^\s,()#=<>*/+^\"]+")
_SOURCE_LINE = re.compile(r"\s*(?:voltage_source|current_source)\s+\w+\s+\w+\s*--\s*\w+\s+([A-Za-z_]\w*)")


def expected_literals(expected: set[str]) -> set[str]:
    """The fixed words among a set of lark terminal names."""
    return {lit for lit in (_literal(name) for name in expected) if lit is not None}


def _unknown_waveform_word(text: str, column: int) -> tuple[str, int] | None:
    """(word, 0-based column) of a source's waveform word that is no waveform, when the error lies after it.

    Words such as a retired ``dc`` followed by a value fail in the grammar
    (a value where a field name belongs); this names the word itself.
    """
    m = _SOURCE_LINE.match(text)
    if m is None or m.group(1) in WAVEFORM_WORDS or column - 1 <= m.start(1):
        return None
    return m.group(1), m.start(1)


def syntax_error(err: UnexpectedInput, file: str, lines: list[str]) -> NetlistError:
    """Translate a lark failure into our own located, plain-worded error."""
    line = getattr(err, "line", None) or max(len(lines), 1)
    column = getattr(err, "column", None) or 1
    if line < 1:  # lark reports -1 for the end of the input
        line = max(len(lines), 1)
        column = len(lines[line - 1]) + 1 if lines else 1
    text = lines[line - 1] if 0 < line <= len(lines) else ""
    where = Where(file, line, column, text)
    if isinstance(err, UnexpectedToken):
        expected = set(err.expected)
        token_type = err.token.type
    else:
        expected = set(getattr(err, "allowed", None) or ())
        token_type = None
    retired = _unknown_waveform_word(text, column)
    if retired is not None:
        kind, start = retired
        return NetlistError(f"unknown waveform '{kind}'", Where(file, line, start + 1, text),
                            word_hint(kind, WAVEFORM_WORDS))
    if re.match(r"\s*coupling\b", text) and "with" in expected_literals(expected):
        return NetlistError("a coupling names its two inductors with 'with' between them",
                            where, "write e.g. 'coupling M1 L1 with L2 k 0.95'")
    missing_angle = re.search(r"\b(closes|opens)[ \t]+on[ \t]+angle[ \t]+(of)\b(?:[ \t]+(\w+))?", text)
    if missing_angle and column > missing_angle.start(2):  # "angle of V": "of" read as the value
        verb, source = missing_angle.group(1), missing_angle.group(3) or "Vmains"
        return NetlistError("the angle is missing: a value with its unit comes between 'angle' and 'of'",
                            Where(file, line, missing_angle.start(2) + 1, text),
                            f"write e.g. '{verb} on angle 90 deg of {source}'")
    wanted, keywords = _describe(expected)
    rest = text[column - 1:]
    word_match = _WORD.match(rest)
    word = word_match.group(0) if word_match else ""
    before = text[: column - 1]
    if re.match(r"\s*require\b.*\bfrom\b", before) and expected == {"NAME"}:  # 'from 1 ms until 2 ms'
        return NetlistError(f"expected 'to' between the two instants of the window, got '{word}'", where,
                            "write 'from 0 s to 10 ms'")

    if token_type in ("_NL", "$END") or (not rest.strip() and token_type is None):
        code_end = len(text.split("#", 1)[0].rstrip()) + 1
        where = Where(file, line, max(code_end, 1), text)
        return NetlistError(f"the statement ends too early; expected {wanted}", where,
                            "complete the statement on this line")
    at_start = not before.strip()
    if at_start and word and word[0].isalpha():
        return NetlistError(f"unknown statement '{word}'", where,
                            did_you_mean(word, STATEMENT_WORDS) or "a line starts with a statement word")
    if word and keywords:
        close = did_you_mean(word, keywords)
        if close.startswith("did you mean"):
            return NetlistError(f"unexpected '{word}'; expected {wanted}", where, close)
    number = re.search(r"(?<![\w.])[\d.]+$", before)
    if number and rest[:1] in ".0123456789":
        shown = number.group(0) + re.match(r"[\w.]*", rest).group(0)
        return NetlistError(f"'{shown}' is not a number", Where(file, line, number.start() + 1, text),
                            "write one decimal point, e.g. 1.25, or an exponent, e.g. 1.5e-3")
    if word and re.search(r"%[ \t]*$", before) and word.isidentifier():
        return NetlistError(f"unknown distribution '{word}'", where,
                            "a tolerance's distribution is 'normal' or 'uniform' (or leave it out for normal)")
    last = before.split()[-1] if before.split() else ""  # a number's last digit, not a name's (R1)
    if word and re.search(r"\d[ \t]*$", before) and last[:1] in "0123456789." and (
            word[0].isalpha() or word[0] in "%°"):
        try:
            split_unit(word)
        except NetlistError as unit_err:
            return NetlistError(unit_err.message, where, unit_err.hint)
    if rest[:1] == '"':
        return NetlistError("a text in double quotes is not closed on this line", where,
                            'end the text with a second "')
    if token_type is None and rest and not rest[0].isalnum():
        return NetlistError(f"unexpected character '{rest[0]}'", where,
                            "remove it; see docs/language.md for the characters a statement may use")
    shown = word or rest[:1]
    if len(wanted.split(", ")) > 4:  # a list this long (merged parser states) would not help
        return NetlistError(f"unexpected '{shown}' here", where,
                            "check the spelling and the order of the words against docs/language.md")
    hint = "a window is 'from A to B', 'after A' or 'before B'" if "a window" in wanted else None
    return NetlistError(f"unexpected '{shown}'; expected {wanted}", where, hint)


def too_deep(file: str, lines: list[str]) -> NetlistError:
    deepest = max(range(len(lines)), key=lambda i: lines[i].count("("), default=0)
    text = lines[deepest] if lines else ""
    return NetlistError("an expression is nested too deeply to read", Where(file, deepest + 1, 1, text),
                        "split it into several parameters")
