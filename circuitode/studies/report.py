"""Text of the ``sweep`` and ``size`` commands (≤ 80 columns, engineering notation)."""
from __future__ import annotations

from typing import Any, Sequence

import numpy as np

from ..analysis.measure import figure_unit
from ..quantities import format_si, format_value
from ..output.report import heading_lines, requirement_words

__all__ = ["limit_words", "sweep_text", "size_text", "worst_lines"]


def limit_words(requirement: Any) -> str:
    """E.g. "peak of current through R1 < 6 A"."""
    return requirement_words(requirement, figure_unit(requirement.figure, requirement.probe.unit))


def worst_lines(result: Any) -> list[str]:
    """For each requirement: its worst figure and where (the varied values), and whether
    the point was refined between grid points (with the resolution reached)."""
    if not getattr(result, "worst", None):
        return []
    units = dict(zip(result.results.figure_keys, result.results.figure_units))
    out = ["", "worst point of each limit:"]
    for w in result.worst:
        req = w.requirement
        unit = units.get((req.figure, req.probe.label), "")
        where = ", ".join(f"{a.name} = {format_value(v, a.unit, 7 if w.refined else 4)}"
                          for a, v in zip(result.axes, w.point))
        verdict = "meets" if w.margin >= 0 else "fails"
        out.append(f"  {limit_words(req)}")
        out.append(f"    {format_si(w.value, unit, 7 if w.refined else 4)} ({verdict}) at {where}")
        if len(result.axes) == 1 and np.isfinite(w.step):
            how = "refined between grid points" if w.refined else "grid point"
            out.append(f"    ({how}; ± {format_value(w.step, result.axes[0].unit, 2)})")
    return out


def _within_80(lines: list[str]) -> str:
    """The lines joined, each wider than 80 columns wrapped under its own indent plus two."""
    import textwrap

    out: list[str] = []
    for line in lines:
        if len(line) <= 80:
            out.append(line)
            continue
        indent = line[: len(line) - len(line.lstrip())]
        out += textwrap.wrap(line, width=80, subsequent_indent=indent + "  ", break_on_hyphens=False,
                             break_long_words=False)
    return "\n".join(out)


def sweep_text(result: Any, path: str | None = None) -> str:
    """Summary of a sweep: the grid, how many points meet each requirement, where they lie, files."""
    n = result.points.shape[0]
    good = result.all_pass
    out = heading_lines(result.title, path)
    grid = " × ".join(f"{a.name} {a.values.size} values {format_value(a.values.min(), a.unit)} to "
                      f"{format_value(a.values.max(), a.unit)}{' (log)' if a.log else ''}" for a in result.axes)
    out += [f"sweep: {n} points ({grid}), through the batch engine", ""]
    failed = int((~result.results.ok).sum())
    if failed:
        out.append(f"{failed} point(s) could not be simulated (see the 'message' column)")
    for i, req in enumerate(result.requirements):
        met = int((result.results.passes[:, i] & result.results.ok).sum())
        out.append(f"  {met:>6} of {n} meet  {limit_words(req)}")
    out.append(f"every requirement met at {int(good.sum())} of {n} points")
    if good.any() and len(result.axes) == 1:  # the passing stretches, each on its own
        a = result.axes[0]
        edges = np.flatnonzero(np.diff(np.concatenate([[0], good.astype(np.int8), [0]])))
        runs = [f"{format_value(a.values[i], a.unit)} to {format_value(a.values[j - 1], a.unit)}"
                for i, j in zip(edges[::2], edges[1::2])]
        out.append(f"  {a.name} among them: {', '.join(runs)}")
    elif good.any():
        for j, a in enumerate(result.axes):
            values = result.points[good, j]
            out.append(f"  {a.name} among them: {format_value(values.min(), a.unit)} to "
                       f"{format_value(values.max(), a.unit)}")
    out += worst_lines(result)
    if result.files:
        out += ["", "files:"] + [f"  {name:<9} {p}" for name, p in result.files.items()]
    return _within_80(out)


def _values(values: Sequence[float], unit: str, most: int = 8) -> str:
    """E.g. "10 Ω, 12 Ω, 15 Ω", or the three lowest and highest with a count when there are many."""
    words = [format_si(v, unit, 3) for v in values]
    if len(words) > most:
        words = words[:3] + ["…"] + words[-3:] + [f"({len(values)} values)"]
    return ", ".join(words).replace(", …,", " …").replace(", (", " (")


def size_text(result: Any, path: str | None = None) -> str:
    """The interval(s), the limiting requirement at each end, and the E12/E24 values inside."""
    u = result.unit
    low, high = result.searched
    out = [*heading_lines(f"sizing {result.part}: {result.title}", path),
           f"searched {format_value(low, u)} to {format_value(high, u)}: {result.grid.size} values swept as one batch, "
           f"sign changes refined by brentq; {result.evaluations} runs in all", ""]
    if not result.intervals and result.yield_details is not None:
        out.append(f"no value of {result.part} in this range reaches a yield of "
                   f"{100 * result.yield_target:g} % over {result.yield_details['samples']} samples")
        return _within_80(out)
    if not result.intervals:
        out.append(f"no value of {result.part} in this range meets every requirement")
        for i, req in enumerate(result.requirements):
            m = result.grid_margins[:, i]
            met = int(np.sum(m > 0))
            out.append(f"  met at {met:>3} of {m.size} swept values: {limit_words(req)}")
        return _within_80(out)
    details = result.yield_details
    if details is not None:
        names = ", ".join(details["names"])
        out.append(f"yield target {100 * details['target']:g} % over {details['samples']} Latin-hypercube samples "
                   f"of {names} (seed {details['seed']}); {details['runs']} sample runs")
    for k, iv in enumerate(result.intervals):
        what = (f"at least {100 * details['target']:g} % of the samples meet every requirement" if details
                else "every requirement holds")
        out.append(f"{what} for {result.part} from {format_value(iv.low, u)} to {format_value(iv.high, u)}")
        for side, (end, value, limit) in enumerate((("lower", iv.low, iv.low_limit), ("upper", iv.high, iv.high_limit))):
            reason = f"set by {limit_words(limit)}" if limit is not None else "end of the searched range"
            out.append(f"  {end} end {format_value(value, u)}: {reason}")
            if details is not None:
                estimate, low_y, high_y = details["ends"][details["inside_ends"][k][side]]
                out.append(f"    yield there {100 * estimate:.1f} % (95 % Wilson interval {100 * low_y:.1f} to "
                           f"{100 * high_y:.1f} %)")
    if result.preferred:
        band = (f" whose whole ± {100 * result.tolerance:g} % tolerance band lies" if result.tolerance else "")
        out += ["", f"preferred values (IEC 60063){band} inside:"]
        for k, iv in enumerate(result.intervals):
            if len(result.intervals) > 1:
                out.append(f"  {format_value(iv.low, u)} to {format_value(iv.high, u)}:")
            pad = "    " if len(result.intervals) > 1 else "  "
            for series, per_interval in result.preferred.items():
                values = per_interval[k]
                out.append(f"{pad}{series}: {_values(values, u) if len(values) else 'none'}")
    return _within_80(out)
