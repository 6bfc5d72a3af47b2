"""Figures by name: dispatch with option checks, their units, and the standard summary of a run.

:func:`measure` looks a figure up by name, checks its options and measures it;
:data:`FIGURE_UNITS` and :func:`figure_unit` give the unit of each figure;
:func:`summarise` gives the standard figures of every signal of a run.  The
figures themselves, and the conventions they share (``t`` in s, ``y`` of shape
``(..., nt)``, values of shape ``y.shape[:-1]`` in SI units), are in
:mod:`circuitode.analysis.figures`; they and :class:`MeasurementError` are re-exported
here, so ``from circuitode.analysis.measure import peak`` keeps working.
"""
from __future__ import annotations

import inspect
from typing import Any, Callable

import numpy as np

from .figures import (
    RINGING_MISFIT,
    RINGING_NOISE,
    MeasurementError,
    damped_frequency,
    damping_ratio,
    energy,
    final,
    i2t,
    max_slope,
    mean,
    minimum,
    overshoot,
    peak,
    rise_time,
    rms,
    settled,
    settling_time,
    time_of_peak,
    undershoot,
)
from .figures._common import _checked, trusted_clocks
from .figures.step import has_step
from .figures.window import window_bounds, window_groups
from .between_rows import carried_figure

__all__ = [
    "MeasurementError",
    "FIGURE_UNITS",
    "RINGING_NOISE",
    "RINGING_MISFIT",
    "STANDARD_FIGURES",
    "figure_unit",
    "trusted_clocks",
    "peak",
    "time_of_peak",
    "minimum",
    "final",
    "overshoot",
    "undershoot",
    "rise_time",
    "settling_time",
    "rms",
    "mean",
    "i2t",
    "energy",
    "max_slope",
    "damping_ratio",
    "damped_frequency",
    "measure",
    "summarise",
]

#: Unit of each figure; "{s}" stands for the signal's own unit.  "" is dimensionless.
FIGURE_UNITS: dict[str, str] = {
    "peak": "{s}",
    "time_of_peak": "s",
    "minimum": "{s}",
    "final": "{s}",
    "overshoot": "%",
    "undershoot": "%",
    "rise_time": "s",
    "settling_time": "s",
    "rms": "{s}",
    "mean": "{s}",
    "i2t": "{s}²s",
    "energy": "J",
    "max_slope": "{s}/s",
    "damping_ratio": "",
    "damped_frequency": "Hz",
}

#: Figures :func:`summarise` reports for every signal (plus i2t for currents, energy for power).
STANDARD_FIGURES = (
    "peak",
    "time_of_peak",
    "minimum",
    "final",
    "overshoot",
    "rise_time",
    "settling_time",
    "rms",
    "damping_ratio",
    "damped_frequency",
)


def figure_unit(figure: str, signal_unit: str) -> str:
    """Unit of ``figure`` measured on a signal in ``signal_unit`` (e.g. ``("i2t", "A") -> "A²s"``)."""
    try:
        pattern = FIGURE_UNITS[figure]
    except KeyError:
        raise MeasurementError(_unknown_figure(figure)) from None
    return pattern.replace("{s}", signal_unit)


# --------------------------------------------------------------------------
# Dispatch by name, and the standard summary of a run
# --------------------------------------------------------------------------

_FUNCTIONS: dict[str, Callable[..., np.ndarray]] = {
    "peak": peak,
    "time_of_peak": time_of_peak,
    "minimum": minimum,
    "final": final,
    "overshoot": overshoot,
    "undershoot": undershoot,
    "rise_time": rise_time,
    "settling_time": settling_time,
    "rms": rms,
    "mean": mean,
    "i2t": i2t,
    "energy": energy,
    "max_slope": max_slope,
    "damping_ratio": damping_ratio,
    "damped_frequency": damped_frequency,
}


def _unknown_figure(figure: Any) -> str:
    return f"unknown figure {figure!r}; choose one of: {', '.join(_FUNCTIONS)}"


def _options_of(function: Callable) -> tuple[str, ...]:
    return tuple(
        name for name, p in inspect.signature(function).parameters.items() if p.kind is p.KEYWORD_ONLY
    )


def measure(figure: str, t, y, *, signal_unit: str, window: tuple | None = None, **options: Any) -> np.ndarray:
    """Measure ``figure`` (a name of :data:`FIGURE_UNITS`) on ``y`` sampled at ``t``.

    Parameters
    ----------
    figure : canonical figure name, e.g. ``"peak"``, ``"i2t"``, ``"settling_time"``.
    t : (nt,) s.  y : (..., nt) in ``signal_unit``.
    signal_unit : unit of ``y`` ("V", "A", "W" …); energy needs a power signal ("W").
    window : (start, stop) in s, either None for the start or end of the record: the figure
        of that part alone (its settling time counts from ``start``, its step runs from the
        value at ``start`` to the value at ``stop``; see :mod:`.figures.window` for rows that
        repeat at an event).  Over a run, :func:`circuitode.analysis.windows.run_figure` takes
        integrals and peaks from the solution itself.
    **options : the figure function's keyword options (``band``, ``start``, ``final`` …).

    Returns
    -------
    ndarray of shape ``y.shape[:-1]`` in ``figure_unit(figure, signal_unit)``.

    Examples
    --------
    An inrush current of 2 A decaying with τ = 1 ms; ∫ i² dt = 2τ (1 − e⁻¹⁰) ≈ 2 mA²s:

    >>> import numpy as np
    >>> t = np.linspace(0.0, 5e-3, 5001)
    >>> i = 2.0 * np.exp(-t / 1e-3)
    >>> float(measure("peak", t, i, signal_unit="A"))
    2.0
    >>> round(float(measure("i2t", t, i, signal_unit="A")), 6), figure_unit("i2t", "A")
    (0.002, 'A²s')
    """
    function = _FUNCTIONS.get(figure) if isinstance(figure, str) else None
    if function is None:
        raise MeasurementError(_unknown_figure(figure))
    if figure == "energy" and signal_unit != "W":
        raise MeasurementError(
            f"energy is the integral of a power signal (W), but this signal is in {signal_unit!r}; "
            "record the power in the element instead"
        )
    allowed = _options_of(function)
    unknown = sorted(set(options) - set(allowed))
    if unknown:
        choices = ", ".join(allowed) if allowed else "none"
        raise MeasurementError(
            f"figure {figure!r} has no option {', '.join(unknown)}; its options: {choices}"
        )
    for name, value in options.items():
        if value is None:
            continue
        try:
            np.asarray(value, dtype=float)
        except (TypeError, ValueError):
            raise MeasurementError(f"option {name} of figure {figure!r} must be a number, got {value!r}") from None
    if window is not None:
        return _in_window(function, t, y, window, options)
    if not options and figure in _ROW_WISE:
        rows = _row_blocks(t, y)
        if rows:
            _checked(t, y)  # bad input is reported for the whole batch, as without blocks
            t, y = np.asarray(t, dtype=float), np.asarray(y, dtype=float)
            clocks = [t if t.ndim == 1 else t[r] for r in rows]
            with trusted_clocks(*clocks, checked=True):  # checked above, whole
                return np.concatenate([function(c, y[r]) for c, r in zip(clocks, rows)])
    return function(t, y, **options)


def _in_window(function: Callable, t, y, window, options) -> np.ndarray:
    """``function`` on the rows of ``window`` = (start, stop) s; a batch with one clock per
    sample is measured group by group of samples whose windows hold the same rows."""
    try:
        start, stop = window
    except (TypeError, ValueError):
        raise MeasurementError(f"window must be (start, stop) in s, either None; got {window!r}") from None
    start, stop = (None if v is None else float(v) for v in (start, stop))
    t, y = _checked(t, y)
    if t.ndim == 1:
        lo, hi = window_bounds(t, start, stop)
        return function(t[lo:hi + 1], y[..., lo:hi + 1], **options)
    out = np.full(y.shape[:-1], np.nan)
    flat_t, flat_y = t.reshape(-1, t.shape[-1]), y.reshape(-1, y.shape[-1])
    flat = out.reshape(-1)
    for idx, rows in window_groups(flat_t, start, stop):
        flat[idx] = function(flat_t[idx, rows], flat_y[idx, rows], **options)
    return out


#: Figures computed row by row, with several whole-batch temporaries: without options a
#: large batch is measured a block of rows at a time, bit-identical (each reduction runs
#: along its own row) and with the temporaries kept in cache.
_ROW_WISE = frozenset(("overshoot", "undershoot", "settling_time", "rms", "mean", "i2t", "energy"))
_BLOCK_BYTES = 1 << 20  # per temporary array: small enough to stay in cache


def _row_blocks(t, y) -> list:
    """Slices of the rows of a large (N, nt) batch, about _BLOCK_BYTES of samples each, when
    t is one clock (nt,) or one per row (N, nt); [] when blocks would not help."""
    if not (isinstance(y, np.ndarray) and isinstance(t, np.ndarray) and y.ndim == 2
            and (t.ndim == 1 or t.shape == y.shape) and y.dtype == float and t.dtype == float):
        return []
    step = max(1, _BLOCK_BYTES // max(1, 8 * y.shape[1]))
    if y.shape[0] <= step:
        return []
    return [slice(a, a + step) for a in range(0, y.shape[0], step)]


def summarise(waveforms: Any) -> dict[str, dict[str, tuple[Any, str]]]:
    """The standard figures of every recorded signal of a run.

    Parameters
    ----------
    waveforms : an object with ``t`` (nt,) s, ``signals`` {label: (..., nt)} and
        ``units`` {label: unit} (the transient engine's ``Waveforms``).

    Returns
    -------
    {label: {figure: (value, unit)}} with :data:`STANDARD_FIGURES`, plus ``i2t`` for
    currents (unit "A") and ``energy`` for power signals (unit "W").  Values are
    numpy values (floats for a single run); figures that do not apply are NaN —
    in particular the step figures (overshoot, undershoot, rise and settling time)
    of a signal that returns to where it began, such as an inrush current pulse,
    or that has not settled by the end of the run (AC, still ringing).  ``settled``
    (a bool, unit "") says whether ``final`` is a final state level (see
    :func:`~circuitode.analysis.figures.levels.settled`).  Mean, rms, I²t
    and energy come from the run's own integrals when it carries them
    (``waveforms.integrals``; exact with the exact method), else from the rows.  Default options
    throughout: the time of peak is an instant on the run's clock, and the settling
    time counts from the start of the run (not from a later switching instant).
    """
    t = waveforms.t
    out: dict[str, dict[str, tuple[Any, str]]] = {}
    for label, y in waveforms.signals.items():
        unit = waveforms.units.get(label, "")
        y = np.asarray(y, dtype=float)
        figures = list(STANDARD_FIGURES)
        if unit == "A":
            figures.append("i2t")
        if unit == "W":
            figures.append("energy")
        # Step figures need a step: a signal that moved and came back (an inrush
        # pulse) or one that never settles (AC, still ringing) has no final state
        # level to refer to, so its overshoot or rise time would mean nothing.
        values = {name: _whole_window(name, waveforms, label, t, y, unit) for name in figures}
        pulse = _is_pulse(y)
        no_step = pulse | np.isnan(values["settling_time"])
        row = {}
        for name, value in values.items():
            if name in _STEP_FIGURES:
                value = np.where(no_step, np.nan, value)
            row[name] = (_plain(value), figure_unit(name, unit))
        swing = np.max(y, axis=-1) - np.min(y, axis=-1)
        stepped = has_step(y[..., -1] - y[..., 0], swing)
        # a step from initial to final (IEEE 181)?  False: it moved but ends ≈ where it began; None: never moved
        row["step"] = ((None if not swing > 0 else bool(stepped)) if np.ndim(stepped) == 0 else stepped, "")
        flag = settled(t, y)  # is `final` a final state level or a snapshot of motion?
        row["settled"] = (bool(flag) if np.ndim(flag) == 0 else flag, "")
        out[label] = row
    return out


def _whole_window(name: str, waveforms: Any, label: str, t, y, unit: str) -> Any:
    """A figure over the whole run: integrals from the run's own (exact, or over the method's dense output)
    integrals when it carries them, anything else from the rows."""
    carried = carried_figure(name, waveforms, label) if np.ndim(y) == 1 else None
    return carried if carried is not None else measure(name, t, y, signal_unit=unit)


#: Figures that refer to a step from the initial to the final level.
_STEP_FIGURES = ("overshoot", "undershoot", "rise_time", "settling_time")


def _is_pulse(y: np.ndarray) -> np.ndarray:
    """True where the signal ends near where it began although it moved: an inrush pulse,
    or a current that rings to 61 A and ends at 2 A, rather than a step, for which step
    figures would divide by a vanishing amplitude: |final − initial| < NO_STEP × (max − min)
    (:func:`~circuitode.analysis.figures.step.has_step`)."""
    swing = np.max(y, axis=-1) - np.min(y, axis=-1)
    return (swing > 0) & ~has_step(y[..., -1] - y[..., 0], swing)


def _plain(value: np.ndarray) -> Any:
    value = np.asarray(value)
    return float(value) if value.ndim == 0 else value
