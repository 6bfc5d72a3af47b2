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

__all__ = ["IntegralTally"]


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

    def request(self, C: np.ndarray, D: np.ndarray) -> OutputIntegrals:
        """The request for a segment whose outputs are ``C x + D u`` (rows as ``row_of``)."""
        return OutputIntegrals(C, D, self.pairs)

    def add(self, found: IntegralValues | None) -> None:
        """Add one segment's integrals; a segment without them voids the sums."""
        if found is None or self.total is None:
            self.total = None
            return
        self.total = self.total + found

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
