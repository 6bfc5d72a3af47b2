"""Threshold switches that never acted during a run, and how near their quantity came.

A contactor that "closes when voltage at link > 43 V" but never closes is the
first thing a reader of a run must learn: every figure after it describes a
circuit the designer did not mean.  For each such switch this gives the
extreme of the watched quantity over the run (its largest value for a ``>``
rule, its smallest for ``<``), from the recorded rows and, when the run
located extrema between rows, from those too.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..model import Circuit, ThresholdRule

__all__ = ["IdleSwitch", "idle_switches"]


@dataclass(frozen=True)
class IdleSwitch:
    """A threshold switch that never changed state.

    switch : its name.  closes : True when it was waiting to close (False: to open).
    quantity : the watched probe's label.  unit : its unit.  above : True for a ``>`` rule.
    level : the threshold (unit).  extreme : the largest (``>``) or smallest (``<``) value the
    quantity reached over the run, or None when the run did not record it.
    """

    switch: str
    closes: bool
    quantity: str
    unit: str
    above: bool
    level: float
    extreme: float | None


def _extreme(waveforms: Any, label: str, above: bool) -> float | None:
    """max (above) or min of a quantity over the run: rows, located extrema, or a state column."""
    if label in waveforms.signals:
        rows = np.asarray(waveforms.signals[label], dtype=float)
    elif label in getattr(waveforms, "state_names", ()):
        rows = np.asarray(waveforms.states[:, list(waveforms.state_names).index(label)], dtype=float)
    else:
        return None
    rows = rows[np.isfinite(rows)]
    if rows.size == 0:
        return None
    value = float(rows.max() if above else rows.min())
    located = getattr(waveforms, "extrema", {}).get(label)
    if located is not None:
        value = max(value, located.maximum) if above else min(value, located.minimum)
    return value


def idle_switches(circuit: Circuit, waveforms: Any) -> list[IdleSwitch]:
    """Threshold switches (with or without hysteresis) that never appear among the run's events."""
    acted = {ev.switch for ev in waveforms.events}
    out = []
    for sw in circuit.switches:
        rule = sw.control
        if not isinstance(rule, ThresholdRule) or sw.name in acted:
            continue
        label = rule.probe.label
        out.append(IdleSwitch(sw.name, rule.closes, label, waveforms.units.get(label, rule.probe.unit),
                              rule.above, float(rule.level), _extreme(waveforms, label, rule.above)))
    return out
