"""Timed switches whose instant differs from sample to sample (a spread on ``closes at``,
or a varied closing angle): each becomes a per-sample event of the batch engine.

A switch that moves once at the instant ``t_i`` of sample i is stepped exactly as a
threshold switch (see :mod:`.thresholds`) watching a *clock*: two more generator
states are appended to each stretch's inputs, ``1`` and ``τ = t − t_i``
(``τ' = 1``), and one more output row reads τ.  The switch "acts when τ > 0",
so each sample moves at its own instant, located by the same bracketed Newton
iterations (exact at once: τ is linear in time) and recorded twice (just before,
just after) like every switching instant; samples are never looped over.

Fields that may vary per sample: ``control.changes.0`` of a switch scheduled to
move once (``closes at 5 ms ± 1 ms``, part name ``K1.at``) and ``control.angle``
of a switch placed on a sine's angle (``closes on angle 90 deg of Vmains``,
part name ``K1.angle``; the instant of each angle is
:meth:`~circuitode.model.AngleSchedule.instants`).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import CircuitodeError
from ..model import AngleSchedule, Circuit, ThresholdRule, TimedSchedule

__all__ = ["TIMING_FIELDS", "Clocks", "timing_refusal"]

#: Switch fields a batch may vary per sample (each a per-sample instant).
TIMING_FIELDS = ("control.changes.0", "control.angle")


def timing_refusal(circuit: Circuit, element: str, field: str) -> str | None:
    """Why switch field ``field`` of ``element`` may not vary per sample, or None when it may."""
    switch = circuit.by_name.get(element)
    control = getattr(switch, "control", None)
    if field == "control.angle" and isinstance(control, AngleSchedule):
        return None
    if field == "control.changes.0" and isinstance(control, TimedSchedule) \
            and not isinstance(control, AngleSchedule) and len(control.changes) == 1:
        return None
    if field.startswith("control.changes.") and isinstance(control, TimedSchedule):
        return (f"switch {element} moves {len(control.changes)} times; a batch varies the instant of a switch "
                "that moves once (write one 'closes at' or 'opens at' with the tolerance, and a second switch "
                "for the other move)")
    return (f"the {field.split('.')[-1].replace('_', ' ')} of switch {element} stays common to every sample; "
            "only the instant of a switch that moves once, or its closing angle, may vary")


@dataclass(frozen=True)
class _ClockRule(ThresholdRule):
    """A switch moving at its own instant: 'acts when τ = t − t_i > 0' (level 0, rising)."""


class Clocks:
    """The per-sample timed switches of a chunk and their clocks.

    switches : indices (into ``circuit.switches``) of the k switches with per-sample instants.
    instants : (N, k) s, each sample's instant of each (≤ 0: at the start).
    rules : k rules for :class:`.thresholds.Watch` (level 0 on the clock rows).
    slack : s, an instant this close to a stretch's start acts at that start.
    """

    def __init__(self, circuit: Circuit, values: dict, N: int, slack: float = 0.0):
        switches, instants, rules = [], [], []
        for i, s in enumerate(circuit.switches):
            keys = [(s.name, f) for f in TIMING_FIELDS if (s.name, f) in values]
            if not keys:
                continue
            (key,) = keys
            reason = timing_refusal(circuit, *key)
            if reason is not None:
                raise CircuitodeError(reason)
            given = np.broadcast_to(np.asarray(values[key], dtype=float), (N,))
            t = s.control.instants(given) if key[1] == "control.angle" else given
            if not np.all(np.isfinite(t)):
                raise CircuitodeError(f"switch {s.name}: a per-sample instant is not a finite number")
            switches.append(i)
            instants.append(np.asarray(t, dtype=float))
            rules.append(_ClockRule(s.control.changes[0][1], None, True, 0.0))
        self.switches = switches
        # an instant at or before 0 acts at the start (strictly met there, as the single run
        # applies a change at t = 0 before stepping)
        stacked = np.stack(instants, axis=1) if instants else np.zeros((N, 0))
        self.instants = np.where(stacked <= 0.0, -np.finfo(float).tiny, stacked)
        self.rules = rules
        self.slack = slack

    @property
    def k(self) -> int:
        return len(self.switches)

    def extend(self, F: np.ndarray, z0: np.ndarray, H: np.ndarray, a: float, N: int):
        """The stretch's generator from instant a (s) with the clock states appended.

        F (q, q), z0 (q,) or (N, q), H (m, q) → F (q+1+k, …), z0 (N, q+1+k), H (m, q+1+k),
        and the (k, q+1+k) rows that read the clocks τ_j = t − t_j.
        """
        q, k = F.shape[0], self.k
        if not k:
            return F, z0, H, None
        F2 = np.zeros((q + 1 + k, q + 1 + k))
        F2[:q, :q] = F
        F2[q + 1:, q] = 1.0  # τ_j' = 1 (the state "1" at column q)
        z = np.empty((N, q + 1 + k))
        z[:, :q] = np.broadcast_to(z0, (N, q))
        z[:, q] = 1.0
        # an instant on the stretch's start (within rounding) is met there, so it acts at once
        # (a threshold acts on a strict crossing, which a clock starting at 0 would never make)
        tau = a - self.instants
        z[:, q + 1:] = np.where(np.abs(tau) <= self.slack, np.finfo(float).tiny, tau)
        H2 = np.zeros((H.shape[0], q + 1 + k))
        H2[:, :q] = H
        read = np.zeros((k, q + 1 + k))
        read[np.arange(k), q + 1 + np.arange(k)] = 1.0
        return F2, z, H2, read
