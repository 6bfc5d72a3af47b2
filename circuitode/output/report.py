"""What a run tells its user: printed tables (≤ 80 columns) and the files of a run folder.

No numerics here: every number arrives already computed (figures, limits,
modes) and is only formatted, through :func:`circuitode.quantities.format_si`.
Plots live in :mod:`circuitode.output.plots` (matplotlib is imported only there, and
only when a plot is drawn).
"""
from __future__ import annotations

import json
import math
import platform
from pathlib import Path
from typing import Any, Iterable, Mapping, Sequence

import numpy as np

from .. import __version__
from ..model import (
    Capacitor,
    Circuit,
    CurrentSource,
    Diode,
    Inductor,
    PeriodicSchedule,
    Resistor,
    Switch,
    ThresholdRule,
    TimedSchedule, AngleSchedule,
    VoltageSource,
)
from ..analysis.idle_switches import idle_switches
from ..analysis.measure import figure_unit
from ..analysis.resolution import resolution_warnings
from ..quantities import format_si, format_value
from .mode_table import heading_lines, modes_text  # noqa: F401 - the modes table lives in its own module

__all__ = [
    "SAFETY_LINE",
    "caution_text",
    "parameter_lines",
    "SAFETY_TEXT",
    "WIDTH",
    "check_text",
    "run_text",
    "modes_text",
    "limits_text",
    "requirement_words",
    "event_words",
    "idle_words",
    "unit_of_parameter",
    "write_summary_json",
    "describe_control",
    "describe_waveform",
    "json_ready",
]

WIDTH = 80

SAFETY_LINE = (
    "Caution: results do not replace measurement and qualified review; "
    "local codes govern."
)

SAFETY_TEXT = (
    "Simulation results do not replace measurement and qualified review. Surge "
    "currents, charged capacitors and high voltage can injure or kill: discharge "
    "and verify stored energy before touching, and follow the usual precautions "
    "for high-voltage work. Local electrical codes and licensed practice govern "
    "any real installation."
)

_ELEMENT_WORDS = {
    Resistor: "resistor",
    Capacitor: "capacitor",
    Inductor: "inductor",
    VoltageSource: "voltage source",
    CurrentSource: "current source",
    Switch: "switch",
    Diode: "diode",
}


# --------------------------------------------------------------------------
# Small formatting helpers
# --------------------------------------------------------------------------


def _fit(text: str, width: int) -> str:
    """Cut ``text`` to ``width`` characters, marking a cut with an ellipsis."""
    return text if len(text) <= width else text[: width - 1] + "…"


def _si(value: Any, unit: str, digits: int = 4) -> str:
    if value is None:
        return "—"
    v = float(value)
    if math.isnan(v):
        return "—"
    return format_si(v, unit, digits)


def _wrap(text: str, indent: str = "  ", width: int = WIDTH) -> list[str]:
    import textwrap

    return textwrap.wrap(text, width=width, initial_indent=indent, subsequent_indent=indent) or [indent]


def describe_waveform(waveform: Any, unit: str) -> str:
    """Words for a source waveform, values in engineering notation."""
    kind = type(waveform).__name__
    f = lambda v, u=unit: format_si(v, u)  # noqa: E731
    match kind:
        case "Dc":
            return f"constant {f(waveform.value)}"
        case "Step":
            return f"step from {f(waveform.before)} to {f(waveform.after)} at {f(waveform.at, 's')}"
        case "Ramp":
            return (
                f"ramp from {f(waveform.initial)} to {f(waveform.final)} starting "
                f"{f(waveform.start, 's')} over {f(waveform.duration, 's')}"
            )
        case "PulseTrain":
            count = "" if waveform.count is None else f", {waveform.count} repeats"
            edges = (f"edges {f(waveform.rise, 's')}" if waveform.rise == waveform.fall
                     else f"rising {f(waveform.rise, 's')}, falling {f(waveform.fall, 's')}")
            return (
                f"pulses base {f(waveform.low)} top {f(waveform.high)} every {f(waveform.period, 's')}, "
                f"hold {f(waveform.width, 's')}, {edges}, from {f(waveform.delay, 's')}{count}"
            )
        case "Sine":
            return (
                f"sine {f(waveform.amplitude)} at {f(waveform.frequency, 'Hz')}"
                + (f", phase {math.degrees(waveform.phase):.4g}°" if waveform.phase else "")
                + (f", offset {f(waveform.offset)}" if waveform.offset else "")
                + (f", from {f(waveform.delay, 's')}" if waveform.delay else "")
            )
        case "PiecewiseLinear":
            return f"piecewise-linear, {len(waveform.times)} points to {f(waveform.times[-1], 's')}"
        case "Exponential":
            return (
                f"exponential from {f(waveform.initial)} to {f(waveform.final)}, "
                f"τ {f(waveform.time_constant, 's')}"
            )
    return kind


def describe_control(switch: Switch) -> str:
    """Words for how a switch moves."""
    c = switch.control
    if isinstance(c, TimedSchedule):
        moves = ", ".join(f"{'closes' if s else 'opens'} at {format_si(t, 's')}" for t, s in c.changes) + (
            f" (angle {format_value(c.angle, 'rad')} of {c.source})" if isinstance(c, AngleSchedule) else "")
        start = "closed" if c.initially_closed else "open"
        return f"starts {start}" + (f"; {moves}" if moves else "")
    if isinstance(c, PeriodicSchedule):
        return (f"toggles every {format_si(c.period, 's')}, closed {c.duty * 100:g} % of each "
                f"period from {format_si(c.start, 's')}")
    if isinstance(switch, Diode):
        drop = format_si(switch.drop, "V")
        return (f"diode, drop {drop}: conducts when its voltage exceeds {drop}, blocks when its "
                "current falls to 0 A")
    if isinstance(c, ThresholdRule):
        clauses = [c.move(not c.closes)] + ([c.move(c.closes)] if c.repeats else [])
        words = ", ".join(f"{'closes' if r.closes else 'opens'} when {r.probe.label} {'>' if r.above else '<'} "
                          f"{format_si(r.level, r.probe.unit)}" for r in clauses)
        return words + (" (each time)" if c.repeats else "")
    return str(c)


def _value_words(e: Any) -> str:
    if isinstance(e, Resistor):
        return format_si(e.resistance, "Ω")
    if isinstance(e, Capacitor):
        init = "" if e.initial_voltage is None else f", initial {format_si(e.initial_voltage, 'V')}"
        return format_si(e.capacitance, "F") + init
    if isinstance(e, Inductor):
        init = "" if e.initial_current is None else f", initial {format_si(e.initial_current, 'A')}"
        return format_si(e.inductance, "H") + init
    if isinstance(e, VoltageSource):
        return describe_waveform(e.waveform, "V")
    if isinstance(e, CurrentSource):
        return describe_waveform(e.waveform, "A")
    if isinstance(e, Diode):
        on = "drop only" if e.on_resistance is None else format_si(e.on_resistance, "Ω")
        off = "open" if e.off_resistance is None else format_si(e.off_resistance, "Ω")
        return f"drop {format_si(e.drop, 'V')}, on {on}, off {off}"
    if isinstance(e, Switch):
        on = "ideal" if e.on_resistance is None else format_si(e.on_resistance, "Ω")
        off = "ideal" if e.off_resistance is None else format_si(e.off_resistance, "Ω")
        return f"on {on}, off {off}"
    return ""


# --------------------------------------------------------------------------
# circuitode check
# --------------------------------------------------------------------------


def _spread_words(circuit: Circuit, names: Iterable[str]) -> str:
    words = []
    for name in sorted(set(names)):
        s = circuit.spreads.get(name)
        if s is not None:
            words.append(f"± {s.relative * 100:g} % {s.distribution} ({name})")
    return "; ".join(words)


def configuration_lines(configurations: Sequence[Any], indent: str = "  ") -> list[str]:
    """Lines for each configuration's own states (ConfigurationStates)."""
    out = []
    for c in configurations:
        if c.problem:
            out.extend(_wrap(f"{c.description}, {c.when}: cannot be assembled", indent=indent))
            continue
        count = f"{len(c.free)} state{'' if len(c.free) == 1 else 's'}"
        out.extend(_wrap(f"{c.description}, {c.when}: {count}"
                         + (f" ({', '.join(c.free)})" if c.free else ""), indent=indent))
        for d in c.dependent:
            out.extend(_wrap(d, indent=indent + "    "))
    return out


def check_text(circuit: Circuit, diagnostics: Sequence[Any], path: str | None = None,
               configurations: Sequence[Any] = ()) -> str:
    """The printed summary of ``circuitode check``: nodes, elements, states, switches, findings;
    ``configurations`` (ConfigurationStates) adds each configuration's own states."""
    out = heading_lines(circuit.title or "untitled circuit", path)
    out.append(f"nodes ({len(circuit.nodes)}): " + ", ".join(
        f"{n} (ground)" if n == circuit.ground else n for n in circuit.nodes))
    out[-1:] = _wrap(out[-1], indent="", width=WIDTH)
    out.append("")
    out.append(f"elements ({len(circuit.elements) + len(circuit.couplings)}):")
    recipe_names: dict[str, set[str]] = {}  # element → the parameters its recipes read (one pass)
    for (owner, _field), recipe in circuit.recipes.items():
        recipe_names.setdefault(owner, set()).update(recipe.names)
    for e in circuit.elements:
        kind = _ELEMENT_WORDS.get(type(e), type(e).__name__)
        head = f"  {kind:<15}{_fit(e.name, 12):<13}{_fit(e.first, 10):>10} -- {_fit(e.second, 10):<10} "
        body = _value_words(e)
        spread = _spread_words(circuit, recipe_names.get(e.name, ()))
        line = head + body
        if len(line) > WIDTH:
            out.append(head.rstrip())
            out.extend(_wrap(body, indent=" " * 6))
        else:
            out.append(line)
        if spread:
            out.extend(_wrap("tolerance " + spread, indent=" " * 6))
    for k in circuit.couplings:
        out.append(f"  {'coupling':<15}{_fit(k.name, 12):<13}{k.first} and {k.second}, k = {k.k:g}")
    out.append("")
    states = circuit.state_names
    out.append(f"states ({len(states)}): " + (", ".join(states) if states else "none (resistive)"))
    out[-1:] = _wrap(out[-1], indent="", width=WIDTH)
    if circuit.switches:
        out.append("")
        out.append("switches and diodes:" if circuit.diodes else "switches:")
        for s in circuit.switches:
            out.extend(_wrap(f"{s.name}: {describe_control(s)}", indent="  "))
    out.extend(parameter_lines(circuit))
    if configurations:
        out.append("")
        out.append(f"configurations ({len(configurations)}):")
        out.extend(configuration_lines(configurations))
    if circuit.spreads:
        out.append("")
        out.append("tolerances:")
        for s in circuit.spreads.values():
            unit = unit_of_parameter(circuit, s.name)
            out.append(
                f"  {_fit(s.name, 20):<21}{format_si(s.nominal, unit):>12}  ± {s.relative * 100:g} % "
                f"{s.distribution}"
            )
    if circuit.analysis is not None:
        a = circuit.analysis
        grid = f"step {format_si(a.step, 's')}" if a.step else f"{a.points or 2001} points"
        out.append("")
        out.append(f"transient: until {format_si(a.until, 's')}, {grid}, method {a.method}, "
                   f"initial state {a.initial}")
    if circuit.records:
        out.extend(_wrap("records: " + ", ".join(p.label for p in circuit.records), indent=""))
    for r in circuit.requirements:
        unit = figure_unit(r.figure, r.probe.unit)
        out.extend(_wrap(f"requires: {requirement_words(r, unit)}", indent=""))
    out.append("")
    errors = [d for d in diagnostics if d.severity == "error"]
    warnings = [d for d in diagnostics if d.severity != "error"]
    if not diagnostics:
        out.append("diagnostics: none, the circuit is ready to simulate.")
    else:
        out.append(f"diagnostics: {len(errors)} error(s), {len(warnings)} warning(s)")
        for d in diagnostics:
            out.append(str(d))
    return "\n".join(out)


def parameter_lines(circuit: Circuit) -> list[str]:
    """Lines giving every `param`'s resolved value (after expressions and --set), its unit and tolerance."""
    if not circuit.parameter_units:
        return []
    out = ["", "parameters (resolved):"]
    for name, unit in circuit.parameter_units.items():
        value = circuit.parameters.get(name)
        if value is None:
            continue
        shown = format_si(float(value), unit) if unit is not None else f"{float(value):.6g} (unit not one of ours)"
        out.append(_fit(f"  {_fit(name, 20):<21}= {shown}", WIDTH))
    return out


def caution_text() -> str:
    """The one-line safety caution, wrapped to the table width."""
    return "\n".join(_wrap(SAFETY_LINE, indent=""))


def unit_of_parameter(circuit: Circuit, name: str) -> str:
    """The unit of a toleranced parameter, from the first element field it feeds."""
    fields = {"resistance": "Ω", "on_resistance": "Ω", "off_resistance": "Ω", "capacitance": "F", "inductance": "H",
              "initial_voltage": "V", "initial_current": "A", "k": "", "control.changes.0": "s", "control.angle": "rad"}
    for (_owner, field), recipe in circuit.recipes.items():
        if name in recipe.names and field in fields:
            return fields[field]
    return ""


# --------------------------------------------------------------------------
# circuitode run
# --------------------------------------------------------------------------

#: Levels below this fraction of the row's largest are printed as 0: about 50 ulps of it.
_ROUNDING = 1e-14

_COLUMNS = (("peak", "peak"), ("time_of_peak", "at"), ("minimum", "minimum"), ("final", "final"))


def _figure_line(label: str, row: Mapping[str, tuple[Any, str]]) -> list[str]:
    cells = [f"{_fit(label, 26):<27}"]
    scale = max((abs(v) for v, _ in (row.get(k, (None, "")) for k, _ in _COLUMNS)
                 if isinstance(v, float) and math.isfinite(v)), default=0.0)
    for key, _ in _COLUMNS:
        value, unit = row.get(key, (None, ""))
        if key != "time_of_peak" and isinstance(value, float) and abs(value) <= _ROUNDING * scale:
            value = 0.0  # rounding of the solution (e.g. -8e-16 A beside 42 A), not a level
        cells.append(f"{_si(value, unit):>12}")
    lines = ["".join(cells)]
    extras = []
    if row.get("step", (True, ""))[0] is False:  # it moved, but IEEE 181 step figures need a step
        extras.append("no step (final ≈ initial)")
    for key, word in (("overshoot", "overshoot"), ("rise_time", "rise"), ("settling_time", "settles"),
                      ("rms", "rms"), ("i2t", "I²t"), ("energy", "energy")):
        value, unit = row.get(key, (None, ""))
        if value is not None and not (isinstance(value, float) and math.isnan(value)):
            extras.append(f"{word} {_si(value, unit)}")
    if row.get("settled", (True, ""))[0] is False:
        extras.append("not settled at the end (final is a snapshot)")
    if extras:
        lines.extend(_wrap(", ".join(extras), indent=" " * 4))
    return lines


def limits_text(results: Sequence[Any]) -> list[str]:
    """Lines for the limit table: PASS/FAIL, requirement, measured value, margin."""
    lines = []
    for r in results:
        mark = "pass" if r.passed else "FAIL"
        lines.extend(_wrap(f"{mark:<5}{requirement_words(r.requirement, r.unit)}", indent="  "))
        if math.isfinite(r.value):
            lines.append(f"{'':7}measured {_si(r.value, r.unit)}, margin {_si(r.margin, r.unit)}")
        else:  # nothing to measure: say why instead of printing blanks
            lines.extend(_wrap(r.reason or "not measurable", indent=" " * 7))
    return lines


def requirement_words(requirement: Any, unit: str) -> str:
    """E.g. "peak of current through R1 < 2 A", "I²t of current through F1, 0 s – 10 ms < 200 mA²s"."""
    limit, probe = f"{requirement.comparison} {format_si(requirement.limit, unit)}", requirement.probe
    quantity = getattr(requirement, "quantity", probe.label)  # with the window, if any
    if requirement.figure == "energy" and type(probe).__name__ == "PowerIn":
        return f"energy in {probe.element}{quantity[len(probe.label):]} {limit}"
    figure = {"i2t": "I²t", "final": "final value"}.get(requirement.figure, requirement.figure.replace("_", " "))
    return f"{figure} of {quantity} {limit}"


def event_words(event: Any) -> str:
    """E.g. "K_main closes when voltage at link > 43 V" or "K_pre closes (timed schedule)"."""
    head = f"{event.switch} {'closes' if event.closed else 'opens'}"
    diode = f"{event.switch} {'starts' if event.closed else 'stops'} conducting"
    if event.reason.startswith(head + " ") or event.reason.startswith(diode):
        return event.reason
    return f"{head} ({event.reason})"


def idle_words(sw: Any) -> str:
    """"K_main never closed: voltage at link peaked at 41.2 V < 43 V" (digits enough to tell them apart)."""
    head = f"{sw.switch} never {'closed' if sw.closes else 'opened'}: {sw.quantity}"
    if sw.extreme is None:
        return f"{head} never {'reached' if sw.above else 'fell to'} {format_si(sw.level, sw.unit)}"
    digits = next((d for d in range(4, 13) if format_si(sw.extreme, sw.unit, d) != format_si(sw.level, sw.unit, d)), 12)
    return (f"{head} {'peaked at' if sw.above else 'fell only to'} {format_si(sw.extreme, sw.unit, digits)} "
            f"{'<' if sw.above else '>'} {format_si(sw.level, sw.unit, digits)}")


def run_text(
    circuit: Circuit,
    waveforms: Any,
    figures: Mapping[str, Mapping[str, tuple[Any, str]]],
    limits: Sequence[Any],
    files: Mapping[str, Path],
    path: str | None = None,
) -> str:
    """The printed summary of ``circuitode run``, at most 80 columns wide."""
    out = heading_lines(circuit.title or "untitled circuit", path)
    reason = waveforms.method_reason
    if reason.startswith(f"{waveforms.method}: "):
        reason = reason[len(waveforms.method) + 2:]
    out.extend(_wrap(f"solver: {waveforms.method} — {reason}", indent=""))
    window = format_si(float(waveforms.t[-1]), "s")
    out.append(f"window: 0 s to {window}, {len(waveforms.t)} output points")
    idle = idle_switches(circuit, waveforms)
    if waveforms.events or idle:
        out.append(f"events ({len(waveforms.events)}):")
        for ev in waveforms.events[:12]:
            out.extend(_wrap(f"{format_si(ev.time, 's'):>10}  {event_words(ev)}", indent="  "))
        if len(waveforms.events) > 12:
            out.append(f"  … and {len(waveforms.events) - 12} more (see summary.json)")
        for sw in idle:  # a contactor that never acted changes every figure below
            out.extend(_wrap(idle_words(sw), indent="  "))
    for warning in getattr(waveforms, "warnings", ()):
        out.extend(_wrap(f"warning: {warning}", indent=""))
    out.append("")
    header = f"{'quantity':<27}" + "".join(f"{word:>12}" for _, word in _COLUMNS)
    out.append(header)
    out.append("─" * len(header))
    for label, row in figures.items():
        out.extend(_figure_line(label, row))
    for warning in resolution_warnings(waveforms):  # under the table, beside the numbers
        out.extend(_wrap(f"warning: {warning}", indent=""))
    if limits:
        out.append("")
        failed = sum(not r.passed for r in limits)
        out.append(f"limits: {len(limits) - failed} of {len(limits)} met")
        out.extend(limits_text(limits))
    if files:
        out.append("")
        out.append("files:")
        for kind, p in files.items():
            out.append(_fit(f"  {kind:<10}{p}", WIDTH))
    out.append("")
    out.extend(_wrap(SAFETY_LINE, indent=""))
    return "\n".join(out)


# --------------------------------------------------------------------------
# JSON
# --------------------------------------------------------------------------


def json_ready(value: Any) -> Any:
    """Turn numpy values, tuples, complex numbers and non-finite floats into JSON-safe values
    (NaN and ±inf become null, complex becomes {"real", "imag"})."""
    if isinstance(value, Mapping):
        return {str(k): json_ready(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_ready(v) for v in value]
    if isinstance(value, np.ndarray):
        return json_ready(value.tolist())
    if isinstance(value, (complex, np.complexfloating)):
        return {"real": json_ready(float(value.real)), "imag": json_ready(float(value.imag))}
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        v = float(value)
        return v if math.isfinite(v) else None
    if isinstance(value, Path):
        return str(value)
    return value


def write_summary_json(path: Path, summary: Mapping[str, Any]) -> Path:
    """Write ``summary`` with versions and the safety text added; returns the path."""
    import numpy
    import scipy

    body = dict(summary)
    body.setdefault("versions", {
        "circuitode": __version__,
        "python": platform.python_version(),
        "numpy": numpy.__version__,
        "scipy": scipy.__version__,
    })
    body.setdefault("safety", SAFETY_TEXT)
    path.write_text(json.dumps(json_ready(body), indent=2, ensure_ascii=False) + "\n", encoding="utf-8")
    return path
