"""Reading netlists: files and text in, a built :class:`~circuitode.model.circuit.Circuit` out.

``include`` statements are expanded here, relative to the including file, with
include circles reported as a chain of file names.
"""
from __future__ import annotations

from pathlib import Path
from typing import Any, Mapping

from ..model import circuit as cm
from ..errors import NetlistError
from .build import build_circuit
from .parse import parse_text
from .parts import set_parts
from .syntax import IncludeStmt, Netlist, ParamStmt

__all__ = ["expand_includes", "load", "loads"]


def expand_includes(netlist: Netlist, base_dir: Path, chain: tuple[str, ...] = ()) -> list:
    """The statements of ``netlist`` with every ``include`` replaced by the included file's statements.

    Paths are relative to the including file's folder (``base_dir``).  ``chain``
    holds the resolved paths of the files being included, to report cycles.
    """
    chain = chain or (netlist.file,)
    out: list = []
    for st in netlist.statements:
        if not isinstance(st, IncludeStmt):
            out.append(st)
            continue
        target = (base_dir / st.path).resolve()
        if str(target) in chain:
            names = [Path(c).name for c in chain[chain.index(str(target)):]] + [target.name]
            raise NetlistError("files include each other in a circle: " + " includes ".join(names), st.where,
                               "remove one of these include statements")
        try:
            text = target.read_text(encoding="utf-8")
        except FileNotFoundError:
            raise NetlistError(f"the included file '{st.path}' does not exist (looked for {target})", st.where,
                               "paths are relative to the folder of the file that includes them") from None
        except (OSError, UnicodeDecodeError) as err:
            raise NetlistError(f"the included file '{st.path}' cannot be read: {err}", st.where) from None
        sub = parse_text(text, str(target))
        out.extend(expand_includes(sub, target.parent, chain + (str(target),)))
    return out


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
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise NetlistError(f"the netlist file '{path}' does not exist", hint="check the path") from None
    except (OSError, UnicodeDecodeError) as err:
        raise NetlistError(f"the netlist file '{path}' cannot be read: {err}") from None
    return loads(text, str(path), overrides, varied)
