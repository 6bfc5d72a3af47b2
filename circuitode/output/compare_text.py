"""Printed text of the ``compare`` command: alignment, error figures, ringing beside the model's modes."""
from __future__ import annotations

import math

from ..netlist.quantities import format_si

__all__ = ["compare_text"]


def _interval(low: float, high: float, unit: str = "", digits: int = 4) -> str:
    if unit:
        return f"[{format_si(low, unit, digits)}, {format_si(high, unit, digits)}]"
    return f"[{low:.{digits}g}, {high:.{digits}g}]"


def compare_text(result, *, path: str = "") -> str:
    """The report of one comparison (a CompareResult)."""
    c, u = result.comparison, result.unit
    cap = result.capture
    lines = [
        f"{result.circuit.title}: measured {result.channel!r} of {cap.source} against {result.quantity}"
        + (f" ({path})" if path else ""),
        f"capture: {cap.t.size} samples every {format_si(cap.sample_interval, 's')}, "
        f"from {format_si(cap.t[0], 's')} to {format_si(cap.t[-1], 's')} on its own clock",
        f"alignment: {c.alignment}; capture clock + {format_si(c.shift, 's', 6)} = model clock",
        f"compared over {format_si(c.t[0], 's')} to {format_si(c.t[-1], 's')} ({c.t.size} samples)",
        "",
        f"{'figure':<26}{'measured':>14}{'model':>14}{'measured − model':>20}",
        "─" * 74,
        f"{'rms error':<26}{'':>14}{'':>14}{format_si(c.rms_error, u):>20}",
        f"{'largest |error|':<26}{'':>14}{'':>14}{format_si(c.largest_error, u):>20}",
        f"{'peak':<26}{format_si(c.peak_measured, u):>14}{format_si(c.peak_model, u):>14}"
        f"{format_si(c.peak_error, u):>20}",
        f"{'time of peak':<26}{format_si(c.time_of_peak_measured, 's'):>14}"
        f"{format_si(c.time_of_peak_model, 's'):>14}{format_si(c.time_of_peak_error, 's'):>20}",
        f"{'overshoot':<26}{c.overshoot_measured:>12.3g} %{c.overshoot_model:>12.3g} %"
        f"{c.overshoot_measured - c.overshoot_model:>16.3g} pts",
        "(overshoot of both against the model's initial and final levels; a noisy peak includes its noise)",
        "",
        f"ringing from the measurement alone, from {format_si(result.ringing_start, 's')} "
        f"(first extremum after the crossing):",
        f"  {'estimator':<18}{'ζ':>8}  {'95 % interval':<20}{'fn':>12}  {'95 % interval':<24}{'fd':>12}",
    ]
    ld = result.ringing.get("log decrement")
    if ld is not None:
        lines.append(f"  {'log decrement':<18}{ld.zeta:>8.4f}  {_interval(*ld.zeta_interval):<20}"
                     f"{format_si(ld.natural_frequency_hz, 'Hz'):>12}  {'':<24}"
                     f"{format_si(ld.damped_frequency_hz, 'Hz'):>12}")
        lines.append(f"      over n = {ld.cycles} cycle(s) (chosen: the last height still ≥ 10 standard errors), "
                     f"δ = {ld.delta:.4f} per cycle")
    fit = result.ringing.get("damped-sine fit")
    if fit is not None:
        lines.append(f"  {'damped-sine fit':<18}{fit.zeta:>8.4f}  {_interval(*fit.zeta_interval):<20}"
                     f"{format_si(fit.natural_frequency_hz, 'Hz'):>12}  "
                     f"{_interval(*fit.natural_frequency_interval, 'Hz'):<24}"
                     f"{format_si(fit.damped_frequency_hz, 'Hz'):>12}")
        lines.append(f"      final level {format_si(fit.offset, u)}, residual rms {format_si(fit.residual_rms, u)}")
    for k, mode in enumerate(result.ringing.get("matrix pencil", [])[:4]):
        name = "matrix pencil" if k == 0 else ""
        fd = "—" if mode.damped_frequency_hz == 0 else format_si(mode.damped_frequency_hz, "Hz")
        lines.append(f"  {name:<18}{mode.zeta:>8.4f}  {'':<20}{format_si(mode.natural_frequency_hz, 'Hz'):>12}  "
                     f"{'amplitude ' + format_si(mode.amplitude, u):<24}{fd:>12}")
    for name, why in result.ringing_problems.items():
        lines.append(f"  {name:<18}not measured: {why}")
    lines.append("")
    if result.modes is None:
        lines.append("model's modes: not available")
    else:
        lines.append(f"model's modes {result.modes.description}:")
        for m in result.modes.modes:
            if math.isnan(m.damping_ratio):
                continue
            lines.append(f"  {m.kind:<18}{m.damping_ratio:>8.4f}  {'':<20}"
                         f"{format_si(m.natural_frequency_hz, 'Hz'):>12}  {'Q ' + format(m.quality_factor, '.3g'):<24}"
                         f"{format_si(m.damped_frequency_hz, 'Hz') if m.damped_frequency_hz else '—':>12}")
    for problem in result.problems:
        lines.append(f"warning: {problem}")
    if result.files:
        lines.append("")
        lines.extend(f"wrote {kind}: {p}" for kind, p in result.files.items())
    return "\n".join(lines)
