"""Classic fixed-step fourth-order Runge–Kutta, and its stability guard.

For the linear system ``x' = A x + B u(t)`` the four stages of one classic RK4
step of length h collapse into matrices (Butcher, *Numerical Methods for ODEs*,
ch. 3; the method's stability function is R(z) = 1 + z + z²/2 + z³/6 + z⁴/24):

    x⁺ = R(hA) x + h [P₀ b(t) + Pₘ b(t + h/2) + P₁ b(t + h)],   b = B u
    P₀ = (I + hA + h²A²/2 + h³A³/4)/6,  Pₘ = (4I + 2hA + h²A²/2)/6,  P₁ = I/6

which is exactly the arithmetic of the four stages, done as one matrix–vector
product per step with the forcing precomputed for every step at once.  The
matrices are built once per distinct step length.
"""
from __future__ import annotations

import math

import numpy as np

from ..errors import UnstableStepError
from .base import Integrator, LinearSegment, SegmentResult, event_values, first_crossing
from .roots import brent_root

__all__ = ["RK4", "rk4_stability_limit", "check_rk4_step", "rk4_step_grid"]

_FACTORIALS = np.array([1.0, 1.0, 2.0, 6.0, 24.0])
# The RK4 stability region lies inside |z| < 3 (from memory: it reaches about 2.79 on the
# negative real axis and 2√2 on the imaginary axis), so every ray leaves it before 3.2.
_RAY_REACH = 3.2


def _rk4_gain(z: np.ndarray) -> np.ndarray:
    """|R(z)| for the RK4 stability polynomial, elementwise."""
    return np.abs(1 + z * (1 + z / 2 * (1 + z / 3 * (1 + z / 4))))


def rk4_stability_limit(eigenvalues) -> float:
    """Largest step h (s) with |R(hλ)| ≤ 1 for every given eigenvalue λ (1/s).

    Along each ray z = h λ the first h where |R| exceeds 1 is found by a grid
    search followed by bisection (all eigenvalues at once).  λ = 0 imposes no
    limit; an eigenvalue with Re λ > 0 belongs to a growing system that no step
    can tame, so it imposes none either; |Re λ| ≤ 1e-9 |λ| is treated as on the
    imaginary axis (lossless resonance, limit 2√2/|λ|).

    Parameters
    ----------
    eigenvalues : array_like of complex, any shape.

    Returns
    -------
    float, s; ``inf`` when nothing limits the step.

    Examples
    --------
    >>> round(rk4_stability_limit([-1.0]), 6)        # reach on the negative real axis
    2.785294
    >>> round(rk4_stability_limit([1j, -1j]), 6)     # 2√2 on the imaginary axis
    2.828427
    """
    return float(np.min(_step_limits(eigenvalues), initial=np.inf))


def _step_limits(eigenvalues) -> np.ndarray:
    """Per-eigenvalue largest stable step (s), ``inf`` where none applies; shape (k,)."""
    lam = np.asarray(eigenvalues, dtype=complex).reshape(-1)
    mag = np.abs(lam)
    limits = np.full(lam.shape, np.inf)
    keep = (mag > 0) & np.isfinite(mag) & (lam.real <= 1e-9 * mag)
    if not np.any(keep):
        return limits
    direction = lam[keep] / mag[keep]
    on_axis = np.abs(direction.real) <= 1e-9
    direction = np.where(on_axis, 1j * np.sign(direction.imag), direction)
    tol = 1e-12
    r = np.linspace(0.0, _RAY_REACH, 3201)[1:]
    bad = _rk4_gain(direction[:, None] * r[None, :]) > 1 + tol
    first_bad = np.argmax(bad, axis=1)  # every ray leaves the region before _RAY_REACH
    lo = np.where(first_bad > 0, r[np.maximum(first_bad - 1, 0)], 0.0)
    hi = r[first_bad]
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        ok = _rk4_gain(direction * mid) <= 1 + tol
        lo = np.where(ok, mid, lo)
        hi = np.where(ok, hi, mid)
    limits[keep] = lo / mag[keep]
    return limits


def check_rk4_step(eigenvalues, step: float, where: str = "") -> None:
    """Refuse a fixed RK4 step outside the stability region.

    Raises
    ------
    UnstableStepError
        naming the largest stable step and the methods that have no such limit.
    """
    limits = _step_limits(eigenvalues)
    limit = float(np.min(limits, initial=np.inf))
    if step > limit:
        lam = np.asarray(eigenvalues, dtype=complex).reshape(-1)
        binding = lam[np.argmin(limits)]
        place = f" {where}" if where else ""
        from ..quantities import format_si

        # the suggestion is rounded down to 3 significant digits, so it is itself stable
        scale = 10.0 ** (math.floor(math.log10(limit)) - 2)
        suggestion = math.floor(limit / scale) * scale
        raise UnstableStepError(
            f"step {format_si(step, 's')} is too large for method rk4{place}: the mode with "
            f"eigenvalue {binding.real:.4g}{binding.imag:+.4g}j 1/s needs a step of at most "
            f"{format_si(limit, 's', 6)} to stay stable; give a step of {format_si(suggestion, 's', 3)} "
            "or less, or use method radau or bdf (stiff) or exact",
            largest_stable_step=limit,
        )


def rk4_step_grid(t0: float, t1: float, t_out: np.ndarray, step: float) -> np.ndarray:
    """Step nodes (s): t0, every output time and t1, each gap filled with steps of
    ``step`` whose last one is shortened to land exactly on the next node."""
    marks = np.unique(np.concatenate([[t0], np.asarray(t_out, dtype=float), [t1]]))
    gaps = np.diff(marks)
    counts = np.maximum(np.ceil(gaps / step - 1e-9), 1).astype(int)
    offsets = np.arange(counts.sum()) - np.repeat(np.cumsum(counts) - counts, counts)
    starts = np.repeat(marks[:-1], counts) + step * offsets
    return np.append(starts, marks[-1])


def _rk4_matrices(A: np.ndarray, h: float):
    """(R, P₀, Pₘ, P₁) of one RK4 step of length h (see the module docstring)."""
    n = A.shape[0]
    eye = np.eye(n)
    Z = h * A
    Z2 = Z @ Z
    Z3 = Z2 @ Z
    R = eye + Z + Z2 / 2 + Z3 / 6 + Z3 @ Z / 24
    P0 = (eye + Z + Z2 / 2 + Z3 / 4) / 6
    Pm = (4 * eye + 2 * Z + Z2 / 2) / 6
    return R, P0, Pm, eye / 6


def _rk4_single(segment: LinearSegment, x: np.ndarray, t: float, h: float) -> np.ndarray:
    """One classic RK4 step of length h from (t, x), stage by stage."""
    A, B = segment.A, segment.B
    u = segment.input_values(np.array([t, t + h / 2, t + h]))
    b = u @ B.T
    k1 = A @ x + b[0]
    k2 = A @ (x + h / 2 * k1) + b[1]
    k3 = A @ (x + h / 2 * k2) + b[1]
    k4 = A @ (x + h * k3) + b[2]
    return x + h / 6 * (k1 + 2 * k2 + 2 * k3 + k4)


class RK4(Integrator):
    """Classic fixed-step RK4.  ``step`` (s) is required; outputs lie on the step grid,
    which contains every requested output time."""

    name = "rk4"
    fixed_step = True

    def _solve_segment(self, segment, t_out, events):
        if self.step is None:
            raise UnstableStepError("method rk4 needs a step; give one, or use method exact")
        nodes = rk4_step_grid(segment.t0, segment.t1, t_out, self.step)
        h = np.diff(nodes)
        b_start = segment.input_values(nodes[:-1]) @ segment.B.T
        b_mid = segment.input_values(nodes[:-1] + h / 2) @ segment.B.T
        b_end = segment.input_values(nodes[1:]) @ segment.B.T
        key = np.round(h / self.step, 12)
        lengths, which = np.unique(key, return_inverse=True)
        n = segment.n_states
        R = np.empty((lengths.size, n, n))
        forcing = np.empty((h.size, n))
        for j in range(lengths.size):
            sel = which == j
            hj = float(np.mean(h[sel]))
            R[j], P0, Pm, P1 = _rk4_matrices(segment.A, hj)
            forcing[sel] = hj * (b_start[sel] @ P0.T + b_mid[sel] @ Pm.T + b_end[sel] @ P1.T)
        x = np.empty((nodes.size, n))
        x[0] = segment.x0
        for k in range(h.size):
            x[k + 1] = R[which[k]] @ x[k] + forcing[k]
        counters = {"steps": int(h.size), "rhs_evaluations": 4 * int(h.size)}

        event_time = event_index = None
        x_end = x[-1]
        if events:
            g = event_values(events, x, segment.input_values(nodes))
            hit = first_crossing(events, g)
            if hit is not None:
                k, first = hit
                event_time, event_index, x_end = self._locate(segment, events, g[k], x[k],
                                                              nodes[k], h[k], first)
                counters["steps"] = k + 1
        idx = np.searchsorted(nodes, t_out)
        if event_time is not None:
            keep = t_out < event_time
            idx, t_kept = idx[keep], t_out[keep]
        else:
            t_kept = t_out
        return SegmentResult(t_kept, x[idx], event_time, event_index, x_end, counters)

    def _locate(self, segment, events, g_start, x_start, t_start, h, first):
        """Earliest crossing inside one step, on the RK4 polynomial of a partial step."""
        best = None
        for j, event in enumerate(events):
            def g(s, event=event):
                xs = _rk4_single(segment, x_start, t_start, s)
                return float(event.value(xs, segment.input_values(np.array([t_start + s])))[0])

            end = g(h)
            if event.met(np.array([g_start[j]]))[0] or not event.met(np.array([end]))[0]:
                continue
            s = brent_root(g, 0.0, h, xtol=self.event_tol, rtol=4 * np.finfo(float).eps)
            if best is None or s < best[0]:
                best = (s, j)
        if best is None:  # re-evaluation rounded the crossing away: take the interval's end
            best = (h, first)
        s, j = best
        return t_start + s, j, _rk4_single(segment, x_start, t_start, s)
