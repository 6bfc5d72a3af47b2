"""Public bookkeeping shared by every integrator: segments, events, results, the base class.

An integrator solves one *segment*: ``x' = A x + B u(t)`` on ``[t0, t1]`` with
``x(t0) = x0`` and a fixed ``A``, ``B``.  It knows nothing of circuits.  The
public :meth:`Integrator.solve` checks the request and packages the answer;
each subclass keeps its mathematics in the private ``_solve_segment``.

Inputs
------
``segment.inputs`` is any object with

``values(t)``
    ``t`` an array of times (s), shape ``(nt,)``; returns ``u``, shape ``(nt, m)``.
``generators(t0, t1)``
    a :class:`circuitode.model.waveforms.LinearGenerator` with ``u(t) = H @ z(t)``,
    ``z' = F z``, ``z(t0) = z0`` on ``[t0, t1]`` (``H`` shape ``(m, q)``, or
    ``(q,)`` when ``m == 1``).  Only the exact integrator asks for it.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Protocol, Sequence

import numpy as np

from ..errors import CircuitodeError, IntegrationError
from .integrals import IntegralValues, OutputIntegrals

__all__ = [
    "Inputs",
    "LinearSegment",
    "LinearEvent",
    "SegmentResult",
    "Integrator",
    "event_values",
    "first_crossing",
    "generator_matrices",
]


class Inputs(Protocol):
    """What a segment needs to know of its sources (see the module docstring)."""

    def values(self, t: np.ndarray) -> np.ndarray: ...

    def generators(self, t0: float, t1: float) -> Any: ...


@dataclass(frozen=True)
class LinearSegment:
    """One linear time-invariant stretch ``x' = A x + B u(t)``, ``t0 <= t <= t1``.

    A : (n, n) array, 1/s.  B : (n, m) array.  inputs : see :class:`Inputs`.
    t0, t1 : s, ``t1 > t0``.  x0 : (n,) state at ``t0``.
    """

    A: np.ndarray
    B: np.ndarray
    inputs: Inputs
    t0: float
    t1: float
    x0: np.ndarray

    def __post_init__(self) -> None:
        A = np.atleast_2d(np.asarray(self.A, dtype=float))
        n = A.shape[0]
        B = np.asarray(self.B, dtype=float)
        if not (B.ndim == 2 and B.shape[0] == n):
            B = B.reshape(n, -1) if n else np.zeros((0, 0))
        x0 = np.asarray(self.x0, dtype=float).reshape(-1)
        if A.shape != (n, n) or x0.shape != (n,):
            raise IntegrationError(
                f"segment shapes disagree: A is {A.shape}, x0 is {x0.shape}; "
                "A must be square and x0 must have one entry per state"
            )
        if not (np.isfinite(self.t0) and np.isfinite(self.t1) and self.t1 > self.t0):
            raise IntegrationError(
                f"segment [{self.t0}, {self.t1}] s is empty or not finite; give t1 > t0"
            )
        if not (np.all(np.isfinite(A)) and np.all(np.isfinite(B)) and np.all(np.isfinite(x0))):
            raise IntegrationError("segment matrices or initial state contain NaN or infinity")
        object.__setattr__(self, "A", A)
        object.__setattr__(self, "B", B)
        object.__setattr__(self, "x0", x0)

    @property
    def n_states(self) -> int:
        return self.A.shape[0]

    @property
    def n_inputs(self) -> int:
        return self.B.shape[1]

    def input_values(self, t: np.ndarray) -> np.ndarray:
        """Inputs at times ``t`` (nt,) → (nt, m); an empty input set gives (nt, 0).

        Times are nudged inside the segment by 64 ulps of the largest time so that a
        jump of a source exactly at ``t0`` or ``t1`` (a breakpoint) is seen from inside:
        the value just after ``t0`` and just before ``t1``.
        """
        t = np.atleast_1d(np.asarray(t, dtype=float))
        if self.n_inputs == 0:
            return np.zeros((t.size, 0))
        span = self.t1 - self.t0
        nudge = min(64 * np.finfo(float).eps * max(abs(self.t0), abs(self.t1), span), span / 4)
        t = np.clip(t, self.t0 + nudge, self.t1 - nudge)
        return np.asarray(self.inputs.values(t), dtype=float).reshape(t.size, self.n_inputs)

    def derivative(self, t: np.ndarray, x: np.ndarray) -> np.ndarray:
        """``A x + B u(t)`` for states ``x`` (nt, n) at times ``t`` (nt,) → (nt, n)."""
        return x @ self.A.T + self.input_values(t) @ self.B.T


@dataclass(frozen=True)
class LinearEvent:
    """A threshold on a linear output: ``g(t) = c·x + d·u(t) − level``.

    c : (n,) row of C.  d : (m,) row of D.  level : SI value.
    rising : True fires when g goes from zero or below to above zero (the quantity
    rises through ``level``); False fires when g goes from zero or above to below
    zero.  A quantity that merely touches the level does not fire.
    located_at : where an integrator that can (``exact``) puts the instant once a
    crossing of ``level`` is found: the quantity's crossing of ``located_at``, at
    or before it (a diode's event is detected a band past its limit, so that rounding
    noise does not fire it, and located at the limit itself); None: at ``level``.
    """

    c: np.ndarray
    d: np.ndarray
    level: float
    rising: bool = True
    located_at: float | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "c", np.asarray(self.c, dtype=float).reshape(-1))
        object.__setattr__(self, "d", np.asarray(self.d, dtype=float).reshape(-1))
        object.__setattr__(self, "level", float(self.level))

    def value(self, x: np.ndarray, u: np.ndarray) -> np.ndarray:
        """g for states (nt, n) and inputs (nt, m) → (nt,)."""
        x = np.atleast_2d(x)
        u = np.atleast_2d(u)
        g = x @ self.c - self.level
        if self.d.size:
            g = g + u @ self.d
        return g

    def met(self, g: np.ndarray) -> np.ndarray:
        """Whether the condition holds (strictly past the level) for values g (array of bool)."""
        return g > 0.0 if self.rising else g < 0.0


def event_values(events: Sequence[LinearEvent], x: np.ndarray, u: np.ndarray) -> np.ndarray:
    """All events' g for states (nt, n), inputs (nt, m) → (nt, n_events)."""
    if not events:
        return np.zeros((np.atleast_2d(x).shape[0], 0))
    return np.stack([e.value(x, u) for e in events], axis=1)


def first_crossing(events: Sequence[LinearEvent], g: np.ndarray) -> tuple[int, int] | None:
    """First interval k (between rows k and k+1 of g) where some event's condition
    turns from unmet to met, and that event's index; None when there is none.
    Among events in the same interval the lowest index is returned (the caller
    locates each and keeps the earliest)."""
    if g.shape[0] < 2 or g.shape[1] == 0:
        return None
    met = np.stack([e.met(g[:, j]) for j, e in enumerate(events)], axis=1)
    turned = ~met[:-1] & met[1:]
    rows = np.flatnonzero(turned.any(axis=1))
    if rows.size == 0:
        return None
    k = int(rows[0])
    return k, int(np.flatnonzero(turned[k])[0])


def generator_matrices(gen: Any, m: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(F (q, q), z0 (q,), H (m, q)) from a LinearGenerator, accepting a 1-D H when m == 1."""
    F = np.atleast_2d(np.asarray(gen.F, dtype=float))
    z0 = np.asarray(gen.z0, dtype=float).reshape(-1)
    q = z0.size
    if q == 0:
        return np.zeros((0, 0)), z0, np.zeros((m, 0))
    F = F.reshape(q, q)
    H = np.asarray(gen.H, dtype=float).reshape(m, q)
    return F, z0, H


@dataclass(frozen=True)
class SegmentResult:
    """What one segment's integration produced.

    t : (nt,) output times reached, s (those before an event, if one fired).
    x : (nt, n) states at ``t``.
    event_time : s, instant of the first event crossing, or None.
    event_index : index into the events given, or None.
    x_end : (n,) state at ``event_time`` if an event fired, else at ``t1``.
    counters : work done, e.g. ``{"steps": 40, "rhs_evaluations": 160}``.
    integrals : the requested output integrals from ``t0`` to where the segment ended
        (``event_time`` or ``t1``), or None when none were asked for or the method
        cannot give them (see ``Integrator.integrates_outputs``).
    """

    t: np.ndarray
    x: np.ndarray
    event_time: float | None
    event_index: int | None
    x_end: np.ndarray
    counters: dict[str, int] = field(default_factory=dict)
    integrals: IntegralValues | None = None


class Integrator:
    """Base of every integrator; subclasses set the capability attributes and
    implement ``_solve_segment(segment, t_out, events)``.

    Parameters
    ----------
    step : s, fixed step (fixed-step methods) or largest step (others); None for none.
    rtol, atol : solver error tolerances (relative, absolute in state units).
    event_tol : s, how closely an event instant is located.
    """

    name = "base"
    adaptive = False
    stiff = False
    fixed_step = False
    exact = False
    uses_jacobian = False
    #: True when the method can integrate outputs (``solve(..., integrals=...)``): exactly
    #: (``exact``) or over its own dense output (the adaptive and implicit methods).
    integrates_outputs = False

    def __init__(self, *, step: float | None = None, rtol: float = 1e-6, atol: float = 1e-9,
                 event_tol: float = 1e-12):
        if step is not None and not (np.isfinite(step) and step > 0):
            raise CircuitodeError(f"step must be a positive time in seconds, got {step!r}")
        if not (rtol > 0 and atol > 0):
            raise CircuitodeError(f"rtol and atol must be positive, got rtol={rtol!r}, atol={atol!r}")
        if not (event_tol > 0):
            raise CircuitodeError(f"event_tol must be a positive time in seconds, got {event_tol!r}")
        self.step = None if step is None else float(step)
        self.rtol = float(rtol)
        self.atol = float(atol)
        self.event_tol = float(event_tol)

    def __repr__(self) -> str:
        return f"{type(self).__name__}(step={self.step}, rtol={self.rtol}, atol={self.atol})"

    def solve(self, segment: LinearSegment, t_out: Sequence[float] | np.ndarray,
              events: Sequence[LinearEvent] = (),
              integrals: OutputIntegrals | None = None) -> SegmentResult:
        """Integrate one segment.

        Parameters
        ----------
        segment : the linear segment.
        t_out : (k,) nondecreasing output times inside ``[t0, t1]``, s.
        events : thresholds; integration stops at the first crossing, located to
            within ``event_tol`` seconds.
        integrals : outputs to integrate over the segment (see
            :class:`~circuitode.solvers.integrals.OutputIntegrals`); ignored by a
            method whose ``integrates_outputs`` is False (its result has none).

        Returns
        -------
        SegmentResult, states at the output times that precede the event (all of
        them when no event fires).
        """
        t_out = np.asarray(t_out, dtype=float).reshape(-1)
        span = segment.t1 - segment.t0
        slack = 1e-12 * max(span, abs(segment.t1))
        if t_out.size and (t_out[0] < segment.t0 - slack or t_out[-1] > segment.t1 + slack):
            raise IntegrationError(
                f"output times must lie in the segment [{segment.t0:g}, {segment.t1:g}] s"
            )
        if np.any(np.diff(t_out) < 0):
            raise IntegrationError("output times must be sorted in increasing order")
        t_out = np.clip(t_out, segment.t0, segment.t1)
        for e in events:
            if e.c.shape != (segment.n_states,) or e.d.size not in (0, segment.n_inputs):
                raise IntegrationError(
                    f"event rows have shapes {e.c.shape}, {e.d.shape}; expected "
                    f"({segment.n_states},) and ({segment.n_inputs},)"
                )
        if integrals is not None and self.integrates_outputs:
            if integrals.C.shape[1] != segment.n_states or integrals.D.shape[1] not in (0, segment.n_inputs):
                raise IntegrationError(
                    f"output rows for integrals have shapes {integrals.C.shape}, {integrals.D.shape}; "
                    f"expected (k, {segment.n_states}) and (k, {segment.n_inputs})")
            result = self._solve_segment(segment, t_out, tuple(events), integrals)
        else:
            result = self._solve_segment(segment, t_out, tuple(events))
        if not np.all(np.isfinite(result.x_end)):
            raise IntegrationError(
                f"method {self.name} produced NaN or infinite states on "
                f"[{segment.t0:g}, {segment.t1:g}] s; use method exact or radau, or a smaller step"
            )
        return result

    def _solve_segment(self, segment: LinearSegment, t_out: np.ndarray,
                       events: tuple[LinearEvent, ...]) -> SegmentResult:
        raise NotImplementedError
