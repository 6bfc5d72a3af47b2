"""Integrals of the recorded quantities over the whole window, summed segment by segment.

The transient driver asks its integrator, segment by segment, for ∫ y dt of every
linear output and ∫ y² dt (∫ v·i dt for a power probe); this module builds those
requests from a configuration's output rows, adds up the answers and hands each
recorded quantity its two integrals.  The figures (mean, rms, I²t, energy) are
then as good as the integrator — exact to rounding with the exact method —
instead of a trapezoid over the output rows.
"""
from __future__ import annotations

from typing import Sequence

import numpy as np

from ..model import CurrentThrough, PowerIn, VoltageAcross
from ..solvers.integrals import IntegralValues, OutputIntegrals

__all__ = ["IntegralTally", "SegmentIntegrals", "window_marks"]


class IntegralTally:
    """Requests and running sums of the output integrals of one run.

    Parameters
    ----------
    wanted : the recorded probes (a ``PowerIn`` is measured as v·i).
    row_of : label → row of the assembled ``C``, ``D`` (the linear probes).
    """

    def __init__(self, wanted: Sequence, row_of: dict[str, int]):
        self.wanted = list(wanted)
        self.row_of = dict(row_of)
        k = len(row_of)
        powers = [(row_of[VoltageAcross(p.element).label], row_of[CurrentThrough(p.element).label])
                  for p in self.wanted if isinstance(p, PowerIn)]
        self.pairs = np.array([(j, j) for j in range(k)] + powers, dtype=int).reshape(-1, 2)
        self._power_index = {p.label: k + j for j, p in
                             enumerate(q for q in self.wanted if isinstance(q, PowerIn))}
        self.total: IntegralValues | None = IntegralValues(np.zeros(k), np.zeros(len(self.pairs)))
        self.spans: list[tuple[float, float]] = []  # each segment's [t0, t1], s
        self.pieces: list[IntegralValues] = []

    def request(self, C: np.ndarray, D: np.ndarray) -> OutputIntegrals:
        """The request for a segment whose outputs are ``C x + D u`` (rows as ``row_of``)."""
        return OutputIntegrals(C, D, self.pairs)

    def add(self, found: IntegralValues | None, t0: float = float("nan"), t1: float = float("nan")) -> None:
        """Add one segment's integrals over [t0, t1] (s); a segment without them voids the sums."""
        if found is None or self.total is None:
            self.total = None
            return
        self.total = self.total + found
        self.spans.append((float(t0), float(t1)))
        self.pieces.append(found)

    def segments(self) -> "SegmentIntegrals | None":
        """The per-segment integrals, for figures over part of the run; None when some
        segment gave none."""
        if self.total is None or not self.pieces:
            return None
        return SegmentIntegrals(self, np.array(self.spans, dtype=float).reshape(-1, 2),
                                np.stack([p.linear for p in self.pieces]),
                                np.stack([p.products for p in self.pieces]))

    def by_label(self) -> dict[str, tuple[float, float]]:
        """label → (∫ y dt, ∫ y² dt) over the run; for a power probe (∫ p dt, NaN), as
        ∫ p² dt would need fourth moments.  Empty when some segment gave none."""
        if self.total is None:
            return {}
        out = {}
        for p in self.wanted:
            if isinstance(p, PowerIn):
                out[p.label] = (float(self.total.products[self._power_index[p.label]]), float("nan"))
            else:
                j = self.row_of[p.label]
                out[p.label] = (float(self.total.linear[j]), float(self.total.products[j]))
        return out


class SegmentIntegrals:
    """The integrals of every segment of a run, summed over any window whose ends are
    segment ends (the driver makes a requirement's window ends segment stops), so a
    figure over part of the run is as exact as one over the whole.

    spans : (S, 2) s, each segment's [t0, t1].  linear : (S, k), products : (S, p).
    """

    def __init__(self, tally: IntegralTally, spans: np.ndarray, linear: np.ndarray, products: np.ndarray):
        self.wanted, self.row_of, self._power_index = tally.wanted, tally.row_of, tally._power_index
        self.spans, self.linear, self.products = spans, linear, products

    def over(self, start: float, stop: float, slack: float = 0.0) -> dict[str, tuple[float, float]]:
        """label → (∫ y dt, ∫ y² dt) over [start, stop] (s), as :meth:`IntegralTally.by_label`;
        empty when a window end falls inside a segment (then it cannot be exact)."""
        t0, t1 = self.spans[:, 0], self.spans[:, 1]
        if np.any((t0 < start - slack) & (t1 > start + slack)) or np.any((t0 < stop - slack) & (t1 > stop + slack)):
            return {}
        inside = (t0 >= start - slack) & (t1 <= stop + slack)
        linear = self.linear[inside].sum(axis=0)
        products = self.products[inside].sum(axis=0)
        out = {}
        for p in self.wanted:
            if isinstance(p, PowerIn):
                out[p.label] = (float(products[self._power_index[p.label]]), float("nan"))
            else:
                j = self.row_of[p.label]
                out[p.label] = (float(linear[j]), float(products[j]))
        return out


def window_marks(requirements, until: float) -> np.ndarray:
    """The ends of the requirements' windows strictly inside (0, until), s, sorted: each becomes a
    segment stop and a row, so a figure over the window is taken from the solution up to its ends."""
    ends = [e for r in requirements for e in (getattr(r, "start", None), getattr(r, "stop", None))
            if e is not None and 1e-12 * until < e < until * (1 - 1e-12)]
    return np.unique(np.array(ends, dtype=float))
