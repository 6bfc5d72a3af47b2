"""Printed text of the ``fit`` command: fitted values with intervals, correlations, residual."""
from __future__ import annotations

import textwrap

from ..quantities import format_si

__all__ = ["fit_text"]


def fit_text(result, *, path: str = "") -> str:
    """The report of one fit (a FitJobResult)."""
    f = result.fit
    unit = "V" if result.quantity.startswith("voltage") else ("A" if result.quantity.startswith("current") else "")
    units = {n: result.circuit.spreads[n] for n in f.names}
    head = [
        f"{result.circuit.title}: {', '.join(f.names)} fitted to channel {result.channel!r} as {result.quantity}"
        + (f" ({path})" if path else ""),
        f"{f.evaluations} batch run(s) of {len(f.names) + 1} samples; capture clock + "
        f"{format_si(result.shift, 's', 6)} = model clock; probe offset fitted: {format_si(f.offset, unit)}",
    ]
    lines = [part for text in head for part in textwrap.wrap(text, 80, subsequent_indent="  ")]
    lines += [
        "",
        f"{'parameter':<11}{'nominal':>10}{'fitted':>11}  {f'{f.confidence:.0%} interval':<24}{'bounds (tolerance)':>20}",
        "─" * 78,
    ]
    for k, name in enumerate(f.names):
        spread = units[name]
        u = _unit_of(result.circuit, name)
        low, high = f.intervals[k]
        bound = f"{format_si(spread.nominal * (1 - spread.relative), u)} … {format_si(spread.nominal * (1 + spread.relative), u)}"
        mark = " *" if name in f.at_bound else ""
        lines.append(f"{name[:11]:<11}{format_si(result.nominal[name], u):>10}{format_si(f.values[k], u):>11}  "
                     f"{'[' + format_si(low, u) + ', ' + format_si(high, u) + ']':<24}{bound:>20}{mark}")
    if len(f.names) > 1:
        lines.append("")
        shown = f.names[:6]  # 13 + 6 × 10 columns
        lines.append("correlation  " + "".join(f"{n[:9]:>10}" for n in shown))
        for k, name in enumerate(shown):
            lines.append(f"{name[:12]:<13}" + "".join(f"{f.correlation[k, j]:>10.3f}" for j in range(len(shown))))
    lines.append("")
    notes = [f"residual rms {format_si(f.residual_rms, unit)} (nominal model {format_si(result.rms_nominal, unit)}); "
             f"Jacobian singular-value ratio {f.condition:.2g}"]
    if f.at_bound:
        notes.append("* on a bound: held by the tolerance, not by the signal, so its interval is not a "
                     "confidence interval; widen the tolerance if the part may lie beyond it")
    if any(abs(f.correlation[k, j]) > 0.95 for k in range(len(f.names)) for j in range(k)):
        notes.append("correlations near ±1: the signal sees mainly a combination of these parameters")
    lines.extend(part for note in notes for part in textwrap.wrap(note, 80, subsequent_indent="  "))
    return "\n".join(lines)


def _unit_of(circuit, name: str) -> str:
    """The unit of a parameter, from the element values that use it (Ω, F, H), else none."""
    from ..model import Capacitor, Inductor, Resistor

    for (element, field_), recipe in circuit.recipes.items():
        if name in getattr(recipe, "names", ()):
            owner = circuit.by_name.get(element)
            if isinstance(owner, Resistor):
                return "Ω"
            if isinstance(owner, Capacitor):
                return "F"
            if isinstance(owner, Inductor):
                return "H"
    return ""
