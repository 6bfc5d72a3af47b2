"""A circuit's inputs together: the :class:`SourceBank`, and the :data:`Waveform` kinds it holds.

The state space sees its m inputs as one vector u(t).  A :class:`SourceBank`
keeps the circuit's waveforms in the order of the input columns (the sources,
then each diode's constant drop) and stacks what each waveform answers: values
as an (nt, m) array, the union of breakpoints, and one block-diagonal
:class:`~circuitode.model.waveforms.LinearGenerator` for exact integration.
:data:`Waveform` names every kind (:mod:`circuitode.model.aperiodic`,
:mod:`circuitode.model.periodic`).
"""
from __future__ import annotations

from typing import Sequence

import numpy as np

from .aperiodic import Dc, Exponential, PiecewiseLinear, Ramp, Step
from .periodic import PulseTrain, Sine
from .waveforms import LinearGenerator, check_window

__all__ = ["Waveform", "SourceBank"]

Waveform = Dc | Step | Ramp | PulseTrain | Sine | PiecewiseLinear | Exponential


class SourceBank:
    """A circuit's m inputs, in order, evaluated and modelled together.

    Parameters
    ----------
    waveforms : the m waveforms, in the order of the state-space input columns.
    names : optional names (e.g. source element names), one per waveform.
    """

    def __init__(self, waveforms: Sequence[Waveform], names: Sequence[str] | None = None):
        self.waveforms = tuple(waveforms)
        self.names = tuple(names) if names is not None else tuple(f"input {i}" for i in range(len(self.waveforms)))
        if len(self.names) != len(self.waveforms):
            raise ValueError(f"{len(self.names)} names given for {len(self.waveforms)} waveforms")

    @classmethod
    def of(cls, circuit) -> "SourceBank":
        """The bank of ``circuit.inputs`` (the sources, then each diode's constant drop), in
        order (the state-space input order)."""
        return cls([s.waveform for s in circuit.inputs], [s.name for s in circuit.inputs])

    def __len__(self) -> int:
        return len(self.waveforms)

    @property
    def m(self) -> int:
        """Number of inputs."""
        return len(self.waveforms)

    def values(self, t) -> np.ndarray:
        """Input values: (m,) for a scalar ``t``, else (*t.shape, m) — (nt, m) for a 1-D ``t``."""
        arr = np.asarray(t, dtype=float)
        if not self.waveforms:
            return np.zeros(arr.shape + (0,))
        return np.stack([np.asarray(w.value_at(arr), dtype=float) for w in self.waveforms], axis=-1)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """Sorted union of all inputs' breakpoints strictly inside (t0, t1)."""
        check_window(t0, t1)
        if not self.waveforms:
            return np.empty(0)
        return np.unique(np.concatenate([w.breakpoints(t0, t1) for w in self.waveforms]))

    def generators(self, t0: float, t1: float) -> LinearGenerator:
        """All inputs as one generator on a breakpoint-free segment [t0, t1].

        Returns F (total, total) block-diagonal, z0 (total,), H (m, total), so that
        ``u(t) = H @ expm(F (t - t0)) @ z0``.
        """
        parts = [w.generator(t0, t1) for w in self.waveforms]
        sizes = [p.z0.size for p in parts]
        total = int(sum(sizes))
        from scipy.linalg import block_diag  # scipy.linalg loads slowly; only generators need it

        F = block_diag(*[p.F for p in parts]) if parts else np.zeros((0, 0))
        z0 = np.concatenate([p.z0 for p in parts]) if parts else np.zeros(0)
        H = np.zeros((len(parts), total))
        start = 0
        for row, (p, size) in enumerate(zip(parts, sizes)):
            H[row, start : start + size] = p.H
            start += size
        return LinearGenerator(F=np.asarray(F, dtype=float), z0=z0, H=H)
