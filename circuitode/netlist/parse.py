"""Netlist text → syntax tree (see :mod:`.syntax`), with every failure in plain words.

The grammar lives in ``grammar.lark`` (lark, LALR, contextual lexer), read by
the cached parser of :mod:`.lark_parser`; :mod:`.parse_tree` turns lark's tree
into our syntax tree.  Every lark failure is turned by :mod:`.parse_errors` into
a :class:`~circuitode.errors.NetlistError` with ``file:line:col``, the line with
a caret and what was expected in plain words; lark's own class and terminal
names never reach the user.
"""
from __future__ import annotations

from lark.exceptions import LarkError, UnexpectedInput, VisitError

from ..errors import NetlistError, Where
from .limits import check_text_shape
from .lark_parser import CURRENT_TEXT, build_parser, cached_parser
from .parse_errors import STATEMENT_WORDS, syntax_error, too_deep
from .parse_tree import ToSyntaxTree
from .syntax import Netlist

__all__ = ["STATEMENT_WORDS", "parse_text", "build_parser"]


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
    CURRENT_TEXT.set((file, lines, text))
    try:
        tree = cached_parser().parse(text)
    except UnexpectedInput as err:
        raise syntax_error(err, file, lines) from None
    except LarkError:  # any other lark failure, still reported in our words
        raise NetlistError("the text could not be read as a netlist", Where(file, 1, 1, lines[0] if lines else ""),
                           "check the statement words against docs/language.md") from None
    try:
        statements = ToSyntaxTree(file, lines).transform(tree)
    except VisitError as err:
        if isinstance(err.orig_exc, NetlistError):
            raise err.orig_exc from None
        if isinstance(err.orig_exc, RecursionError):
            raise too_deep(file, lines) from None
        raise
    except RecursionError:
        raise too_deep(file, lines) from None
    return Netlist(file, statements, tuple(lines))
