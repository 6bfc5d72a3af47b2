"""A fast path for the plain lines of large netlists, giving exactly what lark gives.

Generated netlists (ladders of thousands of sections) are mostly element lines
such as ``resistor R7 n6 -- m7 50 mΩ ± 5 %  # section 7`` and comments; lark's
pure-Python lexer and tree builder read them at about 0.2 MB/s.  This module
matches each line against one compiled pattern made from the grammar's own
terminals (``NAME``, ``NUMBER``, ``UNIT``, ``ELEMENT_KIND``, ``PLUSMINUS``,
``DISTRIBUTION`` of :func:`.lark_parser.cached_parser`, each taken whole as lark's
lexer takes it) and builds the same syntax objects, at the same line and
column, as :class:`.parse_tree.ToSyntaxTree` builds from lark's tree.

Claimed shapes (whitespace as the grammar allows it, an optional trailing comment):

* blank and comment-only lines;
* ``ground NAME``;
* ``resistor|capacitor|inductor NAME NAME -- NAME VALUE [initial VALUE]``;
* ``param NAME = VALUE``;

where VALUE is ``NUMBER [UNIT]`` or a parameter ``NAME``, with an optional
``± NUMBER % [normal|uniform]``.  Everything else, and any line the pattern is
unsure of (a number that does not read, a tolerance out of range, a line after a
``record`` line ending in a comma, which lark would read as its continuation), is
left to lark: :func:`.parse.parse_text` blanks the claimed lines, parses the rest
with lark and merges the two by line.  A line of nothing but ignored characters
that is no blank line to the grammar (a form feed) means a mistake that depends
on its neighbours, so then lark reads the whole text.  ``tests/test_fast_lines.py`` checks both
paths equal on the examples, generated ladders and the fuzz corpus, and fails when
the grammar rules of these shapes change (re-check this module then).
"""
from __future__ import annotations

import re
from functools import lru_cache

from ..errors import NetlistError, Where
from . import expressions as ex
from ..quantities import read_quantity
from .lark_parser import cached_parser
from .syntax import ElementStmt, GroundStmt, ParamStmt, Tolerance, Valued

__all__ = ["claim_lines"]

_WS = r"[ \t\f]"


def _value(p: str, t: dict[str, str]) -> str:
    """The pattern of a VALUE whose groups are prefixed by ``p``."""
    return (rf"(?:(?P<{p}n>(?>{t['NUMBER']}))(?:{_WS}*(?P<{p}u>(?>{t['UNIT']})))?|(?P<{p}id>(?>{t['NAME']})))"
            rf"(?:{_WS}*(?P<{p}pm>(?>{t['PLUSMINUS']})){_WS}*(?P<{p}tn>(?>{t['NUMBER']}))"
            rf"(?:{_WS}*(?P<{p}tu>(?>{t['UNIT']})))?(?:{_WS}*(?P<{p}d>(?>{t['DISTRIBUTION']})))?)?")


@lru_cache(maxsize=1)
def _master() -> re.Pattern:
    """One pattern taking a run of blank lines, or one line of a claimed shape, or any other line."""
    t = {term.name: term.pattern.to_regexp() for term in cached_parser().terminals}
    name = rf"(?>{t['NAME']})"
    end = rf"{_WS}*(?:#[^\n]*|\r(?=\n))?(?:\n|\Z)"  # spaces and a comment are ignored; "\r\n" ends a line
    return re.compile(
        r"(?P<blank>(?:[ \t]*+(?:#[^\n]*+|\r)?+\n)++)"  # what the grammar's _NL takes after a newline
        rf"|{_WS}*(?P<kind>(?>{t['ELEMENT_KIND']})){_WS}+(?P<name>{name}){_WS}+(?P<a>{name}){_WS}*--{_WS}*"
        rf"(?P<b>{name}){_WS}+{_value('v', t)}(?:{_WS}+initial{_WS}+{_value('i', t)})?{end}"
        rf"|{_WS}*param{_WS}+(?P<param>{name}){_WS}*={_WS}*{_value('p', t)}{end}"
        rf"|{_WS}*ground{_WS}+(?P<ground>{name}){end}"
        r"|(?P<other>[^\n]*)(?:\n|\Z)")


#: A line whose code ends in a comma: a ``record`` list continues on the next code line.
_CONTINUES = re.compile(r".*,[ \t\f]*(?:#.*)?")


#: A line of nothing but what the grammar ignores that is not a blank line to it (a form feed,
#: a lone "\r"): between two statements lark reads it as an empty statement, a mistake.
_IGNORED = re.compile(r"[ \t\f\r]*(?:#.*)?")


class _Unsure(Exception):
    """The fast path leaves this line to lark (which reads it, or words its mistake)."""


@lru_cache(maxsize=4096)
def _quantity(number: str, unit: str):
    try:
        return read_quantity(number, unit)
    except NetlistError:
        raise _Unsure from None


_new = object.__new__


def _frozen(cls, **fields):
    """An instance of the frozen dataclass ``cls`` with every field given.

    The same object as ``cls(**fields)`` (no ``__post_init__`` runs in these
    classes), made without the generated ``__init__``, which sets frozen fields
    one ``object.__setattr__`` at a time and was half the cost of a line.
    """
    obj = _new(cls)
    obj.__dict__.update(fields)
    return obj


class _Lines:
    """Builds the syntax objects of claimed lines, located as :class:`.parse_tree.ToSyntaxTree` locates them."""

    def __init__(self, file: str, lines: list[str]):
        self.file = file
        self.lines = lines

    def valued(self, m: re.Match, p: str, k: int, base: int) -> Valued:
        """The VALUE of groups prefixed ``p`` on 0-based line ``k`` whose text starts at ``base + 1``."""
        file, text = self.file, self.lines[k]
        number, unit, name, plusminus = m.group(p + "n", p + "u", p + "id", p + "pm")
        if number is not None:  # the value's place is its number's, as lark's meta gives it
            where = _frozen(Where, file=file, line=k + 1, column=m.start(p + "n") - base, text=text)
            q = _quantity(number, unit or "")
            expr = _frozen(ex.Number, value=q.value, unit=q.unit, where=where)
        else:
            where = _frozen(Where, file=file, line=k + 1, column=m.start(p + "id") - base, text=text)
            expr = _frozen(ex.Name, name=name, where=where)
        tolerance = None
        if plusminus is not None:
            q = _quantity(m.group(p + "tn"), m.group(p + "tu") or "")
            if q.unit != "%" or not 0.0 < q.value < 1.0:
                raise _Unsure  # lark words this mistake
            at = _frozen(Where, file=file, line=k + 1, column=m.start(p + "tn") - base, text=text)
            tolerance = _frozen(Tolerance, relative=q.value, distribution=m.group(p + "d") or "normal", where=at)
        return _frozen(Valued, expr=expr, tolerance=tolerance, where=where)

    def element(self, m: re.Match, k: int, base: int) -> ElementStmt:
        kind, name, first, second, initial_number, initial_name = m.group("kind", "name", "a", "b", "in", "iid")
        value = self.valued(m, "v", k, base)
        initial = None if initial_number is None and initial_name is None else self.valued(m, "i", k, base)
        where = _frozen(Where, file=self.file, line=k + 1, column=m.start("name") - base, text=self.lines[k])
        return _frozen(ElementStmt, kind=kind, name=name, first=first, second=second, value=value, initial=initial,
                       where=where)

    def param(self, m: re.Match, k: int, base: int) -> ParamStmt:
        return ParamStmt(m.group("param"), self.valued(m, "p", k, base),
                         Where(self.file, k + 1, m.start("param") - base, self.lines[k]))

    def ground(self, m: re.Match, k: int, base: int) -> GroundStmt:
        return GroundStmt(m.group("ground"), Where(self.file, k + 1, m.start("ground") - base, self.lines[k]))


def claim_lines(text: str, lines: list[str], file: str) -> tuple[str | None, list[tuple[int, object]]]:
    """The statements the fast path reads, and the text left for lark.

    Parameters
    ----------
    text : the whole file's text.
    lines : ``text`` split at "\\n", without trailing "\\r" (for locations and excerpts).
    file : the file name used in every ``Where``.

    Returns
    -------
    rest : the text with every claimed line blanked (same lines, same columns of the
        others), or None when lark has nothing to read.
    statements : (0-based line, statement) in line order.
    """
    build = _Lines(file, lines)
    statements: list[tuple[int, object]] = []
    left: list[tuple[int, str]] = []  # (0-based line, text) of the lines left to lark
    continues = False  # the last line left to lark ends in a comma: a record list goes on
    k, last = 0, len(lines) - 1
    for m in _master().finditer(text):
        if k > last:
            break
        blank, kind, param, ground = m.group("blank", "kind", "param", "ground")
        if blank is not None:
            k += blank.count("\n")
            continue
        if not continues and (kind or param or ground):
            base = m.start() - 1
            try:
                statement = (build.element(m, k, base) if kind else build.param(m, k, base) if param
                             else build.ground(m, k, base))
            except _Unsure:
                pass
            else:
                statements.append((k, statement))
                k += 1
                continue
        piece = m.group("other")
        if piece is None:
            piece = m.group().removesuffix("\n")
        if piece:
            if _IGNORED.fullmatch(piece):
                return text, []  # lark alone: this line's meaning depends on the lines around it
            left.append((k, piece))
            continues = _CONTINUES.fullmatch(lines[k]) is not None
        k += 1
    if not left:
        return None, statements
    pieces, at = [], 0
    for line, piece in left:
        pieces += ["\n" * (line - at), piece]
        at = line
    return "".join(pieces), statements
