"""Syntax tree → :class:`~circuitode.model.circuit.Circuit`: values resolved to SI floats, units and names checked.

Parameters may be defined in any order and reference each other; cycles are
reported.  Each element value is checked against its element's unit.  Every
probe, coupling and requirement must name an element or node that exists.
Tolerances become :class:`~circuitode.model.run_settings.Spread` objects, and every element
field that depends on a toleranced value gets a *recipe*: its expression
rewritten in terms of spread names only, so a batch can recompute it from
sampled parameters (floats or numpy arrays alike).
"""
from __future__ import annotations

import math
from pathlib import Path
from typing import Any, Mapping

from .. import model as cm
from .. import model as src
from ..errors import NetlistError, Where
from . import expressions as ex
from .expressions import did_you_mean
from .dimensions import expression_unit
from .pulses import pulse_times
from ..quantities import check_unit, parse_quantity, unit_phrase
from .syntax import (
    CouplingStmt, ElementStmt, GroundStmt, ParamStmt, ProbeSpec, RecordStmt, RequireStmt, SourceStmt, SwitchStmt, DiodeStmt,
    ThresholdSpec, TimedSpec, TitleStmt, ToggleSpec, TransientStmt, Valued,
)
from .vocabulary import (
    ELEMENT_UNITS, FIGURE_WORDS, METHOD_NAMES, TOGGLE_FIELDS, WAVEFORM_CLASSES, WAVEFORM_FIELDS, WAVEFORM_WORDS,
    word_hint,
)

__all__ = ["build_circuit", "METHOD_NAMES", "FIGURE_WORDS", "WAVEFORM_FIELDS"]


def _located(err: NetlistError, where: Where | None) -> NetlistError:
    return err if err.where is not None else NetlistError(err.message, where, err.hint)


class _Builder:
    """Holds the tables of one build; one method per statement kind."""

    def __init__(self, statements: list, overrides: Mapping[str, Any] | None, source_file: str | None,
                 varied: frozenset[str] = frozenset()):
        self.statements = statements
        self.overrides = dict(overrides or {})
        self.varied = frozenset(varied)  # parameters kept by name in recipes, as if they had a spread
        self.source_file = source_file
        self.title: str | None = None
        self.ground: GroundStmt | None = None
        self.params: dict[str, ParamStmt] = {}
        self.definitions: dict[str, ex.Expression] = {}
        self.param_units: dict[str, str | None] = {}
        self.values: dict[str, float] = {}  # every parameter's nominal SI value
        self.parameters: dict[str, float] = {}
        self.spreads: dict[str, cm.Spread] = {}
        self.recipes: dict[tuple[str, str], ex.Expression] = {}
        self._expanded: dict[str, ex.Expression] = {}
        self.elements: list = []
        self.couplings: list[tuple[cm.Coupling, CouplingStmt]] = []
        self.declared: dict[str, Where] = {}
        self.analysis: cm.Analysis | None = None
        self.records: list[cm.Probe] = []
        self.requirements: list[cm.Requirement] = []
        self._visiting: set[str] = set()  # parameters whose unit is being looked up (guards cycles)
        self._where: Where | None = None  # the statement being built, for "missing field" errors

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
            raise NetlistError(f"{what} needs its unit", valued.where, f"write it in {unit_phrase(unit)}, e.g. 40 %")
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

    # -- statements --------------------------------------------------------
    def declare(self, name: str, where: Where) -> None:
        if name in self.declared:
            raise NetlistError(f"the name '{name}' is already used by another element", where,
                               f"the first one is at {self.declared[name]}; give this one another name")
        self.declared[name] = where

    def on_title(self, st: TitleStmt) -> None:
        if self.title is not None:
            raise NetlistError("the circuit is named twice", st.where, "keep one 'circuit' statement")
        self.title = st.title

    def on_ground(self, st: GroundStmt) -> None:
        if self.ground is not None:
            raise NetlistError("the ground node is declared twice", st.where,
                               f"keep one 'ground' statement (the first is at {self.ground.where})")
        self.ground = st

    def on_element(self, st: ElementStmt) -> None:
        self.declare(st.name, st.where)
        unit, field, what, initial = ELEMENT_UNITS[st.kind]
        value = self.value(st.value, unit, what, st.name, field)
        kwargs: dict[str, Any] = {field: value}
        if st.initial is not None:
            if initial is None:
                raise NetlistError("a resistor has no initial value", st.initial.where,
                                   "initial values belong to capacitors (V) and inductors (A)")
            i_unit, i_field, i_what = initial
            kwargs[i_field] = self.value(st.initial, i_unit, i_what, st.name, i_field)
        cls = {"resistor": cm.Resistor, "capacitor": cm.Capacitor, "inductor": cm.Inductor}[st.kind]
        self.elements.append(cls(st.name, st.first, st.second, where=st.where, **kwargs))

    def on_coupling(self, st: CouplingStmt) -> None:
        self.declare(st.name, st.where)
        k = self.value(st.k, "", "a coupling factor k", st.name, "k")
        self.couplings.append((cm.Coupling(st.name, st.first, st.second, k, where=st.where), st))

    def on_source(self, st: SourceStmt) -> None:
        self.declare(st.name, st.where)
        signal = "V" if st.kind == "voltage_source" else "A"
        wave = self.waveform(st, signal)
        cls = cm.VoltageSource if st.kind == "voltage_source" else cm.CurrentSource
        self.elements.append(cls(st.name, st.first, st.second, wave, where=st.where))

    def fields(self, fields, table: dict, owner: str, prefix: str, kind_words: str, signal: str = "") -> dict:
        """Resolve named fields against ``table`` (see WAVEFORM_FIELDS); returns dataclass kwargs."""
        given: dict[str, Any] = {}
        out: dict[str, Any] = {}
        for f in fields:
            if f.name not in table:
                raise NetlistError(f"{kind_words} has no field '{f.name}'", f.where,
                                   word_hint(f.name, table) or f"its fields are {', '.join(table)}")
            if f.name in given:
                raise NetlistError(f"the field '{f.name}' is given twice", f.where, "keep one")
            given[f.name] = f
        for word, (attr, role, default) in table.items():
            if word not in given:
                if default is None:
                    raise NetlistError(f"{kind_words} needs the field '{word}'", self._where,
                                       f"add '{word} …' to the statement")
                out[attr] = None if default == math.inf or math.isnan(default) else default
                continue
            f = given[word]
            unit = {"signal": signal, "count": ""}.get(role, role)
            what = f"the field '{word}'"
            value = self.value(f.value, unit, what, owner, f"{prefix}{attr}", need_unit=(role == "%"),
                               label=f"{prefix}{word}")
            if role == "count":
                if value != int(value) or value < 1:
                    raise NetlistError(f"the number of pulses must be a whole number of at least 1; got {value:g}",
                                       f.value.where, f"write e.g. '{word} 5', or leave it out for endless pulses")
                value = int(value)
            out[attr] = value
        return out

    def waveform(self, st: SourceStmt, signal: str) -> src.Waveform:
        spec = st.waveform
        self._where = spec.where
        if spec.kind == "constant":
            value = self.value(spec.fields[0].value, signal, "a constant value", st.name, "waveform.value")
            return src.Dc(value)
        if spec.kind == "points":
            times, values = [], []
            for t, v in spec.points:
                for valued, tag in ((t, "time"), (v, "value")):
                    if self.expanded(valued.expr).names or valued.tolerance is not None:
                        raise NetlistError("piecewise-linear points cannot depend on a toleranced value",
                                           valued.where, "use plain numbers or parameters without a tolerance")
                times.append(self.value(t, "s", "a piecewise-linear time"))
                values.append(self.value(v, signal, "a piecewise-linear value"))
            for i in range(1, len(times)):
                if not times[i] > times[i - 1]:
                    raise NetlistError("piecewise-linear times must increase from point to point",
                                       spec.points[i][0].where,
                                       f"this time ({times[i]:g} s) is not after the one before ({times[i - 1]:g} s)")
            return src.PiecewiseLinear(tuple(times), tuple(values))
        if spec.kind not in WAVEFORM_FIELDS:
            raise NetlistError(f"unknown waveform '{spec.kind}'", spec.where, word_hint(spec.kind, WAVEFORM_WORDS))
        kwargs = self.fields(spec.fields, WAVEFORM_FIELDS[spec.kind], st.name, "waveform.",
                             f"a {spec.kind} waveform", signal)
        if spec.kind == "pulses":
            kwargs = pulse_times(kwargs, {f.name: f for f in spec.fields}, spec.where)
        try:
            return WAVEFORM_CLASSES[spec.kind](**kwargs)
        except src.WaveformError as err:  # a field out of range: say where
            raise NetlistError(str(err), spec.where, f"see the {spec.kind} waveform in docs/language.md") from None

    def on_switch(self, st: SwitchStmt) -> None:
        self.declare(st.name, st.where)
        c = st.control
        control: Any
        if isinstance(c, TimedSpec):
            changes = []
            closed = not c.moves[0][0]
            last = -math.inf
            for i, (closes, valued, where) in enumerate(c.moves):
                t = self.value(valued, "s", "a switching time", st.name, f"control.changes.{i}")
                if closes == closed:
                    raise NetlistError(f"the switch is already {'closed' if closed else 'open'} here", where,
                                       "alternate 'closes at' and 'opens at'")
                if not t > last:
                    raise NetlistError("switching times must increase from move to move", valued.where,
                                       f"this move ({t:g} s) is not after the one before ({last:g} s)")
                changes.append((t, closes))
                closed, last = closes, t
            control = cm.TimedSchedule(initially_closed=not c.moves[0][0], changes=tuple(changes))
        elif isinstance(c, ToggleSpec):
            self._where = c.where
            kw = self.fields(c.fields, TOGGLE_FIELDS, st.name, "control.", "a toggling switch")
            if not 0.0 < kw["duty"] < 1.0:
                field = next(f for f in c.fields if f.name == "duty")
                raise NetlistError("the duty must lie strictly between 0 % and 100 %", field.value.where,
                                   "write e.g. 'duty 40 %'")
            control = cm.PeriodicSchedule(kw["period"], kw["duty"], kw["start"])
        else:
            probe = self.probe(c.probe, "a switch rule")
            if isinstance(probe, cm.PowerIn):
                raise NetlistError("a switch cannot watch a power", c.probe.where,
                                   "watch a voltage or a current instead")
            level = self.value(c.level, probe.unit, "the switching level", st.name, "control.level")
            control = cm.ThresholdRule(c.closes, probe, c.comparison.startswith(">"), level)
            if c.back is not None:
                control = self.hysteresis(st, control, c.back)
        on = self.value(st.on, "Ω", "an on-resistance", st.name, "on_resistance") if st.on else None
        off = self.value(st.off, "Ω", "an off-resistance", st.name, "off_resistance") if st.off else None
        self.elements.append(cm.Switch(st.name, st.first, st.second, control, on, off, where=st.where))

    def hysteresis(self, st: SwitchStmt, first: cm.ThresholdRule, back) -> cm.HysteresisRule:
        """The second clause of ``closes when …, opens when …``: the opposite move, on the
        same quantity, with levels that cannot both hold at once."""
        if back.closes == first.closes:
            word = "closes" if first.closes else "opens"
            raise NetlistError(f"both clauses of switch '{st.name}' say '{word}'", back.where,
                               "the second clause must move the switch back: 'closes when …, opens when …'")
        probe = self.probe(back.probe, "a switch rule")
        if probe != first.probe:
            raise NetlistError(f"the two clauses of switch '{st.name}' watch different quantities", back.where,
                               f"watch {first.probe.label} in both clauses")
        above = back.comparison.startswith(">")
        level = self.value(back.level, probe.unit, "the switching level", st.name, "control.back_level")
        if above == first.above or (level > first.level if first.above else level < first.level):
            raise NetlistError(
                f"the clauses of switch '{st.name}' overlap: both conditions can hold at once, so it "
                "would switch back and forth without end", back.where,
                f"use the opposite comparison and a level on the other side of {first.level:g}, e.g. "
                f"'{'closes' if back.closes else 'opens'} when {probe.label} {'<' if first.above else '>'} …'")
        return cm.HysteresisRule(first.closes, first.probe, first.above, first.level, above, level)

    def on_diode(self, st: DiodeStmt) -> None:
        self.declare(st.name, st.where)
        drop = self.value(st.drop, "V", "a forward drop", st.name, "drop") if st.drop else 0.0
        if not drop >= 0.0:
            raise NetlistError("a diode's forward drop cannot be negative", st.drop.where,
                               "write e.g. 'drop 0.8 V' (or leave it out for 0 V)")
        on = self.value(st.on, "Ω", "an on-resistance", st.name, "on_resistance") if st.on else None
        off = self.value(st.off, "Ω", "an off-resistance", st.name, "off_resistance") if st.off else None
        self.elements.append(cm.Diode(st.name, st.first, st.second, on_resistance=on, off_resistance=off,
                                      drop=drop, where=st.where))

    def on_transient(self, st: TransientStmt) -> None:
        if self.analysis is not None:
            raise NetlistError("a second 'transient' statement", st.where, "keep one; it sets the whole window")
        seen: dict[str, Where] = {}
        kw: dict[str, Any] = {}
        for word, value, where in st.settings:
            if word in seen:
                raise NetlistError(f"'{word}' is given twice", where, "keep one")
            seen[word] = where
            if word in ("until", "step"):
                kw[word] = self.value(value, "s", f"the transient's '{word}' time")
                if kw[word] <= 0:
                    raise NetlistError(f"the '{word}' time must be positive", value.where, "write e.g. 10 ms")
            elif word == "points":
                n = self.value(value, "", "the number of points")
                if n != int(n) or n < 2:
                    raise NetlistError("the number of points must be a whole number of at least 2", value.where,
                                       "write e.g. 'points 2000'")
                kw["points"] = int(n)
            elif word == "method":
                if value not in METHOD_NAMES:
                    raise NetlistError(f"unknown method '{value}'", where, did_you_mean(value, METHOD_NAMES))
                kw["method"] = value
            else:
                if value not in cm.INITIAL_STATES:
                    raise NetlistError(f"unknown initial state '{value}'", where,
                                       did_you_mean(value, cm.INITIAL_STATES))
                kw["initial"] = value
        if "until" not in kw:
            raise NetlistError("the transient needs its end time", st.where, "add 'until …', e.g. 'until 20 ms'")
        if "step" in kw and "points" in kw:
            raise NetlistError("give either 'step' or 'points', not both", seen["points"],
                               "the step sets the number of points")
        self.analysis = cm.Analysis(where=st.where, **kw)

    def on_record(self, st: RecordStmt) -> None:
        for spec in st.probes:
            probe = self.probe(spec, "a record")
            if probe not in self.records:
                self.records.append(probe)

    def on_require(self, st: RequireStmt) -> None:
        figure = FIGURE_WORDS[st.figure]
        probe = self.probe(st.probe, "a requirement")
        base = probe.unit
        what = f"the limit of the {st.figure}"
        need = False
        if figure in ("overshoot", "undershoot"):
            unit, need = "%", True
        elif figure in ("rise_time", "settling_time"):
            unit = "s"
        elif figure == "i2t":
            if not isinstance(probe, cm.CurrentThrough):
                raise NetlistError("i2t is taken of a current", st.probe.where, "write 'i2t current through …'")
            unit = "A²s"
        elif figure == "energy":
            unit = "J"
        elif figure == "max_slope":
            if base == "W":
                raise NetlistError("a max slope is taken of a voltage or a current", st.probe.where,
                                   "write 'max slope voltage at …' or 'max slope current through …'")
            unit = f"{base}/s"
        elif figure == "damping_ratio":
            unit = ""
        elif figure == "damped_frequency":
            unit = "Hz"
        else:
            unit = base
        limit = self.value(st.limit, unit, what, need_unit=need)
        if unit == "%":
            limit *= 100.0  # Requirement limits of percentage figures are stored in percent
        self.requirements.append(cm.Requirement(figure, probe, st.comparison, limit, where=st.where))

    # -- references ----------------------------------------------------------
    def probe(self, spec: ProbeSpec, context: str) -> cm.Probe:
        kind, names = spec.kind, spec.names
        if kind == "at":
            return cm.NodeVoltage(names[0])
        if kind == "between":
            return cm.VoltageBetween(names[0], names[1])
        if kind == "across":
            return cm.VoltageAcross(names[0])
        if kind == "through":
            return cm.CurrentThrough(names[0])
        return cm.PowerIn(names[0])

    def check_references(self, nodes: set[str], two_terminal: dict[str, Any], probes: list) -> None:
        for spec in probes:
            if spec.kind in ("at", "between"):
                for name, where in zip(spec.names, spec.wheres):
                    if name not in nodes:
                        raise NetlistError(f"there is no node '{name}'", where, did_you_mean(name, nodes))
            else:
                name, where = spec.names[0], spec.wheres[0]
                if name not in two_terminal:
                    if any(c.name == name for c, _ in self.couplings):
                        raise NetlistError(f"'{name}' is a coupling, which has no voltage or current of its own",
                                           where, "name one of the coupled inductors")
                    raise NetlistError(f"there is no element '{name}'", where, did_you_mean(name, two_terminal))

    def run(self) -> cm.Circuit:
        self.collect_params()
        probes: list[ProbeSpec] = []
        handlers = {TitleStmt: self.on_title, GroundStmt: self.on_ground, ElementStmt: self.on_element,
                    CouplingStmt: self.on_coupling, SourceStmt: self.on_source, SwitchStmt: self.on_switch,
                    DiodeStmt: self.on_diode,
                    TransientStmt: self.on_transient, RecordStmt: self.on_record, RequireStmt: self.on_require}
        for st in self.statements:
            if isinstance(st, ParamStmt):
                continue
            handlers[type(st)](st)
            if isinstance(st, RecordStmt):
                probes.extend(st.probes)
            elif isinstance(st, RequireStmt):
                probes.append(st.probe)
            elif isinstance(st, SwitchStmt) and isinstance(st.control, ThresholdSpec):
                probes.append(st.control.probe)
        two_terminal = {e.name: e for e in self.elements}
        nodes = {n for e in self.elements for n in (e.first, e.second)}
        if self.ground is not None:
            if self.ground.node not in nodes and self.elements:
                raise NetlistError(f"the ground node '{self.ground.node}' is not connected to any element",
                                   self.ground.where, did_you_mean(self.ground.node, nodes))
            nodes.add(self.ground.node)
        self.check_references(nodes, two_terminal, probes)
        for coupling, st in self.couplings:
            for name, where in zip((st.first, st.second), st.wheres):
                element = two_terminal.get(name)
                if not isinstance(element, cm.Inductor):
                    what = "no element" if element is None else f"a {type(element).__name__.lower()}"
                    inductors = [e.name for e in self.elements if isinstance(e, cm.Inductor)]
                    raise NetlistError(f"a coupling joins two inductors; '{name}' is {what}", where,
                                       did_you_mean(name, inductors) or "declare the inductors first")
            if st.first == st.second:
                raise NetlistError("a coupling joins two different inductors", st.wheres[1],
                                   "name the second inductor")
        title = self.title or (Path(self.source_file).stem if self.source_file else "circuit")
        return cm.Circuit(
            title=title,
            ground=self.ground.node if self.ground else None,
            elements=tuple(self.elements),
            couplings=tuple(c for c, _ in self.couplings),
            analysis=self.analysis,
            records=tuple(self.records),
            requirements=tuple(self.requirements),
            parameters=dict(self.parameters),
            spreads=dict(self.spreads),
            recipes=dict(self.recipes),
            source_file=self.source_file,
            parameter_units=expression_unit(self.definitions, ex.evaluation_order(self.definitions)),
        )


def build_circuit(statements: list, overrides: Mapping[str, Any] | None = None,
                  source_file: str | None = None, varied=()) -> cm.Circuit:
    """Build a Circuit from statements whose includes are already expanded.

    Parameters
    ----------
    statements : syntax-tree statements (see :mod:`.parse`), in file order.
    overrides : parameter name → new value (a quantity string such as ``"47 Ω"``, or an SI float).
    source_file : the top file's name, kept on the Circuit.
    varied : parameter names that a sweep or sizing will vary: every element value depending
        on one gets a recipe over it, as if it had a tolerance (it gets no spread).

    Raises
    ------
    NetlistError : located at the offending statement, with what to change.
    """
    try:
        return _Builder(statements, overrides, source_file, frozenset(varied)).run()
    except RecursionError:
        raise NetlistError("an expression is nested too deeply to evaluate",
                           hint="split it into several parameters") from None
