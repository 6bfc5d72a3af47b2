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

from pathlib import Path
from typing import Any, Mapping

from .. import model as cm
from ..errors import NetlistError, Where
from ..model.run_settings import check_windows
from ..gc_pause import collector_paused
from . import expressions as ex
from .build_elements import ElementStatements
from .expressions import did_you_mean
from .dimensions import expression_unit
from .syntax import (
    CouplingStmt, ElementStmt, GroundStmt, ParamStmt, ProbeSpec, RecordStmt, RequireStmt, SourceStmt, SwitchStmt, DiodeStmt,
    ThresholdSpec, TitleStmt, TransientStmt,
)
from .vocabulary import FIGURE_WORDS, METHOD_NAMES, WAVEFORM_FIELDS

__all__ = ["build_circuit", "METHOD_NAMES", "FIGURE_WORDS", "WAVEFORM_FIELDS"]


class _Builder(ElementStatements):
    """Holds the tables of one build; one method per statement kind (values in
    :mod:`.build_values`, elements in :mod:`.build_elements`; the transient,
    record and require statements and the final cross-checks here)."""

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

    # -- statements --------------------------------------------------------
    def on_title(self, st: TitleStmt) -> None:
        if self.title is not None:
            raise NetlistError("the circuit is named twice", st.where, "keep one 'circuit' statement")
        self.title = st.title

    def on_ground(self, st: GroundStmt) -> None:
        if self.ground is not None:
            raise NetlistError("the ground node is declared twice", st.where,
                               f"keep one 'ground' statement (the first is at {self.ground.where})")
        self.ground = st

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
        start = stop = None
        if st.window is not None:
            start, stop = (None if v is None else self.value(v, "s", "a window instant")
                           for v in (st.window.start, st.window.stop))
        where = st.where if st.window is None else st.window.where  # a window's mistakes point at it
        self.requirements.append(cm.Requirement(figure, probe, st.comparison, limit, where=where,
                                                start=start, stop=stop))

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
        self.resolve_angles()
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
        if self.analysis is not None:  # windows inside the run (checked again when a run overrides 'until')
            check_windows(self.requirements, self.analysis.until)
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


@collector_paused
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
