"""Least-squares fit of positive parameters to a measured waveform, with intervals.

One job: given a batched model ``predict(θ) → y`` (K parameter rows in, K
predicted waveforms out, in one call) and the measured samples, find θ within
bounds that minimises Σ (y_meas − y(θ))², in ln θ (so that intervals are
relative and bounds positive).  The Jacobian is taken by forward differences,
all p + 1 rows in one model call (one batch through the engine per iteration).

Intervals: cov(ln θ) = s² (JᵀJ)⁻¹ at the optimum, s² the residual variance; the
interval on θ is θ·exp(±z·se) (first-order, normal; the textbook least-squares
covariance — e.g. Bates & Watts, Nonlinear Regression Analysis, ch. 2, from
memory).  Correlations are those of cov(ln θ).

Identifiability: the singular values of the Jacobian in ln θ, scaled by the
residual norm, tell how strongly the signal pins each direction of ln θ.  When
the smallest over the largest is below :data:`FLAT_RATIO`, the waveform cannot
tell the parameters apart along that direction (e.g. only L·C when just a
frequency is seen) and the fit is refused, naming the direction.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np
from scipy.optimize import least_squares
from scipy.stats import norm

from ..errors import CircuitodeError

__all__ = ["FitError", "NotIdentifiableError", "FitResult", "FLAT_RATIO", "fit_parameters", "flat_direction"]

#: Smallest / largest singular value of the Jacobian in ln θ below which a direction is flat.
FLAT_RATIO = 1e-4
_STEP = 1e-6  # forward-difference step in ln θ


class FitError(CircuitodeError):
    """A fit that cannot be set up (bad bounds, a model that fails)."""


class NotIdentifiableError(CircuitodeError):
    """The measured signal does not determine the chosen parameters separately."""


@dataclass(frozen=True)
class FitResult:
    """names : p parameters.  values : (p,) fitted.  intervals : (p, 2) low, high.
    correlation : (p, p).  residual_rms : in the signal's unit.  at_bound : names that ended on a bound.
    condition : smallest / largest singular value of the Jacobian in ln θ.  confidence : e.g. 0.95.
    evaluations : model calls (batches of p + 1).  offset : the fitted constant (measured − model), when asked."""

    names: tuple[str, ...]
    values: np.ndarray
    intervals: np.ndarray
    correlation: np.ndarray
    residual_rms: float
    at_bound: tuple[str, ...]
    condition: float
    confidence: float
    evaluations: int
    offset: float = 0.0


def flat_direction(J: np.ndarray, names: Sequence[str]) -> tuple[float, str]:
    """(smallest/largest singular value, words for the flattest direction of ln θ)."""
    _, sv, Vt = np.linalg.svd(J, full_matrices=False)
    ratio = float(sv[-1] / sv[0]) if sv[0] > 0 else 0.0
    v = Vt[-1] / np.max(np.abs(Vt[-1]))
    parts = [f"{n}^{c:+.2f}" for n, c in zip(names, v) if abs(c) > 0.05]
    return ratio, " · ".join(parts)


def fit_parameters(
    predict: Callable[[np.ndarray], np.ndarray],
    measured: np.ndarray,
    names: Sequence[str],
    start: Sequence[float],
    lower: Sequence[float],
    upper: Sequence[float],
    *,
    confidence: float = 0.95,
    offset: bool = False,
) -> FitResult:
    """Fit ``names`` so that ``predict`` matches ``measured``.

    Parameters
    ----------
    predict : (K, p) parameter rows → (K, nt) predicted samples, in one call.
    measured : (nt,) samples.  start, lower, upper : (p,) positive SI values.
    offset : also fit a constant added to the model (a probe's offset); it is
        eliminated exactly (residual and Jacobian centred), so it costs no model call.

    Raises
    ------
    NotIdentifiableError : a flat direction of the Jacobian (at the start or at the optimum).
    FitError : bounds that do not enclose the start, or a model that gives non-finite values.
    """
    y = np.asarray(measured, dtype=float)
    x0, lo, hi = (np.log(np.asarray(v, dtype=float)) for v in (start, lower, upper))
    if not (np.all(lo < hi) and np.all(lo <= x0) and np.all(x0 <= hi)):
        raise FitError("each parameter's bounds must enclose its start value with lower < upper")
    p = x0.size
    calls = [0]
    cache: dict[bytes, tuple[np.ndarray, np.ndarray]] = {}

    def both(x):
        key = np.asarray(x, dtype=float).tobytes()
        if key not in cache:
            rows = np.vstack([x, x + _STEP * np.eye(p)])
            pred = np.asarray(predict(np.exp(rows)), dtype=float)
            calls[0] += 1
            if not np.all(np.isfinite(pred)):
                raise FitError("the model gave non-finite values for some parameter values in the bounds")
            r = pred[0] - y
            J = ((pred[1:] - pred[0]) / _STEP).T
            if offset:  # the best constant for any θ is the mean misfit: project it out
                r, J = r - r.mean(), J - J.mean(axis=0)
            cache.clear()
            cache[key] = (r, J)
        return cache[key]

    ratio, words = flat_direction(both(x0)[1], names)
    if ratio < FLAT_RATIO:
        raise NotIdentifiableError(
            f"the signal does not tell {', '.join(names)} apart: changing them together as {words} "
            f"leaves it unchanged (singular-value ratio {ratio:.1e} < {FLAT_RATIO:g}); free fewer parameters "
            "or add a channel that sees them separately")
    fit = least_squares(lambda x: both(x)[0], x0, jac=lambda x: both(x)[1], bounds=(lo, hi),
                        x_scale=1.0, xtol=1e-12, ftol=1e-12, gtol=1e-12, max_nfev=200)
    r, J = both(fit.x)
    ratio, words = flat_direction(J, names)
    if ratio < FLAT_RATIO:
        raise NotIdentifiableError(
            f"at the best fit the signal does not tell {', '.join(names)} apart along {words} "
            f"(singular-value ratio {ratio:.1e}); free fewer parameters")
    dof = max(y.size - p - int(offset), 1)
    level = float(np.mean(y - (np.asarray(predict(np.exp(fit.x)[None, :]), dtype=float)[0]))) if offset else 0.0
    s2 = float(r @ r) / dof
    cov = s2 * np.linalg.inv(J.T @ J)
    se = np.sqrt(np.diag(cov))
    z = norm.ppf(0.5 + confidence / 2)
    values = np.exp(fit.x)
    intervals = np.stack([values * np.exp(-z * se), values * np.exp(z * se)], axis=1)
    at_bound = tuple(n for n, x, a, b in zip(names, fit.x, lo, hi) if min(x - a, b - x) < 1e-6)
    return FitResult(tuple(names), values, intervals, cov / np.outer(se, se), float(np.sqrt(np.mean(r * r))),
                     at_bound, ratio, confidence, calls[0], level)
