"""What a single run carries beyond its rows: window integrals, located extrema, fastest seen mode.

Gathered here so the transient driver only hands over its rows and bookkeeping:
the integrals summed from the integrator (:mod:`circuitode.transient.window_integrals`), the
maxima and minima located between rows (:mod:`circuitode.transient.extrema`), and the
fastest mode of the configurations used that a recorded quantity sees
(:mod:`circuitode.solvers.visibility`).
"""
from __future__ import annotations

from typing import Sequence

import numpy as np

from .extrema import BetweenRows, refine_extrema
from ..model import PowerIn
from ..solvers.visibility import fastest_seen_rate
from .window_integrals import IntegralTally

__all__ = ["carried_by_run"]


def carried_by_run(t: np.ndarray, states: np.ndarray, configs: Sequence, used: Sequence, signals: dict,
                   probes: dict, row_of: dict, tally: IntegralTally, bank, event_tol: float) -> dict:
    """The keyword fields ``integrals``, ``segment_integrals``, ``extrema``, ``between`` and ``fastest_seen_rate`` of
    ``Waveforms``.

    t : (nt,) s.  states : (nt, n).  configs : (nt,) StateSpace in force after each row.
    used : the StateSpaces of the configurations used.  signals, probes : by label.
    row_of : label → output row of the linear probes.  tally : the run's integral sums.
    bank : the sources.  event_tol : s, root tolerance for extremum instants.
    """
    linear = {label: (row_of[label], signals[label]) for label in signals
              if not isinstance(probes[label], PowerIn)}
    return {
        "integrals": tally.by_label(),
        "segment_integrals": tally.segments(),
        "extrema": refine_extrema(t, states, configs, linear, bank, event_tol),
        "between": BetweenRows(t, states, configs, {label: j for label, (j, _) in linear.items()}, bank),
        "fastest_seen_rate": max((fastest_seen_rate(ss.A, ss.C) for ss in used), default=0.0),
    }
