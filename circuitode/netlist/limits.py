"""Bounds on what a netlist may make the reader do, and the include policy.

A netlist may come from a colleague or a download, so reading one is bounded
before any work starts: file size, line length, bracket nesting, the number
and depth of included files.  Each refusal names the number found, the
limit, and how to raise it (``--allow-large`` multiplies every limit by
:data:`LARGE_FACTOR`).  ``include`` reads only regular files under the folder
of the netlist being loaded or under a folder the user names
(``--include-path``); see :mod:`.loader`.

The policy in force is a context variable, so the command line sets it once
(:func:`reading_policy`) and every load below it — including a batch that
reloads its netlist — obeys it.
"""
from __future__ import annotations

import contextlib
from contextvars import ContextVar
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Iterator

import numpy as np

from ..errors import NetlistError, Where

__all__ = ["LARGE_FACTOR", "ReadPolicy", "current_policy", "large_allowed", "reading_policy", "check_text_shape",
           "raise_hint"]

#: ``--allow-large`` multiplies every limit by this factor.
LARGE_FACTOR = 100


@dataclass(frozen=True)
class ReadPolicy:
    """What reading a netlist may do.

    file_bytes : largest netlist or included file (bytes).
    line_chars : longest line (characters).
    nesting : deepest bracket nesting in one expression.
    operators : most operators (+ - * / ^) on one line (a long sum nests as deep as it is long).
    include_files : most files one netlist may include in all.
    include_depth : longest chain of files including each other.
    include_paths : folders (besides the netlist's own) that ``include`` may read from.
    allow_large : the user asked for larger limits (``--allow-large``).
    """

    file_bytes: int = 8 * 2**20
    line_chars: int = 4096
    nesting: int = 64
    operators: int = 200
    include_files: int = 200
    include_depth: int = 8
    include_paths: tuple[Path, ...] = field(default=())
    allow_large: bool = False

    def scaled(self) -> "ReadPolicy":
        """The limits in force: multiplied by :data:`LARGE_FACTOR` under ``allow_large``."""
        if not self.allow_large:
            return self
        f = LARGE_FACTOR
        return replace(self, file_bytes=self.file_bytes * f, line_chars=self.line_chars * f,
                       nesting=self.nesting * f, operators=self.operators * 2, include_files=self.include_files * f,
                       include_depth=self.include_depth * f, allow_large=False)


_OPERATORS = np.array([ord(c) for c in "+-*/^"], dtype=np.uint32)

_POLICY: ContextVar[ReadPolicy] = ContextVar("netlist_read_policy", default=ReadPolicy())


def large_allowed() -> bool:
    """Whether the user asked for larger limits (``--allow-large``)."""
    return _POLICY.get().allow_large


def current_policy() -> ReadPolicy:
    """The policy in force, with ``--allow-large`` applied."""
    return _POLICY.get().scaled()


@contextlib.contextmanager
def reading_policy(include_paths=(), allow_large: bool = False) -> Iterator[ReadPolicy]:
    """Set the include folders and ``--allow-large`` for every load inside the block."""
    policy = ReadPolicy(include_paths=tuple(Path(p).resolve() for p in include_paths), allow_large=allow_large)
    token = _POLICY.set(policy)
    try:
        yield policy
    finally:
        _POLICY.reset(token)


def raise_hint(what: str) -> str:
    return (f"if you really mean it, rerun with --allow-large (multiplies every limit by {LARGE_FACTOR}); "
            f"otherwise {what}")


def check_text_shape(text: str, file: str, lines: list[str], policy: ReadPolicy | None = None) -> None:
    """Refuse over-long lines and over-deep bracket nesting before parsing (linear time).

    Raises
    ------
    NetlistError : located at the first offending line, with the number and the limit.
    """
    policy = policy or current_policy()
    lengths = np.fromiter((len(line) for line in lines), dtype=np.int64, count=len(lines))
    too_long = np.flatnonzero(lengths > policy.line_chars)
    if too_long.size:
        k = int(too_long[0])
        raise NetlistError(
            f"line {k + 1} has {int(lengths[k])} characters; the limit is {policy.line_chars}",
            Where(file, k + 1, policy.line_chars + 1, lines[k]),
            raise_hint("split the statement (a record list may continue on the next line after a comma)"))
    code = np.frombuffer(text.encode("utf-32-le"), dtype=np.uint32)
    is_operator = np.isin(code, _OPERATORS)
    if is_operator.any():
        starts = np.concatenate([[0], np.flatnonzero(code == ord("\n")) + 1])
        starts = starts[starts < code.size]
        per_line = np.add.reduceat(is_operator.astype(np.int64), starts) if starts.size else np.zeros(0)
        busy = np.flatnonzero(per_line > policy.operators)
        if busy.size:
            k = int(busy[0])
            raise NetlistError(
                f"line {k + 1} has {int(per_line[k])} operators (+ - * / ^); the limit is {policy.operators}",
                Where(file, k + 1, 1, lines[k] if k < len(lines) else ""),
                raise_hint("split the expression into several parameters"))
    if "(" not in text:
        return
    step = (code == ord("(")).astype(np.int32) - (code == ord(")")).astype(np.int32)
    depth = np.cumsum(step, dtype=np.int64)
    deepest = int(np.argmax(depth))
    if depth[deepest] > policy.nesting:
        before = text[:deepest]
        line = before.count("\n") + 1
        column = deepest - (before.rfind("\n") + 1) + 1
        raise NetlistError(
            f"brackets are nested {int(depth[deepest])} deep here; the limit is {policy.nesting}",
            Where(file, line, column, lines[line - 1] if line <= len(lines) else ""),
            raise_hint("split the expression into several parameters"))
