"""Reading netlists: files and text in, a built :class:`~circuitode.model.circuit.Circuit` out.

``include`` statements are expanded here, relative to the including file, with
include circles reported as a chain of file names.

Include is confined (a netlist may come from someone else): it reads only
regular files (no devices, FIFOs or folders) inside the folder of the netlist
being loaded, or inside a folder named with ``--include-path``; absolute
paths and ``..`` that leave those folders are refused.  Sizes, the number of
included files and the depth of the include chain are bounded
(:mod:`.limits`).  A file whose first statement cannot be read is reported as
"not a netlist", without showing any of its content.
"""
from __future__ import annotations

import os
import stat
from pathlib import Path
from typing import Any, Mapping

from .. import model as cm
from ..errors import NetlistError, Where
from ..gc_pause import collector_paused
from .build import build_circuit
from .limits import ReadPolicy, current_policy, raise_hint
from .parse import parse_text
from .parts import set_parts
from .syntax import IncludeStmt, Netlist, ParamStmt

__all__ = ["expand_includes", "load", "loads", "read_netlist_file"]

_BOM = "\ufeff"


class _NotText(Exception):
    """The bytes are not UTF-8 text of a netlist (binary, NUL bytes)."""


def read_netlist_file(path: Path, policy: ReadPolicy, where=None, shown: str | None = None) -> str:
    """The text of one netlist file, read only if it is a regular file within the size limit.

    Opens without blocking (a FIFO would otherwise wait forever), checks the
    opened file's type, reads at most the limit plus one byte, and drops a
    UTF-8 byte-order mark.

    Raises
    ------
    NetlistError : located at ``where`` (the include statement) when given.
    """
    shown = shown or str(path)
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0))
    except FileNotFoundError:
        raise NetlistError(f"the file '{shown}' does not exist (looked for {path})", where,
                           "paths are relative to the folder of the file that includes them"
                           if where else "check the path") from None
    except OSError as err:
        raise NetlistError(f"the file '{shown}' cannot be read: {err.strerror}", where) from None
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            raise NetlistError(f"'{shown}' is not a regular file (a device, pipe or folder), so it is not read",
                               where, "give the path of a .cnet file")
        if info.st_size > policy.file_bytes:
            raise NetlistError(f"'{shown}' has {info.st_size} bytes; the limit is {policy.file_bytes}", where,
                               raise_hint("split it into smaller files"))
        with os.fdopen(fd, "rb", closefd=True) as handle:
            fd = -1
            data = handle.read(policy.file_bytes + 1)
    except OSError as err:
        raise NetlistError(f"the file '{shown}' cannot be read: {err.strerror}", where) from None
    finally:
        if fd >= 0:
            os.close(fd)
    if len(data) > policy.file_bytes:
        raise NetlistError(f"'{shown}' has more than {policy.file_bytes} bytes; the limit is {policy.file_bytes}",
                           where, raise_hint("split it into smaller files"))
    try:
        if b"\0" in data:
            raise _NotText
        text = data.decode("utf-8")
    except (UnicodeDecodeError, _NotText) as err:
        if where is None:  # the user's own netlist: point at the offending byte
            raise _located_byte_error(data, shown, err) from None
        raise NetlistError(f"'{shown}' is not a netlist (it is not UTF-8 text); its content is not shown",
                           where, "give the path of a .cnet text file") from None
    return text[1:] if text.startswith(_BOM) else text


def _located_byte_error(data: bytes, shown: str, err: Exception) -> NetlistError:
    """file:line:col of the first NUL or non-UTF-8 byte of a netlist."""
    position = err.start if isinstance(err, UnicodeDecodeError) else data.index(b"\0")
    line_start = data.rfind(b"\n", 0, position) + 1
    line_end = data.find(b"\n", position)
    raw = data[line_start: line_end if line_end >= 0 else len(data)]
    text = raw.decode("utf-8", "replace").replace("\0", "\ufffd")
    column = len(data[line_start:position].decode("utf-8", "replace")) + 1
    what = "a NUL character" if isinstance(err, _NotText) else "bytes that are not UTF-8 text"
    return NetlistError(f"{what} in the netlist", Where(shown, data.count(b"\n", 0, position) + 1, column, text),
                        "save the file as UTF-8 text and remove control characters")


def _confined(target: Path, roots: tuple[Path, ...]) -> bool:
    return any(target == root or target.is_relative_to(root) for root in roots)


class _Expansion:
    """State of one netlist's include expansion: the allowed folders and the count of files read."""

    def __init__(self, policy: ReadPolicy, root: Path):
        self.policy = policy
        self.roots = (root,) + tuple(policy.include_paths)
        self.files = 0

    def target_of(self, st: IncludeStmt, base_dir: Path, depth: int) -> Path:
        if "\0" in st.path or any(ord(ch) < 32 for ch in st.path):
            raise NetlistError("an include path cannot contain control characters", st.where,
                               "write the file's name, e.g. include \"parts/filter.cnet\"")
        if depth >= self.policy.include_depth:
            raise NetlistError(f"includes are nested {depth + 1} files deep; the limit is "
                               f"{self.policy.include_depth}", st.where,
                               raise_hint("include the files from fewer levels"))
        self.files += 1
        if self.files > self.policy.include_files:
            raise NetlistError(f"more than {self.policy.include_files} files are included; the limit is "
                               f"{self.policy.include_files}", st.where,
                               raise_hint("include each file once"))
        written = Path(st.path)
        try:
            target = (base_dir / written).resolve()
        except (OSError, RuntimeError, ValueError) as err:
            raise NetlistError(f"the include path '{st.path}' cannot be resolved: {err}", st.where) from None
        if not _confined(target, self.roots):
            why = "an absolute path" if written.is_absolute() else "a path that leaves the netlist's folder"
            raise NetlistError(
                f"include of '{st.path}' is refused: {why}; include reads only files inside "
                + " or ".join(str(r) for r in self.roots), st.where,
                "copy the file next to the netlist, or name its folder with --include-path FOLDER")
        return target

    def expand(self, netlist: Netlist, base_dir: Path, chain: tuple[str, ...]) -> list:
        out: list = []
        for st in netlist.statements:
            if not isinstance(st, IncludeStmt):
                out.append(st)
                continue
            target = self.target_of(st, base_dir, len(chain) - 1)
            if str(target) in chain:
                names = [Path(c).name for c in chain[chain.index(str(target)):]] + [target.name]
                raise NetlistError("files include each other in a circle: " + " includes ".join(names), st.where,
                                   "remove one of these include statements")
            text = read_netlist_file(target, self.policy, st.where, st.path)
            sub = _parse_included(text, target, st)
            out.extend(self.expand(sub, target.parent, chain + (str(target),)))
        return out


def _parse_included(text: str, target: Path, st: IncludeStmt) -> Netlist:
    """Parse an included file; an error at its very first statement means it is no netlist,
    and nothing of it is shown."""
    try:
        return parse_text(text, str(target))
    except NetlistError as err:
        first = next((i + 1 for i, line in enumerate(text.split("\n"))
                      if line.strip() and not line.lstrip().startswith("#")), 1)
        if err.where is None or err.where.line <= first:
            raise NetlistError(f"'{st.path}' is not a netlist (its first statement cannot be read); "
                               "its content is not shown", st.where,
                               "include only .cnet files written in the netlist language") from None
        raise


def expand_includes(netlist: Netlist, base_dir: Path, chain: tuple[str, ...] = (),
                    policy: ReadPolicy | None = None) -> list:
    """The statements of ``netlist`` with every ``include`` replaced by the included file's statements.

    Paths are relative to the including file's folder (``base_dir``), and must stay
    inside it (or a folder of ``policy.include_paths``).  ``chain`` holds the resolved
    paths of the files being included, to report cycles.
    """
    chain = chain or (netlist.file,)
    return _Expansion(policy or current_policy(), Path(base_dir).resolve()).expand(netlist, base_dir, chain)


@collector_paused
def loads(text: str, filename: str = "<text>", overrides: Mapping[str, Any] | None = None,
          varied=()) -> cm.Circuit:
    """Parse and build netlist text. Includes are resolved relative to ``filename``'s folder
    (the current folder for ``"<text>"``).

    overrides : parameter or part name (``R1``, ``K_main.on``; see :mod:`.parts`) → new value.
    varied : parameter names a sweep will vary (see :func:`.build.build_circuit`).

    Raises
    ------
    NetlistError : for every mistake in the text, located and explained.
    """
    if text.startswith(_BOM):
        text = text[1:]
    netlist = parse_text(text, filename)
    is_path = not (filename.startswith("<") and filename.endswith(">"))
    base = Path(filename).resolve().parent if is_path else Path.cwd()
    chain = (str(Path(filename).resolve()),) if is_path else (filename,)
    statements = expand_includes(netlist, base, chain)
    params = {st.name for st in statements if isinstance(st, ParamStmt)}
    overrides = dict(overrides or {})
    parts = {name: value for name, value in overrides.items() if name not in params}
    circuit = build_circuit(statements, {name: value for name, value in overrides.items() if name in params},
                            filename if is_path else None, varied=[name for name in varied if name in params])
    return set_parts(circuit, parts) if parts else circuit


def load(path: str | Path, overrides: Mapping[str, Any] | None = None, varied=()) -> cm.Circuit:
    """Read, parse and build a ``.cnet`` file.

    Parameters
    ----------
    path : the netlist file.
    overrides : parameter or part name → new value (``"47 Ω"`` or an SI float), e.g. from ``--set``.
    varied : parameter names a sweep or sizing will vary (their recipes are kept by name).

    Raises
    ------
    NetlistError : when the file cannot be read, or for any mistake in it.
    """
    path = Path(path)
    if "\0" in str(path):
        raise NetlistError("a file name cannot contain a NUL character", hint="check the path")
    text = read_netlist_file(path, current_policy(), shown=str(path))
    return loads(text, str(path), overrides, varied)
