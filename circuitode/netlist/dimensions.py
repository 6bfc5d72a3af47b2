"""The unit of a parameter computed by an expression (``tau = R_pre * C_link`` is in s).

Each canonical unit is a vector of exponents of the SI base units kg, m, s, A
(BIPM SI Brochure, 9th ed., tables 2 and 4: V = kg m² s⁻³ A⁻¹, Ω = V/A,
F = A s/V, H = V s/A, J = kg m² s⁻², W = J/s, Hz = s⁻¹).  Products and
quotients add and subtract exponents, ``^`` with a plain number and ``sqrt``
scale them; the result is named when it is one of the language's units.
Used only to print resolved parameter values; the units of element values are
checked elsewhere (``quantities.check_unit``).
"""
from __future__ import annotations

from fractions import Fraction
from typing import Mapping

from . import expressions as ex

__all__ = ["expression_unit"]

_V = (1, 2, -3, -1)
_BASE: dict[str, tuple[int, int, int, int]] = {
    "V": _V, "A": (0, 0, 0, 1), "s": (0, 0, 1, 0), "Hz": (0, 0, -1, 0), "Ω": (1, 2, -3, -2),
    "F": (-1, -2, 4, 2), "H": (1, 2, -2, -2), "J": (1, 2, -2, 0), "W": (1, 2, -3, 0), "A²s": (0, 0, 1, 2),
    "V/s": (1, 2, -4, -1), "A/s": (0, 0, -1, 1), "%": (0, 0, 0, 0), "rad": (0, 0, 0, 0), "": (0, 0, 0, 0),
}
_NAMES: dict[tuple, str] = {}
for _name, _d in _BASE.items():
    _NAMES.setdefault(_d, _name)  # the first listed name wins ("V" before "V/s" …)
_NAMES[(0, 0, 0, 0)] = ""  # a plain number
Dims = tuple  # of four Fractions


def _dims(unit: str | None) -> Dims | None:
    if unit is None:
        return tuple(Fraction(0) for _ in range(4))
    base = _BASE.get(unit)
    return None if base is None else tuple(Fraction(x) for x in base)


def _of(expr: ex.Expression, known: Mapping[str, Dims | None]) -> Dims | None:
    if isinstance(expr, ex.Number):
        return _dims(expr.unit)
    if isinstance(expr, ex.Name):
        if expr.name in ex.CONSTANTS:
            return _dims("")
        return known.get(expr.name)
    if isinstance(expr, ex.Unary):
        return _of(expr.operand, known)
    if isinstance(expr, ex.Call):
        inner = _of(expr.argument, known)
        if expr.function == "sqrt":
            return None if inner is None else tuple(x / 2 for x in inner)
        if expr.function == "abs":
            return inner
        return _dims("")  # exp, log: of a plain number, giving a plain number
    if isinstance(expr, ex.Binary):
        left, right = _of(expr.left, known), _of(expr.right, known)
        if expr.op in "+-":
            return left if left == right else None
        if expr.op == "^":
            if left is None or not isinstance(expr.right, ex.Number) or expr.right.unit:
                return None
            power = Fraction(expr.right.value).limit_denominator(12)
            return tuple(x * power for x in left)
        if left is None or right is None:
            return None
        sign = 1 if expr.op == "*" else -1
        return tuple(a + sign * b for a, b in zip(left, right))
    return None


def expression_unit(definitions: Mapping[str, ex.Expression], order: list[str]) -> dict[str, str | None]:
    """Unit of each parameter (canonical word, "" for a plain number, None when not one of ours).

    Parameters
    ----------
    definitions : parameter name → its (possibly overridden) expression.
    order : the names in an order where each comes after the ones it uses.
    """
    known: dict[str, Dims | None] = {}
    out: dict[str, str | None] = {}
    for name in order:
        dims = _of(definitions[name], known)
        known[name] = dims
        out[name] = None if dims is None else _NAMES.get(dims)
    return out
