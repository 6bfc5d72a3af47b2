"""The expression tree and its evaluator (circuitode.netlist.expressions)."""
from __future__ import annotations

import numpy as np
import pytest

from circuitode.errors import NetlistError
from circuitode.netlist.expressions import (
    Binary, Call, Name, Number, Unary, evaluation_order, substitute,
)


def _f0() -> Binary:
    # f0 = 1 / (2 π √(L C)): Alexander & Sadiku, "Fundamentals of Electric Circuits", ch. 8
    return Binary("/", Number(1.0), Binary("*", Binary("*", Number(2.0), Name("pi")),
                                           Call("sqrt", Binary("*", Name("L"), Name("C")))))


def test_names_leave_out_constants():
    assert _f0().names == frozenset({"L", "C"})


def test_floats_and_arrays_alike():
    expr = _f0()
    assert expr.evaluate({"L": 2e-3, "C": 1.5e-3}) == pytest.approx(1 / (2 * np.pi * np.sqrt(3e-6)), rel=1e-15)
    L = np.array([1e-3, 2e-3, 4e-3])[:, None]   # (3, 1)
    C = np.array([1e-6, 4e-6])[None, :]          # (1, 2): shapes broadcast to (3, 2)
    out = expr.evaluate({"L": L, "C": C})
    assert out.shape == (3, 2)
    np.testing.assert_allclose(out, 1 / (2 * np.pi * np.sqrt(L * C)), rtol=1e-15)


def test_unary_power_and_functions():
    env = {"x": np.array([1.0, 4.0])}
    np.testing.assert_allclose(Unary("-", Binary("^", Name("x"), Number(0.5))).evaluate(env), [-1.0, -2.0])
    assert Call("exp", Call("log", Number(3.0))).evaluate({}) == pytest.approx(3.0)


def test_unknown_function_and_name():
    with pytest.raises(NetlistError, match="did you mean 'sqrt'"):
        Call("sqrtt", Number(1.0))
    with pytest.raises(NetlistError) as info:
        Name("Ll").evaluate({"L1": 1.0})
    assert "unknown name 'Ll'" in info.value.message and "L1" in info.value.hint


def test_evaluation_order_puts_dependencies_first():
    order = evaluation_order({"tau": Binary("*", Name("R"), Name("C")), "R": Number(10.0), "C": Name("C0"),
                              "C0": Number(1e-3)})
    assert order.index("R") < order.index("tau") and order.index("C0") < order.index("C") < order.index("tau")


def test_evaluation_order_reports_a_circle():
    with pytest.raises(NetlistError, match="a → b → a"):
        evaluation_order({"a": Name("b"), "b": Binary("+", Name("a"), Number(1.0))})


def test_substitute_rebuilds_only_the_chosen_names():
    expr = Binary("*", Name("Z"), Name("k"))
    swapped = substitute(expr, lambda n: Binary("/", Name("L"), Name("C")) if n.name == "Z" else None)
    assert swapped.names == frozenset({"L", "C", "k"})
    assert swapped.evaluate({"L": 4.0, "C": 2.0, "k": 3.0}) == 6.0
    assert expr.names == frozenset({"Z", "k"})  # the original is untouched (frozen)
