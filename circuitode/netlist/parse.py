"""Netlist text → syntax tree (see :mod:`.syntax`), with every failure in plain words.

The grammar lives in ``grammar.lark`` (lark, LALR, contextual lexer), read by
the cached parser of :mod:`.lark_parser`; :mod:`.parse_tree` turns lark's tree
into our syntax tree.  Every lark failure is turned by :mod:`.parse_errors` into
a :class:`~circuitode.errors.NetlistError` with ``file:line:col``, the line with
a caret and what was expected in plain words; lark's own class and terminal
names never reach the user.

Plain lines (blank, comment, ``ground``, element and simple ``param`` lines) are
read by the fast path of :mod:`.fast_lines`, which builds the same objects at the
same places; lark reads the rest, with the claimed lines blanked so that its
lines and columns stay those of the file.  When anything fails, the whole text is
read again by lark alone (:func:`parse_with_lark`), so a mistake is reported
exactly as lark's path reports it.
"""
from __future__ import annotations

import heapq

from lark.exceptions import LarkError, UnexpectedInput, VisitError

from ..errors import NetlistError, Where
from ..gc_pause import collector_paused
from .fast_lines import claim_lines
from .limits import check_text_shape
from .lark_parser import CURRENT_TEXT, build_parser, cached_parser
from .parse_errors import STATEMENT_WORDS, syntax_error, too_deep
from .parse_tree import ToSyntaxTree
from .syntax import Netlist

__all__ = ["STATEMENT_WORDS", "parse_text", "parse_with_lark", "build_parser"]


@collector_paused
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
    rest, fast = claim_lines(text, lines, file)
    if rest is None:
        return Netlist(file, tuple(s for _, s in fast), tuple(lines))
    try:
        slow = _lark_statements(rest, file, lines)
    except NetlistError:
        return parse_with_lark(text, file, lines)  # raises, worded as lark's path words it
    if not fast:
        return Netlist(file, slow, tuple(lines))
    merged = heapq.merge(fast, ((s.where.line - 1, s) for s in slow), key=lambda pair: pair[0])
    return Netlist(file, tuple(s for _, s in merged), tuple(lines))


@collector_paused
def parse_with_lark(text: str, file: str = "<text>", lines: list[str] | None = None) -> Netlist:
    """Parse with lark alone (no fast path): the reference :func:`parse_text` must equal."""
    if lines is None:
        lines = [line.rstrip("\r") for line in text.split("\n")]
        check_text_shape(text, file, lines)
    return Netlist(file, _lark_statements(text, file, lines), tuple(lines))


def _lark_statements(text: str, file: str, lines: list[str]) -> tuple:
    """The statements lark reads from ``text``; ``lines`` are the file's lines, for locations."""
    CURRENT_TEXT.set((file, lines, text))
    try:
        tree = cached_parser().parse(text)
    except UnexpectedInput as err:
        raise syntax_error(err, file, lines) from None
    except LarkError:  # any other lark failure, still reported in our words
        raise NetlistError("the text could not be read as a netlist", Where(file, 1, 1, lines[0] if lines else ""),
                           "check the statement words against docs/language.md") from None
    try:
        return ToSyntaxTree(file, lines).transform(tree)
    except VisitError as err:
        if isinstance(err.orig_exc, NetlistError):
            raise err.orig_exc from None
        if isinstance(err.orig_exc, RecursionError):
            raise too_deep(file, lines) from None
        raise
    except RecursionError:
        raise too_deep(file, lines) from None
