"""Requirements → pass / fail, with the margin by which each limit is met or missed.

A :class:`circuitode.model.run_settings.Requirement` limits one figure (see
:mod:`circuitode.analysis.measure`) of one probed quantity, e.g. "peak current through R1
< 2 A".  :func:`check_requirements` measures it on a single run's waveforms;
:func:`check_requirements_batch` applies the same limits to figure arrays of a
tolerance batch at once.

Margin convention: how far inside the limit the value lies, in the figure's unit —
``limit − value`` for ``<``/``<=`` and ``value − limit`` for ``>``/``>=``; positive
when passing, negative when failing (zero at the limit, which passes only ``<=``
and ``>=``).  A figure that cannot be measured (NaN, e.g. the damping ratio of a
waveform that does not ring) fails, with the reason.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Mapping, Sequence

import numpy as np

from ..errors import CircuitodeError
from .measure import FIGURE_UNITS, figure_unit, measure
from .between_rows import carried_figure
from .figures.step import NO_STEP_WORDS
from .windows import run_figure

__all__ = [
    "LimitError",
    "LimitResult",
    "COMPARISONS",
    "check_requirements",
    "check_requirements_batch",
    "requirement_margins_batch",
    "figures_needed",
    "figure_key",
    "all_passed",
    "unmeasurable_reason",
]

#: The comparisons a requirement may use.
COMPARISONS = ("<", "<=", ">", ">=")


class LimitError(CircuitodeError):
    """A requirement cannot be checked: unknown figure or comparison, or its probe was not recorded."""


@dataclass(frozen=True)
class LimitResult:
    """The outcome of one requirement on one run.

    requirement : the Requirement checked.  value : measured figure (SI, NaN when it
    could not be measured).  unit : the figure's unit.  passed : True when the limit
    is met.  margin : distance inside the limit, in ``unit`` (negative when failing,
    NaN when unmeasurable).  reason : why it failed, in words ("" when it passed).
    """

    requirement: Any
    value: float
    unit: str
    passed: bool
    margin: float
    reason: str = ""


_NO_RINGING = (
    "the waveform does not ring as one damped sinusoid (too few extrema, or several modes "
    "superposed); the mode table gives ζ per mode"
)

_UNMEASURABLE = {
    "damping_ratio": _NO_RINGING,
    "damped_frequency": _NO_RINGING,
    "overshoot": NO_STEP_WORDS,
    "undershoot": NO_STEP_WORDS,
    "rise_time": "the signal never crosses the 10 % and 90 % levels of its step, or there is " + NO_STEP_WORDS,
    "settling_time": "the signal has not settled within the run (or there is no step); run longer",
}


def unmeasurable_reason(figure: str) -> str:
    """Why ``figure`` can come out NaN, in words ("not measurable: …" follows it in reports)."""
    return _UNMEASURABLE.get(figure, "the figure is undefined for this waveform")


def _validated(requirement: Any) -> tuple[str, str]:
    figure = getattr(requirement, "figure", None)
    comparison = getattr(requirement, "comparison", None)
    if figure not in FIGURE_UNITS:
        raise LimitError(
            f"requirement {_label(requirement)}: unknown figure {figure!r}; "
            f"choose one of: {', '.join(FIGURE_UNITS)}"
        )
    if comparison not in COMPARISONS:
        raise LimitError(
            f"requirement {_label(requirement)}: unknown comparison {comparison!r}; "
            f"use one of {' '.join(COMPARISONS)}"
        )
    return figure, comparison


def _label(requirement: Any) -> str:
    try:
        return repr(requirement.label)
    except Exception:  # a malformed requirement: describe it as best we can
        return repr(requirement)


def _compare(value: np.ndarray, comparison: str, limit: float) -> tuple[np.ndarray, np.ndarray]:
    """(passed, margin) for values against a limit; NaN values fail with NaN margin."""
    value = np.asarray(value, dtype=float)
    if comparison in ("<", "<="):
        margin = limit - value
    else:
        margin = value - limit
    if comparison in ("<", ">"):
        passed = margin > 0
    else:
        passed = margin >= 0
    return passed, margin


def check_requirements(requirements: Sequence[Any], waveforms: Any) -> list[LimitResult]:
    """Check each requirement on one run.

    Parameters
    ----------
    requirements : Requirement objects (figure, probe, comparison, limit).
    waveforms : the run's ``Waveforms``: ``t`` (nt,) s, ``signals`` {label: (nt,)},
        ``units`` {label: unit}.  A requirement's probe must be among the signals
        (its label, e.g. "current through R1").  A ``PowerIn`` probe is a power
        signal, so its ``energy`` figure is ∫ p dt in J.

    Returns
    -------
    list of :class:`LimitResult`, in the order of ``requirements``.
    """
    results = []
    for requirement in requirements:
        figure, comparison = _validated(requirement)
        label = requirement.probe.label
        if label not in waveforms.signals:
            recorded = ", ".join(waveforms.signals) or "nothing"
            raise LimitError(
                f"requirement {_label(requirement)} needs the {label!r} waveform, but the run recorded "
                f"{recorded}; record {label} as well"
            )
        unit = waveforms.units.get(label, getattr(requirement.probe, "unit", ""))
        start, stop = getattr(requirement, "start", None), getattr(requirement, "stop", None)
        if start is not None or stop is not None:  # over part of the run
            if np.ndim(waveforms.signals[label]) != 1:
                value = np.zeros(np.shape(waveforms.signals[label])[:-1])  # refused just below
            else:
                value = run_figure(figure, waveforms, label, start, stop)
        else:
            value = carried_figure(figure, waveforms, label)  # integrals, located extrema
            if value is None:
                value = measure(figure, waveforms.t, waveforms.signals[label], signal_unit=unit)
        if np.ndim(value) != 0:
            raise LimitError(
                f"requirement {_label(requirement)}: the {label!r} waveform holds several runs "
                f"(shape {np.shape(waveforms.signals[label])}); check batches with check_requirements_batch"
            )
        passed, margin = _compare(value, comparison, float(requirement.limit))
        value_f = float(value)
        reason = ""
        if np.isnan(value_f):
            reason = "not measurable: " + unmeasurable_reason(figure)
        elif not passed:
            reason = (
                f"measured {value_f:g} {figure_unit(figure, unit)} does not meet "
                f"{comparison} {float(requirement.limit):g}"
            )
        results.append(
            LimitResult(
                requirement=requirement,
                value=value_f,
                unit=figure_unit(figure, unit),
                passed=bool(passed),
                margin=float(margin),
                reason=reason,
            )
        )
    return results


def all_passed(results: Sequence[LimitResult]) -> bool:
    """True when every requirement passed (and vacuously when there are none)."""
    return all(r.passed for r in results)


def figure_key(requirement: Any) -> tuple:
    """The key of a requirement's figure in a batch's figure table: (figure, what it is taken
    of) — the probe's label, with the window for a figure over part of the run
    ("current through F1, 0 s – 10 ms", see ``Requirement.quantity``)."""
    quantity = getattr(requirement, "quantity", None) or requirement.probe.label
    return (requirement.figure, quantity)


def figures_needed(requirements: Sequence[Any]) -> list[tuple]:
    """The distinct figure keys (:func:`figure_key`) a batch must measure for these requirements."""
    keys: dict[tuple, None] = {}
    for requirement in requirements:
        _validated(requirement)
        keys.setdefault(figure_key(requirement), None)
    return list(keys)


def _batch_values(requirements: Sequence[Any], figures: Mapping[tuple[str, str], Any]):
    columns, n = [], None
    for requirement in requirements:
        figure, comparison = _validated(requirement)
        key = figure_key(requirement)
        if key not in figures:
            raise LimitError(
                f"requirement {_label(requirement)} needs the figure {key!r}, which the batch did not "
                f"measure; measured: {', '.join(map(repr, figures)) or 'nothing'}"
            )
        values = np.asarray(figures[key], dtype=float)
        if values.ndim != 1 or (n is not None and values.size != n):
            raise LimitError(
                f"figure {key!r} must be a 1-D array with one value per sample (N = {n}), got shape {values.shape}"
            )
        n = values.size
        columns.append(_compare(values, comparison, float(requirement.limit)))
    return columns, n


def check_requirements_batch(
    requirements: Sequence[Any], figures: Mapping[tuple[str, str], Any]
) -> np.ndarray:
    """Pass / fail of every requirement for every sample of a batch.

    Parameters
    ----------
    requirements : r Requirement objects.
    figures : {(figure, probe label): (N,) values} measured per sample (see
        :func:`figures_needed`).

    Returns
    -------
    (N, r) bool array; NaN figures fail.  With no requirements, shape (N, 0) when N is
    known from ``figures``, else (0, 0).
    """
    columns, n = _batch_values(requirements, figures)
    if not columns:
        n = len(next(iter(figures.values()))) if figures else 0
        return np.zeros((n, 0), dtype=bool)
    return np.stack([passed for passed, _ in columns], axis=-1)


def requirement_margins_batch(
    requirements: Sequence[Any], figures: Mapping[tuple[str, str], Any]
) -> np.ndarray:
    """Margins (N, r) in each figure's unit, same convention as :class:`LimitResult`; NaN
    where the figure is NaN."""
    columns, n = _batch_values(requirements, figures)
    if not columns:
        n = len(next(iter(figures.values()))) if figures else 0
        return np.zeros((n, 0))
    return np.stack([margin for _, margin in columns], axis=-1)
