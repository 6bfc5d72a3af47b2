"""Values of a netlist build: parameters, expressions, units and tolerances resolved to SI floats.

:class:`ValueResolver` is the part of the netlist builder (see :mod:`.build`)
that reads written values.  Parameters may be defined in any order and
reference each other; cycles are reported.  ``--set`` overrides replace a
parameter's definition.  Each value is checked against the unit it must have,
sums of different units are refused, and a tolerance becomes a
:class:`~circuitode.model.circuit.Spread`; every element field that depends on
a toleranced (or varied) value gets a *recipe*, its expression rewritten over
spread names only, so a batch can recompute it from sampled parameters.  It
reads and fills the tables that :class:`.build._Builder` sets up.
"""
from __future__ import annotations

import math

from .. import model as cm
from ..errors import NetlistError, Where
from . import expressions as ex
from .expressions import did_you_mean
from ..quantities import check_unit, parse_quantity, unit_phrase
from .syntax import ParamStmt, Valued

__all__ = ["ValueResolver"]


def _located(err: NetlistError, where: Where | None) -> NetlistError:
    return err if err.where is not None else NetlistError(err.message, where, err.hint)


class ValueResolver:
    """Parameters and written values of one build (a mixin of the builder, whose
    ``__init__`` sets the tables used here: statements, overrides, varied, params,
    definitions, param_units, values, parameters, spreads, recipes)."""

    # -- parameters --------------------------------------------------------
    def collect_params(self) -> None:
        for st in self.statements:
            if isinstance(st, ParamStmt):
                if st.name in self.params:
                    raise NetlistError(f"parameter '{st.name}' is defined twice", st.where,
                                       f"the first definition is at {self.params[st.name].where}")
                if st.name in ex.CONSTANTS:
                    raise NetlistError(f"'{st.name}' is a built-in constant and cannot be redefined", st.where,
                                       "choose another name")
                self.params[st.name] = st
                self.definitions[st.name] = st.value.expr
        for name, given in self.overrides.items():
            if name not in self.params:
                raise NetlistError(f"cannot set '{name}': there is no parameter of that name",
                                   hint=did_you_mean(name, self.params) or "this netlist defines no parameters")
            st = self.params[name]
            unit = self._unit_of(st.value.expr)
            what = f"the value given for '{name}'"
            if isinstance(given, str):
                value = parse_quantity(given, unit if unit is not None else None, what)
            else:
                value = float(given)
            if not math.isfinite(value):
                raise NetlistError(f"{what} is not a finite number", hint="give a finite number")
            self.definitions[name] = ex.Number(value, unit, st.value.where)
        for name in ex.evaluation_order(self.definitions):
            st = self.params[name]
            self.check_sums(self.definitions[name])
            self.param_units[name] = self._unit_of(self.definitions[name])
            value = self._number(self.definitions[name], st.value.where, f"parameter '{name}'")
            self.values[name] = value
            self.parameters[name] = value
            if st.value.tolerance is not None:
                self._add_spread(name, value, st.value)

    def _unit_of(self, expr: ex.Expression) -> str | None:
        """The unit written (directly or through a parameter) for a simple value, else None."""
        if isinstance(expr, ex.Number):
            return expr.unit
        if isinstance(expr, ex.Unary):
            return self._unit_of(expr.operand)
        if isinstance(expr, ex.Name):
            if expr.name in self.param_units:
                return self.param_units[expr.name]
            if expr.name in self.definitions and expr.name not in self._visiting:
                self._visiting.add(expr.name)
                try:
                    return self._unit_of(self.definitions[expr.name])
                finally:
                    self._visiting.discard(expr.name)
            return None
        if isinstance(expr, ex.Binary) and expr.op in "+-":
            left, right = self._unit_of(expr.left), self._unit_of(expr.right)
            return left if left == right else None
        return None

    def check_sums(self, expr: ex.Expression) -> None:
        """Refuse a sum or difference of two quantities written in different units (3 V + 2 A)."""
        if isinstance(expr, ex.Binary):
            if expr.op in "+-":
                left, right = self._unit_of(expr.left), self._unit_of(expr.right)
                if left is not None and right is not None and left != right:
                    verb = "add" if expr.op == "+" else "subtract"
                    raise NetlistError(f"cannot {verb} {unit_phrase(left)} and {unit_phrase(right)}", expr.where,
                                       "write both terms in the same unit")
            self.check_sums(expr.left)
            self.check_sums(expr.right)
        elif isinstance(expr, (ex.Unary, ex.Call)):
            self.check_sums(expr.operand if isinstance(expr, ex.Unary) else expr.argument)

    def _number(self, expr: ex.Expression, where: Where, what: str) -> float:
        try:
            value = expr.evaluate(self.values)
        except NetlistError as err:
            raise _located(err, where) from None
        value = float(value)
        if not math.isfinite(value):
            raise NetlistError(f"{what} does not evaluate to a finite number", where,
                               "check for a division by zero or the logarithm or root of a negative number")
        return value

    def _add_spread(self, name: str, nominal: float, valued: Valued) -> None:
        tol = valued.tolerance
        self.spreads[name] = cm.Spread(name, nominal, tol.relative, tol.distribution, tol.where)

    def expanded(self, expr: ex.Expression) -> ex.Expression:
        """``expr`` rewritten over spread names only (other parameters folded into numbers)."""

        def swap(node: ex.Name) -> ex.Expression | None:
            name = node.name
            if name in self.spreads or name in self.varied or name not in self.definitions:
                return None
            if name not in self._expanded:
                inner = self.expanded(self.definitions[name])
                self._expanded[name] = inner if inner.names else ex.Number(self.values[name], None, node.where)
            return self._expanded[name]

        tree = ex.substitute(expr, swap)
        return tree if tree.names else ex.Number(self._number(expr, None, "the value"), None)

    # -- values ------------------------------------------------------------
    def value(self, valued: Valued, unit: str | None, what: str, owner: str | None = None,
              field: str | None = None, need_unit: bool = False, label: str | None = None) -> float:
        """SI value of a written value, unit-checked; records spreads and recipes for ``owner.field``.

        A tolerance written on it becomes the spread ``owner.label`` (``label`` is the written field
        path, e.g. "waveform.top", default ``field``), the name a user gives to --tol."""
        self.check_sums(valued.expr)
        found = self._unit_of(valued.expr)
        try:
            check_unit(found, unit, what)
        except NetlistError as err:
            raise _located(err, valued.where) from None
        if need_unit and found is None:
            example = "90 deg" if unit == "rad" else "40 %"
            raise NetlistError(f"{what} needs its unit", valued.where, f"write it in {unit_phrase(unit)}, e.g. {example}")
        number = self._number(valued.expr, valued.where, what)
        if valued.tolerance is not None:
            if owner is None:
                raise NetlistError(f"{what} cannot carry a tolerance", valued.tolerance.where,
                                   "put tolerances on element values or on parameters")
            spread_names = sorted(n for n in self.expanded(valued.expr).names)
            if spread_names:
                raise NetlistError(
                    f"this value already depends on the toleranced parameter '{spread_names[0]}'",
                    valued.tolerance.where, f"put the tolerance on parameter '{spread_names[0]}' instead")
            main = field in ("resistance", "capacitance", "inductance")
            name = owner if main else f"{owner}.{label or field}"
            if name in self.params or name in self.spreads:
                raise NetlistError(f"the tolerance of '{name}' would clash with the parameter of that name",
                                   valued.tolerance.where, "rename the element or the parameter")
            self.parameters[name] = number
            self._add_spread(name, number, valued)
            recipe: ex.Expression = ex.Name(name, valued.where)
        else:
            recipe = self.expanded(valued.expr) if owner is not None else ex.Number(number)
        if owner is not None and recipe.names:
            self.recipes[(owner, field)] = recipe
        return number
