"""The printed summary of a tolerance batch (≤ 80 columns); formatting only, no numerics.

Values go through :func:`circuitode.quantities.format_si`, limits are
worded as in a single run's report, and a figure that does not vary over the
batch (relative spread below 1e-9) gets no "strongest driver": a rank
correlation of rounding noise would name a part that does not matter.
"""
from __future__ import annotations

import math
import textwrap

import numpy as np

from ..quantities import format_si, format_value
from ..analysis.limits import figure_key, unmeasurable_reason
from ..output.report import SAFETY_LINE, WIDTH, requirement_words

__all__ = ["format_batch_summary", "figure_label", "varies", "NO_SPREAD"]

#: Relative spread (σ / max(|mean|, |max|)) below which a figure counts as not varying.
NO_SPREAD = 1e-9
#: Step figures in % below this are rounding (a charge that ends exactly at its source level).
PERCENT_NOISE = 1e-6
#: A level within this fraction of its quantity's largest |peak| is rounding of the solution, printed as 0.
LEVEL_NOISE = 1e-12
#: Overshoot or undershoot above this (in %) says the signal is no step response (an AC bus,
#: a signal that ends near zero): the number would mislead.
PERCENT_ABSURD = 1000.0
_LABEL = 38

_FIGURE_WORDS = {"time_of_peak": "time of peak", "i2t": "I²t", "settling_time": "settling",
                 "rise_time": "rise time", "final": "final value"}


def _si(value: float, unit: str, digits: int = 4) -> str:
    return "—" if not math.isfinite(value) else format_si(value, unit, digits)


def figure_label(key: tuple[str, str]) -> str:
    """E.g. ("peak", "current through R1") → "peak, current through R1"."""
    figure, probe = key
    if figure == "energy" and probe.startswith("power in "):
        return f"energy in {probe[len('power in '):]}"
    return f"{_FIGURE_WORDS.get(figure, figure.replace('_', ' '))}, {probe}"


def varies(summary) -> bool:
    """True when the figure's spread is more than rounding noise (see NO_SPREAD)."""
    scale = max(abs(summary.mean), abs(summary.maximum), abs(summary.minimum))
    return math.isfinite(summary.std) and summary.std > NO_SPREAD * scale


def _meets(requirement, value: float) -> bool:
    """Does ``value`` meet the requirement's comparison with its limit?"""
    limit, op = requirement.limit, requirement.comparison
    return bool({"<": value < limit, "<=": value <= limit, ">": value > limit, ">=": value >= limit}[op])


def _state(s, unit: str, level: float = 0.0) -> str:
    """"absurd" (a % step figure beyond sense), "rounding" (a % figure of rounding size, or a level
    within 1e-12 of the quantity's own ``level``, e.g. a minimum of -2e-15 V on a 49 V link),
    "fixed" (no spread beyond rounding), "missing" (no finite value) or "varies"."""
    largest = max(abs(s.minimum), abs(s.maximum))
    if not math.isfinite(largest):
        return "missing" if not math.isfinite(s.mean) else "varies"
    if unit != "%" and 0.0 < largest <= LEVEL_NOISE * level:
        return "zero"
    if unit == "%" and largest > PERCENT_ABSURD:
        return "absurd"
    if unit == "%" and largest < PERCENT_NOISE:
        return "rounding"
    return "varies" if varies(s) else "fixed"


def _levels(result) -> dict[str, float]:
    """Each quantity's largest |peak| over the batch (its scale), by probe label."""
    out: dict[str, float] = {}
    for (figure, label), s in result.summaries.items():
        if figure == "peak" and math.isfinite(s.maximum):
            out[label] = max(out.get(label, 0.0), abs(s.maximum), abs(s.minimum))
    return out


def _figure_row(label: str, s, unit: str, level: float = 0.0, step: bool = False) -> list[str]:
    """The statistics row of one figure; a long label gets a line of its own.  ``step``: a figure
    in % of a step's amplitude, which has no value where there is no step (figures.step.NO_STEP)."""
    width = _LABEL - 1
    lead = [] if len(label) <= width else textwrap.wrap(label, WIDTH, subsequent_indent="  ")
    first = f"{label:<{_LABEL}}" if not lead else f"{'':<{_LABEL}}"
    state = _state(s, unit, level)
    if state == "absurd":
        body = f"{'—':>10}  over {PERCENT_ABSURD:g} %: not a step"
    elif state == "zero":
        body = f"{_si(0.0, unit, 3):>10}  does not vary (rounding)"
    elif state == "missing" and step:
        body = f"{'—':>10}  no step in any sample"
    elif state == "missing":
        body = f"{'—':>10}  no value in any sample"
    elif state == "rounding":
        body = f"{'0 %':>10}  (below 1e-6 %: rounding)"
    elif state == "fixed":
        body = f"{_si(s.mean, unit, 3):>10}  does not vary"
    else:
        cells = (s.mean, s.std, s.percentiles[0], s.percentiles[-1])
        body = "".join(f" {_si(v, unit, 3):>9}" for v in cells)
    return lead + [(first + body).rstrip()]


def _corner_warning(result) -> list[str]:
    """One line when a corners batch spreads an angle or an instant: their effect rises and falls
    (a closing angle is worst near a voltage zero, between the corners), so the extremes may miss it."""
    if result.samples.sampler != "corners":
        return []
    units = getattr(result, "parameter_units", {}) or {}
    timed = [n for n in result.samples.names if units.get(n) in ("rad", "s")]
    if not timed:
        return []
    words = (f"  note: corners miss a worst case between the extremes, which a closing angle "
             f"or instant often has ({', '.join(timed)}): run --sampler lhs or a sweep too")
    return textwrap.wrap(words, WIDTH, subsequent_indent="    ")


#: What the two driver columns mean, printed above them (≤ 80 columns).
DRIVER_WORDS = ("strongest driver of each figure: η² = share of the figure's variance the part\n"
                "explains alone (sees a rise-and-fall too), ρ = Spearman rank correlation (+: the\n"
                "figure rises with the part; near 0 when it rises then falls)")


def _driver_lines(result, levels: dict) -> list[str]:
    """The driver table: per figure the part with the largest η², its η² and its ρ."""
    lines = DRIVER_WORDS.split("\n") + [f"  {'figure':<46}{'part':<18}{'η²':>5}{'ρ':>7}"]
    for (key, drivers), s, unit in zip(result.sensitivity.items(), result.summaries.values(), result.figure_units):
        label = figure_label(key)
        if len(label) > 45:
            lines.append(f"  {label}")
            label = ""
        state = _state(s, unit, levels.get(key[1], 0.0))
        if state in ("fixed", "rounding", "zero"):
            lines.append(f"  {label:<46}does not vary")
        elif state == "absurd":
            lines.append(f"  {label:<46}not a step response")
        elif state == "missing":
            lines.append(f"  {label:<46}no value")
        elif drivers and (np.isfinite(drivers[0].eta2) or np.isfinite(drivers[0].rho)):
            d = drivers[0]
            name = d.parameter  # whole, even when long: a cut name could point at the wrong part
            cells = f"{d.eta2:5.2f}" + (f"{d.rho:+7.2f}" if np.isfinite(d.rho) else f"{'—':>7}")
            lines.append(f"  {label:<46}{name:<18}{cells}" if len(name) <= 17
                         else f"  {label:<46}{name} {cells.lstrip()}")
    return lines


def format_batch_summary(result) -> str:
    """Statistics per figure, yield with its Wilson interval, closest samples, drivers."""
    t = result.samples
    failed = int((~result.ok).sum())
    lines = [f"tolerance batch: {t.count} samples ({t.sampler}, seed {t.seed}), "
             f"{failed} failed to run" if failed else
             f"tolerance batch: {t.count} samples ({t.sampler}, seed {t.seed}), all ran"]
    if t.note:
        lines.append(f"  note: {t.note}")
    lines.extend(_corner_warning(result))
    if result.chunks_resumed:
        lines.append(f"  resumed: {result.chunks_resumed} chunk(s) were already on disk")
    lines.append("")
    head = f"{'figure':<{_LABEL}}" + "".join(f"{h:>10}" for h in ("mean", "σ", "P1", "P99"))
    lines += [head, "─" * len(head)]
    levels = _levels(result)
    for (key, s), unit in zip(result.summaries.items(), result.figure_units):
        lines.extend(_figure_row(figure_label(key), s, unit, levels.get(key[1], 0.0),
                                 key[0] in ("overshoot", "undershoot")))
    lines.append("")
    y = result.yield_estimate
    if result.requirements:
        lines.append(f"yield: {y.passed} of {y.total} = {100 * y.fraction:.2f} % "
                     f"(95 % Wilson interval {100 * y.low:.2f} to {100 * y.high:.2f} %)")
        units = dict(zip(result.figure_keys, result.figure_units))
        for r in result.requirements:
            unit = units.get(figure_key(r), "")
            count = y.per_limit.get(r.label, 0)
            head = f"  {count:>{len(str(y.total))}} pass  "
            lines.extend(textwrap.wrap(head + requirement_words(r, unit), WIDTH,
                                       subsequent_indent=" " * len(head)))
            if r.label in result.worst:
                k, value = result.worst[r.label]
                units_of = getattr(result, "parameter_units", {}) or {}
                # no-break spaces keep each "name value unit" on one line when wrapped
                params = ", ".join(f"{n} {format_value(v, units_of.get(n, ''), 4)}".replace(" ", "\u00a0")
                                   for n, v in zip(t.names, t.values[k]))
                word = "closest" if _meets(r, value) else "worst (fails)"
                lines.extend(textwrap.wrap(f"{word}: {_si(value, unit)} at sample {k} ({params})", WIDTH,
                                           initial_indent=" " * 6, subsequent_indent=" " * 8))
            else:  # no sample gave a value: say why, as a single run does
                lines.extend(textwrap.wrap(f"not measurable in any sample: {unmeasurable_reason(r.figure)}",
                                           WIDTH, initial_indent=" " * 6, subsequent_indent=" " * 8))
    else:
        lines.append("yield: no 'require' limits in the netlist")
    lines.append("")
    lines.extend(_driver_lines(result, levels))
    if result.out_dir is not None:
        plots = sum(1 for p in result.files.values() if str(p).endswith(".png"))
        waves = sum(1 for k in result.files if k.startswith("waveform"))
        extra = (f", {plots} plots" if plots else "") + (f", {waves} waveforms" if waves else "")
        lines.append("")
        lines.extend(textwrap.wrap(f"written to {result.out_dir}: samples.csv, batch_summary.json{extra}",
                                   WIDTH, subsequent_indent="  "))
    if result.min_yield is not None:
        verdict = "meets" if result.exit_code == 0 else "is BELOW"
        lines.append(f"yield {verdict} the minimum of {100 * result.min_yield:.1f} %")
    lines.extend(textwrap.wrap(SAFETY_LINE, WIDTH))
    return "\n".join(lines)
