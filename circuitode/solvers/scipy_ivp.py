"""Adaptive explicit (Dormand–Prince) and stiff implicit (Radau IIA, BDF) integrators,
through :func:`scipy.integrate.solve_ivp`.

The right-hand side is evaluated vectorised over columns.  The implicit methods
receive the constant Jacobian ``A`` (as a scipy.sparse CSC matrix when the
system is large and sparse, so their LU factorisations stay sparse).  Events
are solve_ivp's terminal events with a direction; the largest step never
exceeds the segment.
"""
from __future__ import annotations

import numpy as np
import scipy.integrate as si
import scipy.sparse as sp

from ..errors import IntegrationError
from .base import Integrator, SegmentResult, generator_matrices

__all__ = ["ScipyIntegrator", "RK45", "DOP853", "Radau", "BDF", "SPARSE_FROM"]

#: Systems with at least this many states and at most 10 % nonzeros get a sparse Jacobian.
SPARSE_FROM = 200


def _counting(base: type, tally: dict) -> type:
    """A subclass of a scipy OdeSolver that counts step attempts into ``tally``."""

    class Counted(base):
        def _step_impl(self):
            tally["steps"] += 1
            return super()._step_impl()

    Counted.__name__ = f"Counted{base.__name__}"
    return Counted


def jacobian_for(A: np.ndarray):
    """The Jacobian to hand to an implicit method: sparse CSC when large and sparse."""
    n = A.shape[0]
    if n >= SPARSE_FROM and np.count_nonzero(A) <= 0.1 * n * n:
        return sp.csc_matrix(A)
    return A


def _constant_inputs(segment) -> np.ndarray | None:
    """u (m,) when every input is constant on the segment (its generator has F = 0),
    else None.  Inputs without generators are simply evaluated at each call."""
    if segment.n_inputs == 0:
        return np.zeros(0)
    generators = getattr(segment.inputs, "generators", None)
    if generators is None:
        return None
    try:
        gen = generators(segment.t0, segment.t1)
    except (ValueError, NotImplementedError):
        return None
    if gen is None:
        return None
    F, z0, H = generator_matrices(gen, segment.n_inputs)
    return H @ z0 if not np.any(F) else None


class ScipyIntegrator(Integrator):
    """Common driver for the solve_ivp methods; subclasses name the scipy class."""

    adaptive = True
    scipy_method: type = si.RK45

    def _solve_segment(self, segment, t_out, events):
        A, B = segment.A, segment.B
        held = _constant_inputs(segment)
        if held is not None:  # inputs constant on the segment: no source evaluation per call
            b = B @ held

            def rhs(t, x):
                return A @ x + (b[:, None] if x.ndim == 2 else b)
        else:
            def rhs(t, x):
                forced = B @ segment.input_values(np.array([t]))[0]
                return A @ x + (forced[:, None] if x.ndim == 2 else forced)

        tiny = np.finfo(float).tiny

        def make_event(event):
            # solve_ivp fires on g = 0 → 0; nudging "not yet met" values off zero makes it
            # fire only when the quantity passes the level (LinearEvent.met), not on a touch.
            def g(t, x):
                u = held[None, :] if held is not None else segment.input_values(np.array([t]))
                value = float(event.value(x, u)[0])
                if event.rising:
                    return value if value > 0 else min(value, -tiny)
                return value if value < 0 else max(value, tiny)

            g.terminal = True
            g.direction = 1.0 if event.rising else -1.0
            return g

        span = segment.t1 - segment.t0
        options = {
            "rtol": self.rtol,
            "atol": self.atol,
            "max_step": min(self.step, span) if self.step else span,
            "vectorized": True,
        }
        if events and t_out.size > 1:  # crossings are seen at step ends: step no longer than the
            # output spacing, so a watched quantity driven by a source is not stepped over
            options["max_step"] = min(options["max_step"], (t_out[-1] - t_out[0]) / (t_out.size - 1) or span)
        if self.uses_jacobian:
            options["jac"] = jacobian_for(A)
        tally = {"steps": 0}
        # solve_ivp wants strictly increasing t_eval; t1 is last so the end state is known
        t_eval = np.unique(np.append(t_out, segment.t1))
        sol = si.solve_ivp(
            rhs,
            (segment.t0, segment.t1),
            segment.x0,
            method=_counting(self.scipy_method, tally),
            t_eval=t_eval,
            events=[make_event(e) for e in events] or None,
            **options,
        )
        if sol.status < 0:
            raise IntegrationError(
                f"method {self.name} failed on [{segment.t0:g}, {segment.t1:g}] s: {sol.message}; "
                "use method exact or radau, or loosen rtol/atol"
            )
        counters = {"steps": tally["steps"], "rhs_evaluations": int(sol.nfev)}
        if self.uses_jacobian:
            counters["lu_decompositions"] = int(sol.nlu)
        if sol.status == 1:
            hits = [(float(te[0]), j) for j, te in enumerate(sol.t_events) if te.size]
            event_time, event_index = min(hits)
            x_end = np.asarray(sol.y_events[event_index][0], dtype=float)
        else:
            event_time = event_index = None
            x_end = sol.y[:, -1]
        reached = sol.t[sol.t < event_time] if event_time is not None else sol.t
        t_kept = t_out[t_out < event_time] if event_time is not None else t_out
        idx = np.searchsorted(reached, t_kept)
        return SegmentResult(t_kept.copy(), np.asarray(sol.y[:, idx].T, dtype=float),
                             event_time, event_index, np.asarray(x_end, dtype=float), counters)


class RK45(ScipyIntegrator):
    """Dormand–Prince 5(4), adaptive explicit."""

    name = "rk45"
    scipy_method = si.RK45


class DOP853(ScipyIntegrator):
    """Dormand–Prince 8(5,3), adaptive explicit, for tight tolerances."""

    name = "dop853"
    scipy_method = si.DOP853


class Radau(ScipyIntegrator):
    """Radau IIA of order 5, implicit, L-stable; for stiff circuits."""

    name = "radau"
    stiff = True
    uses_jacobian = True
    scipy_method = si.Radau


class BDF(ScipyIntegrator):
    """Variable-order backward differentiation formulas, implicit; for large stiff circuits."""

    name = "bdf"
    stiff = True
    uses_jacobian = True
    scipy_method = si.BDF
