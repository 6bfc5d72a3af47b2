"""A batch's figures over part of the run (requirements with ``from … to …``, ``after …``).

The batched counterpart of :mod:`circuitode.analysis.windows`: the integrals over
a window are the engine's running sums at its ends (which the engine makes
stretch bounds, so they are exact with the exact method), the other figures are
measured on each sample's rows inside the window.
"""
from __future__ import annotations

import numpy as np

from ..model import Circuit
from ..analysis.figures.window import window_bounds
from ..analysis.measure import measure
from ..analysis.window_integrals import figure_from_integrals

__all__ = ["label_units", "windowed_figure"]


def label_units(circuit: Circuit, probes) -> dict[str, str]:
    """The unit of what each figure key is taken of: probe labels, and the windowed
    quantities of the requirements ("current through F1, 0 s – 10 ms" → "A")."""
    units = {p.label: p.unit for p in probes}
    units.update({r.quantity: r.probe.unit for r in circuit.requirements})
    return units


def windowed_figure(fig: str, r, waves, row: int, unit: str):
    """A requirement's figure over its window for every sample of a chunk: integrals from the
    engine's running sums at the window ends (exact with the exact method), the rest on the
    rows inside the window."""
    start, stop = r.start, r.stop
    cumulative = waves.cumulative_integrals
    end = float(np.max(waves.t[:, -1]))
    if stop is not None and stop >= end * (1 - 1e-12):
        stop = None  # the window runs to the end: the totals
    if start is not None and start <= 1e-12 * end:
        start = None
    if cumulative is not None:
        ends = [waves.integrals if stop is None else cumulative.get(stop),
                None if start is None else cumulative.get(start)]
        if ends[0] is not None and (start is None or ends[1] is not None):
            first = ends[0][row][0] - (0.0 if start is None else ends[1][row][0])
            square = ends[0][row][1] - (0.0 if start is None else ends[1][row][1])
            t = waves.t
            lo, hi = window_bounds(t, start, stop)
            length = t[np.arange(t.shape[0]), hi] - t[np.arange(t.shape[0]), lo]
            carried = figure_from_integrals(fig, first, square, length, unit)
            if carried is not None:
                return carried
    return measure(fig, waves.t, waves.signals[row], signal_unit=unit, window=(start, stop))
