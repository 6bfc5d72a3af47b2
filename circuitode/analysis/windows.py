"""Figures of a run over part of its window: ``require i2t current through F1 from 0 s to 10 ms``.

:func:`run_figure` measures a figure of one recorded quantity of a run, over the
whole run or over [start, stop] (s).  It takes what the run carries beyond its
rows (:mod:`.between_rows`) over the window as well: the driver made each window
end a segment stop and a row (:func:`circuitode.transient.window_integrals.window_marks`),
so the integrals are summed from the exact per-segment integrals, the peaks and
minima are located between the rows inside the window, and the crossings of the
rise and settling times are located on the solution.  Everything else (damping
ratio and frequency, final value, undershoot, max slope) is measured on the rows
inside the window — so the damping ratio of a configuration entered at ``start``
is that configuration's alone, not blurred by an earlier ringing.

A window's figure sees the waveform just after an event at ``start`` and just
before one at ``stop`` (:mod:`.figures.window`); its step runs from the value at
``start`` to the value at ``stop``, and its settling time counts from ``start``.
"""
from __future__ import annotations

from types import SimpleNamespace
from typing import Any

import numpy as np

from ..transient.driver import EVENT_TOL_FRACTION
from ..transient.extrema import refine_extrema
from .between_rows import carried_figure
from .figures.window import window_bounds
from .measure import measure

__all__ = ["run_figure", "window_view"]


class _Shifted:
    """The run's values between rows, with row indices counted from the window's first row."""

    def __init__(self, between, offset: int):
        self.between, self.offset = between, offset

    def knows(self, label: str) -> bool:
        return self.between.knows(label)

    def function(self, label: str, i: int):
        return self.between.function(label, i + self.offset)


def window_view(waveforms: Any, start: float | None, stop: float | None, label: str) -> Any:
    """A view of ``waveforms`` restricted to [start, stop] (s) for ``label``: rows, integrals,
    located extrema and values between rows over the window alone (what
    :func:`~.between_rows.carried_figure` and :func:`~.measure.measure` read)."""
    t = np.asarray(waveforms.t, dtype=float)
    lo, hi = (int(v) for v in window_bounds(t, start, stop))
    rows = slice(lo, hi + 1)
    signals = {label: np.asarray(waveforms.signals[label], dtype=float)[rows]}
    view = SimpleNamespace(t=t[rows], signals=signals, units=waveforms.units, method=waveforms.method,
                           integrals={}, extrema={}, between=None)
    pieces = getattr(waveforms, "segment_integrals", None)
    if pieces is not None:
        slack = 1e-12 * max(abs(float(t[-1])), 1e-300)
        view.integrals = {k: v for k, v in pieces.over(float(t[lo]), float(t[hi]), slack).items() if k == label}
    between = getattr(waveforms, "between", None)
    if between is not None and between.knows(label):
        view.between = _Shifted(between, lo)
        if label in (getattr(waveforms, "extrema", None) or {}):
            xtol = EVENT_TOL_FRACTION * max(abs(float(t[-1])), 1e-300)
            view.extrema = refine_extrema(view.t, np.asarray(between.states)[rows], list(between.configs[rows]),
                                          {label: (between.rows[label], signals[label])}, between.bank, xtol)
    return view


def run_figure(figure: str, waveforms: Any, label: str, start: float | None = None,
               stop: float | None = None) -> float:
    """``figure`` of the recorded ``label`` of a single run, over [start, stop] (s; None for
    the start or the end of the run), in the figure's SI unit (NaN when it cannot be measured).

    The integrals are summed from the run's exact per-segment integrals when both ends are
    segment ends — a requirement's window ends are, since the driver made them stops; for
    other instants the window holds the rows inside it and its integrals are the trapezoid
    over them (give the window as a requirement to have it exact).

    Examples
    --------
    RC charge (1 kΩ, 1 µF, 5 V, exact): I²t of the current over the first time
    constant, V²C/(2R)(1 − e⁻²) (Nilsson & Riedel ch. 7):

    >>> from circuitode.netlist import loads
    >>> from circuitode.transient import simulate
    >>> c = loads('''voltage_source V1 in -- gnd constant 5 V
    ... resistor R1 in -- out 1 kΩ
    ... capacitor C1 out -- gnd 1 uF
    ... ground gnd
    ... transient until 5 ms step 0.7 ms method exact initial rest
    ... require i2t current through R1 from 0 s to 1 ms < 1 A²s''')
    >>> w = simulate(c)
    >>> round(run_figure("i2t", w, "current through R1", 0.0, 1e-3) * 1e9, 6)   # nA²s
    10.808309
    """
    if label not in waveforms.signals:
        raise KeyError(label)
    unit = waveforms.units.get(label, "")
    if start is None and stop is None:
        view = waveforms
    else:
        view = window_view(waveforms, start, stop, label)
    if np.ndim(view.signals[label]) == 1:
        value = carried_figure(figure, view, label)
        if value is not None:
            return float(value)
    return measure(figure, view.t, view.signals[label], signal_unit=unit)
