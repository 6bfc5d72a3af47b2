"""Printed text of the ``response`` command: one block per curve, resonances with their Q."""
from __future__ import annotations

import textwrap
from typing import Sequence

from ..quantities import format_si

__all__ = ["response_text"]


def _magnitude(value: float, unit: str) -> str:
    if unit in ("Ω", "S"):
        return format_si(value, unit, 4)
    return f"{value:.4g} {unit}"


def response_text(curves: Sequence, problems: Sequence[str], files: dict, *, path: str = "", title: str = "") -> str:
    """Resonances per curve and configuration, the problems, then the files written."""
    lines = textwrap.wrap(f"{title or path}: frequency response" + (f" ({path})" if title and path else ""), 80)
    for cu in curves:
        f = cu.frequency_hz
        lines.append("")
        lines.extend(textwrap.wrap(f"{cu.label} [{cu.unit}], {cu.configuration}; "
                                   f"{format_si(f[0], 'Hz', 3)} to {format_si(f[-1], 'Hz', 3)}, {f.size} points",
                                   80, subsequent_indent="  "))
        if not cu.resonances:
            lines.append("  no resonance (no interior peak or dip of the magnitude)")
            continue
        lines.append(f"  {'kind':<5}{'frequency':>12}{'|H|':>13}{'Q (pole)':>10}{'pole fn':>12}"
                     f"{'Q (f0/Δf)':>11}{'Δf (-3 dB)':>12}")
        for r in cu.resonances:
            bw = "—" if r.bandwidth_hz != r.bandwidth_hz else format_si(r.bandwidth_hz, "Hz", 4)
            bq = "—" if r.bandwidth_q != r.bandwidth_q else f"{r.bandwidth_q:.4g}"
            lines.append(f"  {r.kind:<5}{format_si(r.frequency_hz, 'Hz', 5):>12}"
                         f"{_magnitude(r.magnitude, cu.unit):>13}{r.pole_q:>10.4g}"
                         f"{format_si(r.pole_frequency_hz, 'Hz', 5):>12}{bq:>11}{bw:>12}")
    for problem in problems:
        lines.extend(textwrap.wrap(f"warning: {problem}", 80, subsequent_indent="  "))
    if files:
        lines.append("")
        lines.extend(f"wrote {kind}: {p}" for kind, p in files.items())
    return "\n".join(lines)
