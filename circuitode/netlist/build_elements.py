"""Elements of a netlist build: resistors, capacitors, inductors, couplings, sources, switches, diodes.

:class:`ElementStatements` is the part of the netlist builder (see
:mod:`.build`) with one method per element statement.  Each declares its name
once, reads its values through :class:`.build_values.ValueResolver` (units
checked, spreads and recipes recorded under the field's name), and appends a
:mod:`~circuitode.model.circuit` element.  Source waveforms are resolved field
by field against the vocabulary's tables; switch controls become timed or
periodic schedules, threshold rules or hysteresis rules.
"""
from __future__ import annotations

import dataclasses
import math
from typing import Any

from .. import model as cm
from .. import model as src
from ..errors import NetlistError, Where
from .build_values import ValueResolver
from .pulses import pulse_times
from .syntax import AngleSpec, CouplingStmt, DiodeStmt, ElementStmt, SourceStmt, SwitchStmt, TimedSpec, ToggleSpec
from .vocabulary import ELEMENT_UNITS, TOGGLE_FIELDS, WAVEFORM_CLASSES, WAVEFORM_FIELDS, WAVEFORM_WORDS, word_hint

__all__ = ["ElementStatements"]


class ElementStatements(ValueResolver):
    """One method per element statement (a mixin of the builder, which sets up
    ``declared`` and ``elements`` and provides ``probe`` for switch rules)."""

    def declare(self, name: str, where: Where) -> None:
        if name in self.declared:
            raise NetlistError(f"the name '{name}' is already used by another element", where,
                               f"the first one is at {self.declared[name]}; give this one another name")
        self.declared[name] = where

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
                t = self.value(valued, "s", "a switching time", st.name, f"control.changes.{i}",
                               label="at" if len(c.moves) == 1 else None)
                if closes == closed:
                    raise NetlistError(f"the switch is already {'closed' if closed else 'open'} here", where,
                                       "alternate 'closes at' and 'opens at'")
                if not t > last:
                    raise NetlistError("switching times must increase from move to move", valued.where,
                                       f"this move ({t:g} s) is not after the one before ({last:g} s)")
                changes.append((t, closes))
                closed, last = closes, t
            control = cm.TimedSchedule(initially_closed=not c.moves[0][0], changes=tuple(changes))
        elif isinstance(c, AngleSpec):
            angle = self.value(c.angle, "rad", "a closing angle", st.name, "control.angle", need_unit=True,
                               label="angle")
            earliest = self.value(c.earliest, "s", "the earliest instant") if c.earliest is not None else 0.0
            # placed once the sources are known (see resolve_angles); the move is kept for now
            control = cm.AngleSchedule(not c.closes, ((earliest, c.closes),), c.source, angle, earliest)
            self.pending_angles = getattr(self, "pending_angles", []) + [(len(self.elements), c)]
        elif isinstance(c, ToggleSpec):
            self._where = c.where
            kw = self.fields(c.fields, TOGGLE_FIELDS, st.name, "control.", "a toggling switch")
            if not 0.0 < kw["duty"] < 1.0:
                field = next(f for f in c.fields if f.name == "duty")
                raise NetlistError("the duty must lie strictly between 0 % and 100 %", field.value.where,
                                   "write e.g. 'duty 40 %'")
            if not (kw["period"] > 0.0 and math.isfinite(kw["period"])):  # else no toggle instants end
                field = next(f for f in c.fields if f.name == "every")
                raise NetlistError(f"a toggling period must be positive (got {kw['period']:g} s)",
                                   field.value.where, "write e.g. 'toggles every 20 us duty 40 %'")
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

    def resolve_angles(self) -> None:
        """Place each ``closes on angle … of SOURCE`` switch: its source must be a sine source."""
        for index, spec in getattr(self, "pending_angles", []):
            switch = self.elements[index]
            source = next((e for e in self.elements if e.name == spec.source), None)
            wave = getattr(source, "waveform", None)
            if not isinstance(source, (cm.VoltageSource, cm.CurrentSource)) or not isinstance(wave, src.Sine):
                sines = [e.name for e in self.elements if isinstance(getattr(e, "waveform", None), src.Sine)]
                what = "no element" if source is None else f"not a sine source"
                raise NetlistError(
                    f"switch '{switch.name}' closes on an angle of '{spec.source}', which is {what}", spec.source_where,
                    f"name a sine source: {', '.join(sines)}" if sines else
                    "declare a 'sine' source and name it here")
            if not wave.frequency > 0.0:
                raise NetlistError(
                    f"switch '{switch.name}' closes on an angle of '{spec.source}', whose frequency is "
                    f"{wave.frequency:g} Hz: its phase never comes round", spec.source_where,
                    f"give '{spec.source}' a positive frequency")
            for field in ("frequency", "phase", "delay"):
                if (spec.source, f"waveform.{field}") in self.recipes:
                    raise NetlistError(
                        f"the {field} of '{spec.source}' carries a tolerance, but switch '{switch.name}' is "
                        "placed on its angle", spec.source_where, f"fix the {field} of '{spec.source}'")
            c = switch.control
            placed = cm.AngleSchedule.make(c.changes[0][1], spec.source, c.angle, c.earliest, wave.frequency,
                                           wave.phase, wave.delay)
            self.elements[index] = dataclasses.replace(switch, control=placed)

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
