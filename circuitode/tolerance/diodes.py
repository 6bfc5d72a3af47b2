"""Diodes in a batch: each sample settles its own diodes, samples grouped by configuration.

A diode is watched like a threshold switch with hysteresis (:mod:`.thresholds`):
blocking, its forward voltage rising through ``drop + band``; conducting, its
current falling through ``−band`` (``band`` = :data:`DIODE_BAND` × the sample's
largest state or input magnitude, at least 1, taken when the sample last
settled, as the single run takes it at each segment start).  Its bit in a
sample's configuration code is 1 while it conducts.

When a diode crosses, when a threshold switch acts, at a scheduled change and
at the start of every stretch, :meth:`BatchDiodes.settle` finds each sample's
consistent combination with the single run's rule
(:class:`circuitode.transient.commutation.Commutation`): keep the present
configuration when every conducting diode has current ≥ 0 and every blocking
one voltage ≤ its drop (ties within :data:`DIODE_TIE` decided by the slope)
and the state may enter it; otherwise enumerate the combinations of the
inconsistent diodes (then of all diodes), in the same order, and take the
consistent one with the fewest idle conducting diodes, then the fewest
changes; equally ranked candidates that give every diode the same current are
equivalent (the first is kept).  The work is stacked: samples are grouped by
their configuration and by which diodes are inconsistent, and each candidate is
judged for a whole group at once.

A sample with no consistent combination, several that differ in a current, or
more than :data:`CHATTER_EVENTS` diode changes within :data:`CHATTER_WINDOW`
of the window is marked failed with words; the batch goes on.  The inputs at
an instant are read from the stretch's generator (``u = H z``,
``u′ = H F z``), so every sample is judged at its own instant.
"""
from __future__ import annotations

import itertools

import numpy as np

from ..equations.entry import entry_violations
from ..errors import CircuitodeError
from ..model import Circuit, CurrentThrough, HysteresisRule, VoltageAcross
from ..quantities import format_si
from ..transient.commutation import (CHATTER_EVENTS, CHATTER_WINDOW, DIODE_BAND, DIODE_TIE,
                                     MAX_ENUMERATED)

__all__ = ["BatchDiodes", "diode_rules"]


def diode_rules(circuit: Circuit) -> list:
    """One watch rule per diode, in file order: "conducts when its voltage > drop, blocks
    when its current < 0" (the band is the watch's margin)."""
    return [HysteresisRule(True, VoltageAcross(d.name), True, float(d.drop), back_above=False,
                           back_level=0.0) for d in circuit.diodes]


class BatchDiodes:
    """The diodes of one chunk.

    circuit : the circuit.  cache : the chunk's StateSpaceCache (rows include the voltage
    across and the current through every diode).  key : configuration code (int) →
    switch states.  first_bit : bit of the first diode in a code (the threshold switches
    take the bits below).  until : s, end of the window.  N : samples in the chunk.
    """

    def __init__(self, circuit: Circuit, cache, key, first_bit: int, until: float, N: int):
        self.circuit, self.cache, self.key, self.until = circuit, cache, key, until
        self.diodes = list(circuit.diodes)
        self.d = len(self.diodes)
        self.bits = first_bit + np.arange(self.d)
        self.mask = int(sum(1 << int(b) for b in self.bits))
        self.burst_start = np.full(N, -np.inf)  # chattering: first instant of the burst, s
        self.burst_count = np.zeros(N, dtype=np.int64)
        self.band = np.ones(N) * DIODE_BAND  # (N,) the margin of each sample's events

    @property
    def active(self) -> bool:
        return bool(self.d)

    # ---------------------------------------------------------------- judging
    def _rows(self, ss) -> tuple[list[int], list[int]]:
        labels = ss.output_labels
        return ([labels.index(VoltageAcross(d.name).label) for d in self.diodes],
                [labels.index(CurrentThrough(d.name).label) for d in self.diodes])

    def _judge(self, c: int, samples, x, u, udot, band):
        """Configuration code c for samples (R,) at states x (R, n), inputs u, u′ (R, m):
        (failing (R, d) bool, idle (R,) int, currents (R, d) A, enterable (R,) bool)."""
        R = samples.size
        try:
            ss = self.cache.get(self.key(int(c)))
        except CircuitodeError:
            return np.zeros((R, self.d), bool), np.zeros(R, np.int64), np.zeros((R, self.d)), np.zeros(R, bool)
        enterable = np.ones(R, dtype=bool)
        if ss.sample_ok is not None:
            enterable &= ss.sample_ok[samples]
        if ss.basis is not None:
            enterable &= ~entry_violations(self.circuit, ss, x, atol=4 * band)[0]
        C, D, A, B = ss.C[samples], ss.D[samples], ss.A[samples], ss.B[samples]
        y = np.einsum("rpn,rn->rp", C, x)
        rate = np.einsum("rij,rj->ri", A, x)
        if u.shape[1]:
            y += np.einsum("rpm,rm->rp", D, u)
            rate += np.einsum("rim,rm->ri", B, u)
        ydot = np.einsum("rpn,rn->rp", C, rate)
        if u.shape[1]:
            ydot += np.einsum("rpm,rm->rp", D, udot)
        v_rows, i_rows = self._rows(ss)
        v, i = y[:, v_rows], y[:, i_rows]
        dv, di = ydot[:, v_rows], ydot[:, i_rows]
        tie = (band * DIODE_TIE / DIODE_BAND)[:, None]
        slope_tol = 1e-9 * np.maximum(1.0, np.max(np.abs(ydot[:, v_rows + i_rows]), axis=1))[:, None]
        on = ((int(c) >> self.bits) & 1).astype(bool)[None, :]
        drops = np.array([float(dd.drop) for dd in self.diodes])[None, :]
        g = np.where(on, i, drops - v)
        slope = np.where(on, di, -dv)
        idle = on & (np.abs(i) < tie) & (np.abs(di) <= slope_tol)
        failing = (g <= -tie) | ((np.abs(g) < tie) & (slope < -slope_tol))
        return failing, idle.sum(axis=1), i, enterable

    # ---------------------------------------------------------------- settling
    def settle(self, samples, x, u, udot, t, code, ok, problems) -> np.ndarray:
        """Settle the diodes of samples (K,) at instants t (s, scalar or (K,)) from states
        x (K, n) and inputs u, u′ (K, m): their diode bits in ``code`` become the
        consistent combination; samples with none (or an ambiguous one, or chattering)
        are failed with words in ``problems``.  Returns the (K,) bool of samples whose
        diodes changed."""
        samples = np.asarray(samples)
        K = samples.size
        changed = np.zeros(K, dtype=bool)
        if not self.active or K == 0:
            return changed
        times = np.broadcast_to(np.asarray(t, dtype=float), (K,))
        scale = np.maximum(1.0, np.maximum(np.max(np.abs(x), axis=1, initial=0.0),
                                           np.max(np.abs(u), axis=1, initial=0.0)))
        band = DIODE_BAND * scale
        self.band[samples] = band
        live = ok[samples]
        start = code[samples].copy()
        for c in np.unique(start[live]):
            rows = np.flatnonzero(live & (start == c))
            failing, _, _, enterable = self._judge(c, samples[rows], x[rows], u[rows], udot[rows], band[rows])
            need = ~enterable | failing.any(axis=1)
            if not need.any():
                continue
            rows, failing, enterable = rows[need], failing[need], enterable[need]
            pattern = np.where(enterable, (failing * (1 << np.arange(self.d))).sum(axis=1), -1)
            for p in np.unique(pattern):
                sel = rows[pattern == p]
                group = [] if p < 0 else [j for j in range(self.d) if (int(p) >> j) & 1]
                self._choose(int(c), group, samples, sel, x, u, udot, band, times, code, ok, problems)
        changed = code[samples] != start
        self._count(samples[changed], times[changed], ok, problems)
        return changed

    def _choose(self, c, group, samples, rows, x, u, udot, band, times, code, ok, problems):
        """Enumerate for the rows (of one configuration code c and one failing pattern)."""
        groups = [group] if group else []
        if self.d <= MAX_ENUMERATED and sorted(group) != list(range(self.d)):
            groups.append(list(range(self.d)))
        undecided = rows
        for grp in groups:
            if undecided.size == 0 or len(grp) > MAX_ENUMERATED:
                continue
            trials, fits, ranks, currents = [], [], [], []
            for flips in itertools.product((False, True), repeat=len(grp)):
                trial = c
                for j, flip in zip(grp, flips):
                    if flip:
                        trial ^= 1 << int(self.bits[j])
                if trial == c or trial in trials:
                    continue
                r = undecided
                failing, idle, cur, enterable = self._judge(trial, samples[r], x[r], u[r], udot[r], band[r])
                trials.append(trial)
                fits.append(enterable & ~failing.any(axis=1))
                ranks.append(idle * 64 + bin((trial ^ c) & self.mask).count("1"))
                currents.append(cur)
            if not trials:
                continue
            fits_a = np.stack(fits, axis=1)  # (R, T)
            rank = np.where(fits_a, np.stack(ranks, axis=1), np.iinfo(np.int64).max)
            found = fits_a.any(axis=1)
            best = rank.min(axis=1, keepdims=True)
            tied = fits_a & (rank == best)
            first = np.argmax(tied, axis=1)
            cur = np.stack(currents, axis=1)  # (R, T, d)
            ref = cur[np.arange(first.size), first]  # (R, d)
            same = np.all(np.abs(cur - ref[:, None, :]) <= band[undecided][:, None, None], axis=2)
            ambiguous = found & (tied & ~same).any(axis=1)
            chosen = np.array(trials, dtype=np.int64)[first]
            take = found & ~ambiguous
            code[samples[undecided[take]]] = chosen[take]
            for r in np.flatnonzero(ambiguous):
                options = "; ".join("changing " + ", ".join(self._names(trials[j] ^ c))
                                    for j in np.flatnonzero(tied[r]))
                self._fail(samples[undecided[r]], ok, problems,
                           f"at t = {format_si(float(times[undecided[r]]), 's')} several combinations of "
                           f"diode states are consistent ({options}), so the ideal model cannot decide; "
                           "give the diodes distinct drops or on-resistances")
            undecided = undecided[~found]
        for r in undecided:
            concerned = [self.diodes[j].name for j in (group or range(self.d))]
            self._fail(samples[r], ok, problems,
                       f"at t = {format_si(float(times[r]), 's')} no combination of diode states is "
                       "consistent (every conducting diode with current ≥ 0, every blocking one with "
                       f"voltage ≤ its drop); diodes concerned: {', '.join(concerned)}. Check for diodes "
                       "in anti-parallel with no resistance, or give them an on-resistance")

    def _names(self, flipped: int) -> list[str]:
        return [d.name for j, d in enumerate(self.diodes) if (flipped >> int(self.bits[j])) & 1]

    @staticmethod
    def _fail(i, ok, problems, message: str) -> None:
        if ok[i]:
            problems[int(i)] = message
        ok[i] = False

    def _count(self, samples, times, ok, problems) -> None:
        """Chattering: more than CHATTER_EVENTS diode changes within CHATTER_WINDOW × until."""
        if samples.size == 0:
            return
        window = CHATTER_WINDOW * self.until
        fresh = times - self.burst_start[samples] > window
        self.burst_start[samples[fresh]] = times[fresh]
        self.burst_count[samples] = np.where(fresh, 1, self.burst_count[samples] + 1)
        for i in samples[self.burst_count[samples] > CHATTER_EVENTS]:
            self._fail(i, ok, problems,
                       f"the diodes chatter at t = {format_si(float(self.burst_start[i]), 's')}: more than "
                       f"{CHATTER_EVENTS} diode events within {format_si(window, 's')}; the ideal model "
                       "switches back and forth there. Give the diodes an on-resistance or an "
                       "off-resistance, or add a small snubber across them")
