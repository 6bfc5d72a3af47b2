"""Source values that differ per sample of a batch (e.g. a pack voltage of 48 V ± 10 %).

Every waveform is *linear* in its level fields — the dc value, a step's before
and after, a ramp's or exponential's initial and final, a pulse's low and high,
a sine's amplitude and offset — with the timing fields held fixed.  So for N
samples

    u_j(t) = Σ_f  level_f[sample] · basis_f(t),

where ``basis_f`` is the waveform with field f set to 1 and its other level
fields to 0.  Values and generator start states of a whole batch are therefore
a small matrix product over the level fields: no Python loop over samples.
Timing fields (delays, periods, rise times, frequencies, time constants,
phases) stay common to the batch, so every sample shares the same breakpoints
and the same generator matrix F.
"""
from __future__ import annotations

from dataclasses import replace
from typing import Mapping

import numpy as np

from .aperiodic import Dc, Exponential, PiecewiseLinear, Ramp, Step
from .periodic import PulseTrain, Sine
from .sources import SourceBank
from .waveforms import LinearGenerator, WaveformError

__all__ = ["LEVEL_FIELDS", "SourceBatch"]

#: The fields of each waveform kind that may differ per sample (the waveform is linear in them).
LEVEL_FIELDS: dict[type, tuple[str, ...]] = {
    Dc: ("value",),
    Step: ("before", "after"),
    Ramp: ("initial", "final"),
    PulseTrain: ("low", "high"),
    Sine: ("amplitude", "offset"),
    Exponential: ("initial", "final"),
    PiecewiseLinear: (),
}


def _bases(waveform) -> list:
    """One waveform per level field: that field 1, the other level fields 0."""
    fields = LEVEL_FIELDS[type(waveform)]
    return [replace(waveform, **{g: float(g == f) for g in fields}) for f in fields]


class SourceBatch:
    """The m inputs of a circuit for N samples whose source levels differ.

    Parameters
    ----------
    bank : the nominal :class:`SourceBank` (``SourceBank.of(circuit)``); its
        ``names`` are the source element names.
    values : {(source name, "waveform.<field>"): (N,) array}, level fields only
        (see :data:`LEVEL_FIELDS`); sources or fields not named keep their
        nominal value.
    size : N, needed only when ``values`` is empty.
    """

    def __init__(self, bank: SourceBank, values: Mapping[tuple[str, str], np.ndarray], size: int | None = None):
        self.bank = bank
        position = {name: j for j, name in enumerate(bank.names)}
        sizes = {np.shape(v)[0] for v in values.values() if np.ndim(v) == 1}
        if any(np.ndim(v) != 1 for v in values.values()) or len(sizes) > 1:
            raise WaveformError("per-sample source values must be 1-D arrays of one common length")
        self.size = sizes.pop() if sizes else (size if size is not None else 1)
        # levels[j] : (N, number of level fields of input j)
        self.levels: list[np.ndarray] = []
        for w in bank.waveforms:
            fields = LEVEL_FIELDS[type(w)]
            self.levels.append(np.tile([float(getattr(w, f)) for f in fields], (self.size, 1)))
        for (name, field_), array in values.items():
            if name not in position:
                raise WaveformError(f"no source named {name!r}; sources are {', '.join(bank.names) or 'none'}")
            w = bank.waveforms[position[name]]
            level = field_.removeprefix("waveform.")
            fields = LEVEL_FIELDS[type(w)]
            if level not in fields:
                kind = type(w).__name__
                raise WaveformError(
                    f"{name}'s {kind} waveform cannot vary {level!r} per sample; only its level fields "
                    f"({', '.join(fields) or 'none'}) may carry a tolerance — timing stays common to a batch")
            array = np.asarray(array, dtype=float)
            if not np.all(np.isfinite(array)):
                raise WaveformError(f"per-sample values of {name}'s {level} must be finite numbers")
            self.levels[position[name]][:, fields.index(level)] = array
        self._bases = [_bases(w) for w in bank.waveforms]

    @property
    def m(self) -> int:
        return self.bank.m

    def values(self, t) -> np.ndarray:
        """Input values, (N, m) for a scalar ``t``, (N, nt, m) for a 1-D ``t`` (s)."""
        arr = np.asarray(t, dtype=float)
        columns = []
        for waveform, levels, bases in zip(self.bank.waveforms, self.levels, self._bases):
            if not bases:  # no level fields: the nominal waveform for every sample
                columns.append(np.broadcast_to(waveform.value_at(arr), (self.size,) + arr.shape))
                continue
            shapes = np.stack([np.asarray(b.value_at(arr), dtype=float) for b in bases], axis=-1)  # (*t, F)
            columns.append(np.einsum("nf,...f->n...", levels, shapes))
        if not columns:
            return np.zeros((self.size,) + arr.shape + (0,))
        return np.stack(columns, axis=-1)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """Breakpoints common to every sample: those of the nominal and of every basis waveform."""
        found = [self.bank.breakpoints(t0, t1)]
        found += [b.breakpoints(t0, t1) for bases in self._bases for b in bases]
        return np.unique(np.concatenate(found))

    def generators(self, t0: float, t1: float) -> LinearGenerator:
        """One generator for all inputs and samples on a breakpoint-free segment.

        F (q, q) and H (m, q) are shared; z0 is (N, q), so that for sample i
        ``u_i(t) = H @ expm(F (t - t0)) @ z0[i]``.
        """
        nominal = self.bank.generators(t0, t1)
        starts = []
        for waveform, levels, bases in zip(self.bank.waveforms, self.levels, self._bases):
            if not bases:
                z0 = waveform.generator(t0, t1).z0
                starts.append(np.broadcast_to(z0, (self.size, z0.size)))
                continue
            basis_z0 = np.stack([b.generator(t0, t1).z0 for b in bases], axis=0)  # (F, q_j)
            starts.append(levels @ basis_z0)
        z0 = np.concatenate(starts, axis=1) if starts else np.zeros((self.size, 0))
        return LinearGenerator(F=nominal.F, z0=z0, H=nominal.H)
