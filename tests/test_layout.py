"""The package layout keeps the data flow one-directional (DEVELOPERS.md, "Layout").

Structural facts of our own code, read with the standard library's ``ast``:
each module may import the foundation, the model, and the stages before it,
never a stage after it; no ``try: import`` fallbacks for our own modules; no
module above 500 lines.
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "circuitode"

#: Stage rank in the data flow; a module may import only ranks ≤ its own.
#: Modules of one stage may import each other.
RANKS = {
    "errors": 0, "quantities": 0, "notebook": 0, "gc_pause": 0,
    "model": 1,
    "netlist": 2,
    "checks": 3,
    "equations": 4,
    "solvers": 4,  # they know no circuits; they import only the foundation
    "transient": 5,
    "analysis": 6,
    "output": 7,
    "tolerance": 8,
    "studies": 9,
    "jobs": 9,
    "measured": 6,  # an analysis of measured waveforms
    "cli": 10, "cli_help": 10, "__init__": 10, "__main__": 10,
}


def _stage(parts: tuple[str, ...]) -> str:
    """The stage of a module path relative to the package ("model/circuit.py" → "model")."""
    return parts[0].removesuffix(".py")


def _modules():
    for path in sorted(PACKAGE.rglob("*.py")):
        yield path, path.relative_to(PACKAGE).parts


def _imported_stages(path: Path, parts: tuple[str, ...]):
    """(line, stage) of every import of one of our modules, relative or absolute."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = list(parts[:-1])
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - (node.level - 1)] if node.level > 1 else package
                target = base + (node.module.split(".") if node.module else [])
                if not target:  # "from . import x" at the top of the package
                    target = [alias.name for alias in node.names][:1]
            elif node.module and node.module.split(".")[0] == "circuitode":
                target = node.module.split(".")[1:] or [alias.name for alias in node.names][:1]
            else:
                continue
            yield node.lineno, target[0].removesuffix(".py")
        elif isinstance(node, ast.Import):
            for alias in node.names:
                names = alias.name.split(".")
                if names[0] == "circuitode" and len(names) > 1:
                    yield node.lineno, names[1]


def test_every_module_has_a_known_stage():
    unknown = {_stage(parts) for _, parts in _modules()} - set(RANKS)
    assert not unknown, f"add these to RANKS (and to DEVELOPERS.md's table): {sorted(unknown)}"


def test_imports_never_reach_a_later_stage():
    found = []
    for path, parts in _modules():
        own = RANKS[_stage(parts)]
        for line, stage in _imported_stages(path, parts):
            if stage in RANKS and RANKS[stage] > own:
                found.append(f"{'/'.join(parts)}:{line} imports {stage}")
    assert not found, "imports that reach back up the data flow:\n" + "\n".join(found)


def test_solvers_know_no_circuits():
    found = [f"{'/'.join(parts)}:{line} imports {stage}"
             for path, parts in _modules() if _stage(parts) == "solvers"
             for line, stage in _imported_stages(path, parts) if stage not in ("solvers", "errors", "quantities")]
    assert not found, "\n".join(found)


def test_no_import_fallbacks_for_our_own_modules():
    found = []
    for path, parts in _modules():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if not isinstance(node, ast.Try):
                continue
            if not any(isinstance(h.type, ast.Name) and h.type.id in ("ImportError", "ModuleNotFoundError")
                       for h in node.handlers):
                continue
            for inner in node.body:
                if isinstance(inner, ast.ImportFrom) and (inner.level or (inner.module or "").startswith("circuitode")):
                    found.append(f"{'/'.join(parts)}:{inner.lineno}")
    assert not found, "try/except ImportError around our own modules: " + ", ".join(found)


@pytest.mark.parametrize("path", [p for p, _ in _modules()], ids=lambda p: str(p.relative_to(PACKAGE)))
def test_modules_stay_under_500_lines(path):
    lines = path.read_text(encoding="utf-8").count("\n")
    assert lines <= 500, f"{path.name} has {lines} lines: split it by idea (DEVELOPERS.md, Conventions)"
