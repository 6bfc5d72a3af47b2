"""Netlist text → syntax tree (see :mod:`.syntax`), with every failure in plain words.

The grammar lives in ``grammar.lark`` (lark, LALR, contextual lexer).  Every
lark failure is turned into a :class:`~circuitode.errors.NetlistError` with
``file:line:col``, the line with a caret and what was expected in plain words;
lark's own class and terminal names never reach the user.
"""
from __future__ import annotations

import re
from contextvars import ContextVar
from functools import lru_cache
from importlib import resources

from lark import Lark, Token, Transformer, v_args
from lark.exceptions import LarkError, UnexpectedInput, UnexpectedToken, VisitError

from ..errors import NetlistError, Where
from . import expressions as ex
from .expressions import did_you_mean
from ..quantities import read_quantity, split_unit
from .limits import check_text_shape
from .vocabulary import WAVEFORM_WORDS, word_hint
from .syntax import (
    CouplingStmt, ElementStmt, Field, GroundStmt, IncludeStmt, Netlist, ParamStmt, ProbeSpec, RecordStmt,
    RequireStmt, SourceStmt, SwitchStmt, DiodeStmt, ThresholdSpec, TimedSpec, TitleStmt, ToggleSpec, Tolerance,
    TransientStmt, Valued, WaveformSpec,
)

__all__ = ["STATEMENT_WORDS", "parse_text", "build_parser"]

# --------------------------------------------------------------------------
# lark → syntax tree
# --------------------------------------------------------------------------


#: (file, lines, text) of the text being parsed, for the keyword check below.
_CURRENT: ContextVar[tuple[str, list[str], str]] = ContextVar("netlist_text")


def _keyword_stands_alone(token: Token) -> Token:
    """Refuse a keyword glued to the word after it ("voltage atlink"), which the lexer would split."""
    file, lines, text = _CURRENT.get()
    end = token.end_pos
    if end is not None and end < len(text) and (text[end].isalnum() or text[end] == "_"):
        glued = re.match(r"\w*", text[token.start_pos:]).group(0)
        where = Where(file, token.line, token.column, lines[token.line - 1] if token.line <= len(lines) else "")
        raise NetlistError(f"'{glued}' is not a word of this statement", where,
                           f"put a space after '{token}' if '{text[end:end + len(glued) - len(token)]}' "
                           "is meant to follow it")
    return token


_OPTIONS = dict(parser="lalr", lexer="contextual", propagate_positions=True, maybe_placeholders=False)


def build_parser(grammar: str, cache: bool | str = True) -> Lark:
    """The LALR parser of ``grammar`` with the keyword check attached.

    ``cache`` is lark's grammar cache: a file path (lark stores in it the
    SHA-256 of the grammar text and options and analyses afresh when they
    differ, so an edited grammar.lark is never served stale), True for lark's
    own file in the temporary folder, False for none.
    """
    plain = Lark(grammar, cache=cache, **_OPTIONS)
    keywords = {t.name: _keyword_stands_alone for t in plain.terminals
                if t.pattern.type == "str" and t.pattern.value.isidentifier()}
    return Lark(grammar, cache=cache, lexer_callbacks=keywords, **_OPTIONS)


def _cache_file(grammar: str) -> str | bool:
    """A grammar cache file in the user's own cache folder, or False when there is none to write.

    Not the shared temporary folder: the cache is a pickle, and a file another
    user could place there would be loaded.  The name carries the grammar's
    SHA-256 and the lark version, so worktrees with different grammars do not
    overwrite each other's file.
    """
    import hashlib
    import os
    from pathlib import Path

    import lark

    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    folder = Path(base) / "circuitode"
    try:
        folder.mkdir(mode=0o700, parents=True, exist_ok=True)
        if folder.stat().st_uid != os.getuid() or not os.access(folder, os.W_OK):
            return False
    except (OSError, AttributeError):  # no home, read-only file system, or no getuid on this platform
        return False
    digest = hashlib.sha256(grammar.encode("utf-8")).hexdigest()[:16]
    return str(folder / f"grammar-{digest}-lark{lark.__version__}.cache")


@lru_cache(maxsize=1)
def _parser() -> Lark:
    grammar = resources.files(__package__).joinpath("grammar.lark").read_text(encoding="utf-8")
    return build_parser(grammar, _cache_file(grammar))


class _ToTree(Transformer):
    """One method per grammar rule; each returns a syntax-tree dataclass or expression node."""

    def __init__(self, file: str, lines: list[str]):
        super().__init__(visit_tokens=False)
        self.file = file
        self.lines = lines

    def at(self, item) -> Where:
        line = getattr(item, "line", None) or 1
        column = getattr(item, "column", None) or 1
        text = self.lines[line - 1] if 0 < line <= len(self.lines) else ""
        return Where(self.file, line, column, text)

    # -- statements ------------------------------------------------------
    @v_args(meta=True)
    def start(self, meta, items):
        return tuple(items)

    @v_args(meta=True)
    def circuit_stmt(self, meta, items):
        return TitleStmt(str(items[0])[1:-1], self.at(meta))

    @v_args(meta=True)
    def include_stmt(self, meta, items):
        return IncludeStmt(str(items[0])[1:-1], self.at(items[0]))

    @v_args(meta=True)
    def param_stmt(self, meta, items):
        return ParamStmt(str(items[0]), items[1], self.at(items[0]))

    @v_args(meta=True)
    def ground_stmt(self, meta, items):
        return GroundStmt(str(items[0]), self.at(items[0]))

    @v_args(meta=True)
    def element_stmt(self, meta, items):
        kind, name, first, second, value, *rest = items
        return ElementStmt(str(kind), str(name), str(first), str(second), value, rest[0] if rest else None,
                           self.at(name))

    def initial_value(self, items):
        return items[0]

    @v_args(meta=True)
    def coupling_stmt(self, meta, items):
        name, first, second, k = items
        return CouplingStmt(str(name), str(first), str(second), k, (self.at(first), self.at(second)), self.at(name))

    @v_args(meta=True)
    def source_stmt(self, meta, items):
        kind, name, first, second, wave = items
        return SourceStmt(str(kind), str(name), str(first), str(second), wave, self.at(name))

    @v_args(meta=True)
    def constant_wave(self, meta, items):
        return WaveformSpec("constant", (Field("value", items[0], items[0].where),), (), self.at(meta))

    @v_args(meta=True)
    def points_wave(self, meta, items):
        return WaveformSpec("points", (), tuple(items), self.at(meta))

    def time_point(self, items):
        return (items[0], items[1])

    @v_args(meta=True)
    def named_wave(self, meta, items):
        kind, *fields = items
        return WaveformSpec(str(kind), tuple(fields), (), self.at(kind))

    def named_field(self, items):
        return Field(str(items[0]), items[1], self.at(items[0]))

    @v_args(meta=True)
    def switch_stmt(self, meta, items):
        name, first, second, control, *options = items
        on = next((v for k, v in options if k == "on"), None)
        off = next((v for k, v in options if k == "off"), None)
        for word in ("on", "off"):
            repeated = [v for k, v in options if k == word]
            if len(repeated) > 1:
                raise NetlistError(f"'{word}' is given twice for switch '{name}'", repeated[1].where,
                                   f"keep one '{word}' resistance")
        return SwitchStmt(str(name), str(first), str(second), control, on, off, self.at(name))

    @v_args(meta=True)
    def diode_stmt(self, meta, items):
        name, first, second, *options = items
        for word in ("drop", "on", "off"):
            repeated = [v for k, v in options if k == word]
            if len(repeated) > 1:
                raise NetlistError(f"'{word}' is given twice for diode '{name}'", repeated[1].where,
                                   f"keep one '{word}'")
        value = {k: v for k, v in options}
        return DiodeStmt(str(name), str(first), str(second), value.get("drop"), value.get("on"),
                         value.get("off"), self.at(name))

    def drop_option(self, items):
        return ("drop", items[0])

    def timed_control(self, items):
        return TimedSpec(tuple(items))

    def timed_move(self, items):
        return (str(items[0]) == "closes", items[1], self.at(items[0]))

    @v_args(meta=True)
    def toggle_control(self, meta, items):
        return ToggleSpec(tuple(items), self.at(meta))

    def threshold_control(self, items):
        move, probe, comparison, level = items
        return ThresholdSpec(str(move) == "closes", probe, str(comparison), level)

    def hysteresis_control(self, items):
        move, probe, comparison, level, move2, probe2, comparison2, level2 = items
        back = ThresholdSpec(str(move2) == "closes", probe2, str(comparison2), level2, where=self.at(move2))
        return ThresholdSpec(str(move) == "closes", probe, str(comparison), level, back, self.at(move))

    def on_option(self, items):
        return ("on", items[0])

    def off_option(self, items):
        return ("off", items[0])

    @v_args(meta=True)
    def transient_stmt(self, meta, items):
        return TransientStmt(tuple(items), self.at(meta))

    def _setting(word):  # noqa: N805 - a small factory used at class creation
        @v_args(meta=True)
        def method(self, meta, items):
            value = items[0]
            if isinstance(value, Token):
                value = str(value)
            return (word, value, self.at(meta))

        return method

    until_setting = _setting("until")
    step_setting = _setting("step")
    points_setting = _setting("points")
    method_setting = _setting("method")
    initial_setting = _setting("initial")
    del _setting

    @v_args(meta=True)
    def record_stmt(self, meta, items):
        return RecordStmt(tuple(items), self.at(meta))

    @v_args(meta=True)
    def require_stmt(self, meta, items):
        figure, probe, comparison, limit = items
        return RequireStmt(" ".join(str(figure).split()), probe, str(comparison), limit, self.at(meta))

    @v_args(meta=True)
    def require_energy(self, meta, items):
        element, comparison, limit = items
        probe = ProbeSpec("power", (str(element),), (self.at(element),), self.at(element))
        return RequireStmt("energy", probe, str(comparison), limit, self.at(meta))

    # -- probes ----------------------------------------------------------
    def _probe(kind):  # noqa: N805
        @v_args(meta=True)
        def method(self, meta, items):
            return ProbeSpec(kind, tuple(str(t) for t in items), tuple(self.at(t) for t in items), self.at(meta))

        return method

    node_voltage = _probe("at")
    voltage_between = _probe("between")
    voltage_across = _probe("across")
    current_through = _probe("through")
    power_in = _probe("power")
    del _probe

    # -- values ----------------------------------------------------------
    @v_args(meta=True)
    def value(self, meta, items):
        return Valued(items[0], items[1] if len(items) > 1 else None, self.at(meta))

    @v_args(meta=True)
    def tolerance(self, meta, items):
        number = items[1]
        unit = next((str(t) for t in items[2:] if t.type == "UNIT"), "")
        distribution = next((str(t) for t in items[2:] if t.type == "DISTRIBUTION"), "normal")
        where = self.at(number)
        q = self._read(number, unit, where)
        if q.unit != "%":
            raise NetlistError("a tolerance is written in percent", where, f"write '± {number} %'")
        if not 0.0 < q.value < 1.0:
            raise NetlistError(f"a tolerance must lie between 0 % and 100 %; got {number} %", where,
                               "write a tolerance such as ± 5 %")
        return Tolerance(q.value, distribution, where)

    @v_args(meta=True)
    def quantity(self, meta, items):
        number = items[0]
        unit = str(items[1]) if len(items) > 1 else ""
        where = self.at(number)
        q = self._read(number, unit, where)
        return ex.Number(q.value, q.unit, where)

    @staticmethod
    def _read(number, unit: str, where):
        """The quantity of a number token and its unit, errors located at ``where``."""
        try:
            return read_quantity(str(number), unit)
        except NetlistError as err:
            raise NetlistError(err.message, where, err.hint) from None

    def name(self, items):
        return ex.Name(str(items[0]), self.at(items[0]))

    def call(self, items):
        return ex.Call(str(items[0]), items[1], self.at(items[0]))

    def _binary(op):  # noqa: N805
        @v_args(meta=True)
        def method(self, meta, items):
            return ex.Binary(op, items[0], items[1], self.at(meta))

        return method

    add = _binary("+")
    subtract = _binary("-")
    multiply = _binary("*")
    divide = _binary("/")
    raise_power = _binary("^")
    del _binary

    @v_args(meta=True)
    def negate(self, meta, items):
        return ex.Unary("-", items[0], self.at(meta))

    def keep_sign(self, items):
        return items[0]


# --------------------------------------------------------------------------
# Errors in plain words
# --------------------------------------------------------------------------

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
    for term in _parser().terminals:
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


def _syntax_error(err: UnexpectedInput, file: str, lines: list[str]) -> NetlistError:
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
    wanted, keywords = _describe(expected)
    rest = text[column - 1:]
    word_match = _WORD.match(rest)
    word = word_match.group(0) if word_match else ""
    before = text[: column - 1]

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
    if word and re.search(r"\d[ \t]*$", before) and (word[0].isalpha() or word[0] in "%°"):
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
    return NetlistError(f"unexpected '{shown}'; expected {wanted}", where)


def _too_deep(file: str, lines: list[str]) -> NetlistError:
    deepest = max(range(len(lines)), key=lambda i: lines[i].count("("), default=0)
    text = lines[deepest] if lines else ""
    return NetlistError("an expression is nested too deeply to read", Where(file, deepest + 1, 1, text),
                        "split it into several parameters")


def parse_text(text: str, file: str = "<text>") -> Netlist:
    """Parse netlist text into a :class:`Netlist` syntax tree.

    Parameters
    ----------
    text : the whole file's text.
    file : its name, used in error locations.

    Raises
    ------
    NetlistError : located at the first mistake, with what was expected.
    """
    lines = [line.rstrip("\r") for line in text.split("\n")]  # lark counts lines by "\n" only
    check_text_shape(text, file, lines)  # line length and bracket depth, before lark sees the text
    _CURRENT.set((file, lines, text))
    try:
        tree = _parser().parse(text)
    except UnexpectedInput as err:
        raise _syntax_error(err, file, lines) from None
    except LarkError:  # any other lark failure, still reported in our words
        raise NetlistError("the text could not be read as a netlist", Where(file, 1, 1, lines[0] if lines else ""),
                           "check the statement words against docs/language.md") from None
    try:
        statements = _ToTree(file, lines).transform(tree)
    except VisitError as err:
        if isinstance(err.orig_exc, NetlistError):
            raise err.orig_exc from None
        if isinstance(err.orig_exc, RecursionError):
            raise _too_deep(file, lines) from None
        raise
    except RecursionError:
        raise _too_deep(file, lines) from None
    return Netlist(file, statements, tuple(lines))
