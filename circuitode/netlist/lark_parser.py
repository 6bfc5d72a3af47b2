"""The cached lark parser of ``grammar.lark``, with the check that a keyword stands alone.

lark builds an LALR parser with a contextual lexer from the grammar text; the
analysis is cached in a file in the user's own cache folder, named by the
grammar's SHA-256 and the lark version, so an edited grammar is never served
stale and worktrees with different grammars do not collide.  A lexer callback
refuses a keyword glued to the word after it; it reads the text being parsed
from :data:`CURRENT_TEXT`, which :func:`.parse.parse_text` sets before parsing.
"""
from __future__ import annotations

import re
from contextvars import ContextVar
from functools import lru_cache
from importlib import resources

from lark import Lark, Token

from ..errors import NetlistError, Where

__all__ = ["CURRENT_TEXT", "build_parser", "cached_parser", "grammar_cache_file"]


#: (file, lines, text) of the text being parsed, for the keyword check below.
CURRENT_TEXT: ContextVar[tuple[str, list[str], str]] = ContextVar("netlist_text")


def _keyword_stands_alone(token: Token) -> Token:
    """Refuse a keyword glued to the word after it ("voltage atlink"), which the lexer would split."""
    file, lines, text = CURRENT_TEXT.get()
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


def grammar_cache_file(grammar: str) -> str | bool:
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
def cached_parser() -> Lark:
    grammar = resources.files(__package__).joinpath("grammar.lark").read_text(encoding="utf-8")
    return build_parser(grammar, grammar_cache_file(grammar))
