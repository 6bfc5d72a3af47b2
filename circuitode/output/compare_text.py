"""Printed text of the ``compare`` command: alignment, error figures, ringing beside the model's modes."""
from __future__ import annotations

import math
import textwrap

from ..quantities import format_si

WIDTH = 80

__all__ = ["compare_text"]


def _interval(low: float, high: float, unit: str = "", digits: int = 4) -> str:
    if unit:
        return f"[{format_si(low, unit, digits)}, {format_si(high, unit, digits)}]"
    return f"[{low:.{digits}g}, {high:.{digits}g}]"


def compare_text(result, *, path: str = "") -> str:
    """The report of one comparison (a CompareResult)."""
    c, u = result.comparison, result.unit
    cap = result.capture
    head = [
        f"{result.circuit.title}: measured {result.channel!r} of {cap.source} against {result.quantity}"
        + (f" ({path})" if path else ""),
        f"capture: {cap.t.size} samples every {format_si(cap.sample_interval, 's')}, "
        f"from {format_si(cap.t[0], 's')} to {format_si(cap.t[-1], 's')} on its own clock",
        f"alignment: {c.alignment}; capture clock + {format_si(c.shift, 's', 6)} = model clock",
        f"compared over {format_si(c.t[0], 's')} to {format_si(c.t[-1], 's')} ({c.t.size} samples)",
    ]
    lines = [part for text in head for part in textwrap.wrap(text, WIDTH, subsequent_indent="  ")]
    lines += [
        "",
        f"{'figure':<22}{'measured':>14}{'model':>14}{'measured − model':>20}",
        "─" * 70,
        f"{'rms error':<22}{'':>14}{'':>14}{format_si(c.rms_error, u):>20}",
        f"{'largest |error|':<22}{'':>14}{'':>14}{format_si(c.largest_error, u):>20}",
        f"{'peak':<22}{format_si(c.peak_measured, u):>14}{format_si(c.peak_model, u):>14}"
        f"{format_si(c.peak_error, u):>20}",
        f"{'time of peak':<22}{format_si(c.time_of_peak_measured, 's'):>14}"
        f"{format_si(c.time_of_peak_model, 's'):>14}{format_si(c.time_of_peak_error, 's'):>20}",
        f"{'overshoot':<22}{c.overshoot_measured:>12.3g} %{c.overshoot_model:>12.3g} %"
        f"{c.overshoot_measured - c.overshoot_model:>16.3g} pts",
        "(both overshoots against the model's initial and final levels; a noisy",
        " peak includes its noise)",
        "",
        f"ringing from the measurement alone, from {format_si(result.ringing_start, 's')}",
        "(the first extremum after the crossing); intervals 95 %:",
        f"  {'estimator':<16}{'ζ':>7}  {'ζ interval':<19}{'fn':>11}{'fd':>11}",
    ]
    ld = result.ringing.get("log decrement")
    if ld is not None:
        lines.append(f"  {'log decrement':<16}{ld.zeta:>7.4f}  {_interval(*ld.zeta_interval):<19}"
                     f"{format_si(ld.natural_frequency_hz, 'Hz'):>11}{format_si(ld.damped_frequency_hz, 'Hz'):>11}")
        lines.append(f"      over n = {ld.cycles} cycle(s), δ = {ld.delta:.4f} per cycle (n: the last")
        lines.append("      peak-to-trough height still ≥ 10 standard errors)")
    fit = result.ringing.get("damped-sine fit")
    if fit is not None:
        lines.append(f"  {'damped-sine fit':<16}{fit.zeta:>7.4f}  {_interval(*fit.zeta_interval):<19}"
                     f"{format_si(fit.natural_frequency_hz, 'Hz'):>11}{format_si(fit.damped_frequency_hz, 'Hz'):>11}")
        lines.append(f"      fn interval {_interval(*fit.natural_frequency_interval, 'Hz')}, "
                     f"final level {format_si(fit.offset, u)}")
        lines.append(f"      residual rms {format_si(fit.residual_rms, u)}")
    for k, mode in enumerate(result.ringing.get("matrix pencil", [])[:4]):
        name = "matrix pencil" if k == 0 else ""
        fd = "—" if mode.damped_frequency_hz == 0 else format_si(mode.damped_frequency_hz, "Hz")
        lines.append(f"  {name:<16}{mode.zeta:>7.4f}  {'amp. ' + format_si(mode.amplitude, u):<19}"
                     f"{format_si(mode.natural_frequency_hz, 'Hz'):>11}{fd:>11}")
    for name, why in result.ringing_problems.items():
        lines.extend(textwrap.wrap(f"{name}: not measured: {why}", WIDTH, initial_indent="  ",
                                   subsequent_indent="      "))
    lines.append("")
    if result.modes is None:
        lines.append("model's modes: not available")
    else:
        lines.extend(textwrap.wrap(f"model's modes {result.modes.description}:", WIDTH))
        for m in result.modes.modes:
            if math.isnan(m.damping_ratio):
                continue
            fd = format_si(m.damped_frequency_hz, "Hz") if m.damped_frequency_hz else "—"
            lines.append(f"  {m.kind[:16]:<16}{m.damping_ratio:>7.4f}  {'Q ' + format(m.quality_factor, '.3g'):<19}"
                         f"{format_si(m.natural_frequency_hz, 'Hz'):>11}{fd:>11}")
    for problem in result.problems:
        lines.extend(textwrap.wrap(f"warning: {problem}", WIDTH, subsequent_indent="  "))
    if result.files:
        lines.append("")
        lines.extend(f"wrote {kind}: {p}" for kind, p in result.files.items())
    return "\n".join(lines)
