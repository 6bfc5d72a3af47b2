"""Errors across the stages: the equation stage says what it knows, the driver adds the checks' words.

The circuit used: a current source charging a capacitor (with a second capacitor
behind a resistor) has no DC steady state -- at DC a capacitor carries no
current, so the source's current has nowhere to go (Nilsson & Riedel "Electric
Circuits", ch. 6, capacitor as an open circuit at DC; chapter number from memory).
"""
from __future__ import annotations

import ast
import pickle
from pathlib import Path

import pytest

from circuitode.checks.dc import explain_singular_dc
from circuitode.errors import NoSteadyStateError, SingularSystemError
from circuitode.equations.statespace import assemble, initial_state
from circuitode.model import Capacitor, Circuit, CurrentSource, Resistor
from circuitode.model import Dc
from circuitode.transient import simulate

PACKAGE = Path(__file__).resolve().parents[1] / "circuitode"


def no_dc_path() -> Circuit:
    return Circuit("t", "0", (CurrentSource("I", "0", "a", Dc(1)), Capacitor("C", "a", "0", 1e-6),
                              Resistor("R", "a", "b", 1.0), Capacitor("C2", "b", "0", 1e-6)))


def test_equation_stage_error_carries_its_own_words():
    ckt = no_dc_path()
    with pytest.raises(NoSteadyStateError) as err:
        initial_state(ckt, "steady", assemble(ckt, ()), [1.0])
    e = err.value
    assert e.closed == () and e.reasons and "node(s) a, b" in e.reasons[0]
    assert str(e).startswith("cannot start from the DC steady state of the circuit in its only configuration")
    assert isinstance(e, SingularSystemError)
    again = pickle.loads(pickle.dumps(e))  # batches move errors between processes
    assert str(again) == str(e) and again.closed == e.closed


def test_driver_words_a_refused_steady_state_by_element():
    ckt = no_dc_path()
    words = explain_singular_dc(ckt, ())
    assert words and "C" in words  # the checks name the capacitors that carry no direct current
    with pytest.raises(SingularSystemError) as err:
        simulate(ckt, method="exact", until=1e-3, points=11, initial="steady")
    assert str(err.value) == ("cannot start from the DC steady state of the circuit "
                              "in its only configuration (it has no switches): " + words)


def _imports(path: Path) -> list[str]:
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            found.append("." * node.level + (node.module or ""))
        elif isinstance(node, ast.Import):
            found.extend(a.name for a in node.names)
    return found


@pytest.mark.parametrize("stage, forbidden", [
    ("equations", ("checks", "netlist", "transient", "tolerance", "analysis", "output")),
    ("model", ("checks", "equations", "netlist", "transient", "tolerance", "analysis", "output")),
])
def test_stages_do_not_reach_back(stage, forbidden):
    for path in sorted((PACKAGE / stage).glob("*.py")):
        for name in _imports(path):
            parts = name.lstrip(".").split(".")
            top = parts[1] if parts[0] == "circuitode" and len(parts) > 1 else parts[0]
            from_package = name.startswith("..") or name.startswith("circuitode.")
            assert not (from_package and top in forbidden), f"{path.name} imports {name}"
