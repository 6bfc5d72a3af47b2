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

from ..errors import IntegrationError
from .base import Integrator, SegmentResult, generator_matrices
from .integrals import IntegralValues
from .augmented import AugmentedIntegrals

__all__ = ["ScipyIntegrator", "RK45", "DOP853", "Radau", "BDF", "SPARSE_FROM", "INTERPOLATION_REACH",
           "ROW_ERROR_FACTOR"]

#: The largest step is at most this many output steps: the rows come from the
#: method's dense interpolant, whose error over a step as long as a whole segment
#: reached 10× rtol (DOP853 on an RC charge over 40 ms); with this bound the
#: worst row error on the RC, RLC and coupled-inductor checks is below
#: ROW_ERROR_FACTOR × (rtol·max|y| + atol) (tests/test_method_accuracy.py).
INTERPOLATION_REACH = 100
#: The documented bound on row errors, in units of rtol·max|y| + atol (see above).
ROW_ERROR_FACTOR = 10.0
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
        import scipy.sparse as sp

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


#: Gauss–Legendre nodes per accepted step for the output integrals: exact for the
#: polynomial interpolants (degree ≤ 7 for DOP853, so y² has degree ≤ 14 < 2·8).
_QUADRATURE_NODES = 8


def _interpolant_integrals(dense, segment, held, request, end: float) -> IntegralValues:
    """∫ y dt and ∫ y_a y_b dt from t0 to ``end`` over the method's own dense output
    (its interpolant between accepted steps), by Gauss–Legendre per step.

    The interpolant is what the method itself says the solution is between its steps,
    so the integrals carry the method's error (not the output step's); the steps and
    their error control are those of the plain run.
    """
    ts = np.asarray(dense.ts, dtype=float)
    ts = np.unique(np.clip(ts, segment.t0, end))
    a, b = ts[:-1], ts[1:]
    x, w = np.polynomial.legendre.leggauss(_QUADRATURE_NODES)
    nodes = (0.5 * (a[:, None] + b[:, None]) + 0.5 * (b - a)[:, None] * x[None, :]).reshape(-1)
    weights = (0.5 * (b - a)[:, None] * w[None, :]).reshape(-1)
    if nodes.size == 0:
        return IntegralValues(np.zeros(request.C.shape[0]), np.zeros(request.pairs.shape[0]))
    states = np.asarray(dense(nodes), dtype=float).reshape(segment.n_states, nodes.size)
    y = request.C @ states
    if request.D.size:
        u = np.broadcast_to(held[:, None], (held.size, nodes.size)) if held is not None \
            else segment.input_values(nodes).T
        y = y + request.D @ u
    products = y[request.pairs[:, 0]] * y[request.pairs[:, 1]]
    return IntegralValues(y @ weights, products @ weights)


class ScipyIntegrator(Integrator):
    """Common driver for the solve_ivp methods; subclasses name the scipy class."""

    adaptive = True
    scipy_method: str = "RK45"  # a class of scipy.integrate, by name: scipy.integrate loads on first use
    integrates_outputs = True
    #: True: the integrals are extra states under the method's error control
    #: (:mod:`.augmented`); False (the default): quadrature over the dense output of the
    #: plain run.  Measured against closed forms (tests/test_integral_accuracy.py) the
    #: extra states are not more accurate — the error of both is the global error of the
    #: states themselves — and take up to twice the steps (radau on an RC charge), so the
    #: dense output stays the default; the README's accuracy table gives both factors.
    integrals_as_states = False

    def _solve_segment(self, segment, t_out, events, integrals=None):
        A, B = segment.A, segment.B
        n = segment.n_states
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
        n_all = n
        augmented = None
        if integrals is not None and self.integrals_as_states:
            augmented = AugmentedIntegrals(A, B, integrals.C, integrals.D, integrals.pairs,
                                           lambda t: segment.input_values(np.array([t]))[0], held,
                                           self.atol, segment.t1 - segment.t0)
            rhs, n_all = augmented.rhs, augmented.size

        def make_event(event):
            # solve_ivp fires on g = 0 → 0; nudging "not yet met" values off zero makes it
            # fire only when the quantity passes the level (LinearEvent.met), not on a touch.
            def g(t, x):
                u = held[None, :] if held is not None else segment.input_values(np.array([t]))
                value = float(event.value(x[:n], u)[0])
                if event.rising:
                    return value if value > 0 else min(value, -tiny)
                return value if value < 0 else max(value, tiny)

            g.terminal = True
            g.direction = 1.0 if event.rising else -1.0
            return g

        span = segment.t1 - segment.t0
        longest = min(self.step, span) if self.step else span
        if t_out.size > 1:  # keep the interpolant that gives the rows within reach of steps
            longest = min(longest, INTERPOLATION_REACH * float(np.max(np.diff(t_out))))
        options = {
            "rtol": self.rtol,
            "atol": self.atol if augmented is None else augmented.atol,
            "max_step": longest,
            "vectorized": True,
        }
        if events and t_out.size > 1:  # crossings are seen at step ends: step no longer than the
            # output spacing, so a watched quantity driven by a source is not stepped over
            options["max_step"] = min(options["max_step"], (t_out[-1] - t_out[0]) / (t_out.size - 1) or span)
        if self.uses_jacobian:
            options["jac"] = jacobian_for(A) if augmented is None else augmented.jacobian
        tally = {"steps": 0}
        # solve_ivp wants strictly increasing t_eval; t1 is last so the end state is known
        t_eval = np.unique(np.append(t_out, segment.t1))
        import scipy.integrate as si

        sol = si.solve_ivp(
            rhs,
            (segment.t0, segment.t1),
            segment.x0 if augmented is None else augmented.start(segment.x0),
            method=_counting(getattr(si, self.scipy_method), tally),
            t_eval=t_eval,
            events=[make_event(e) for e in events] or None,
            dense_output=integrals is not None and augmented is None,
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
            z_end = np.asarray(sol.y_events[event_index][0], dtype=float)
        else:
            event_time = event_index = None
            z_end = sol.y[:, -1]
        x_end = z_end[:n]
        # solve_ivp leaves t and y as empty lists when an event fires before any t_eval
        times = np.asarray(sol.t, dtype=float).reshape(-1)
        states = np.asarray(sol.y, dtype=float).reshape(n_all, times.size)[:n]
        reached = times[times < event_time] if event_time is not None else times
        t_kept = t_out[t_out < event_time] if event_time is not None else t_out
        idx = np.searchsorted(reached, t_kept)
        found = None
        if augmented is not None:
            _, linear, products = augmented.split(z_end)
            found = IntegralValues(linear.copy(), products.copy())
        elif integrals is not None:
            end = event_time if event_time is not None else segment.t1
            found = _interpolant_integrals(sol.sol, segment, held, integrals, end)
        return SegmentResult(t_kept.copy(), states[:, idx].T.copy(),
                             event_time, event_index, np.asarray(x_end, dtype=float), counters,
                             found)


class RK45(ScipyIntegrator):
    """Dormand–Prince 5(4), adaptive explicit."""

    name = "rk45"
    scipy_method = "RK45"


class DOP853(ScipyIntegrator):
    """Dormand–Prince 8(5,3), adaptive explicit, for tight tolerances."""

    name = "dop853"
    scipy_method = "DOP853"


class Radau(ScipyIntegrator):
    """Radau IIA of order 5, implicit, L-stable; for stiff circuits."""

    name = "radau"
    stiff = True
    uses_jacobian = True
    scipy_method = "Radau"


class BDF(ScipyIntegrator):
    """Variable-order backward differentiation formulas, implicit; for large stiff circuits."""

    name = "bdf"
    stiff = True
    uses_jacobian = True
    scipy_method = "BDF"
