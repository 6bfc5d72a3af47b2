"""Brent's method for a root bracketed by a sign change, without importing scipy.optimize.

scipy.optimize takes about as long to import as numpy itself, and the solvers
need from it only a bracketed scalar root (the instant a threshold switch
acts).  This is the classic algorithm of R. P. Brent, *Algorithms for
Minimization without Derivatives* (Prentice-Hall, 1973), ch. 4 ("zero"):
inverse quadratic interpolation or secant steps, falling back to bisection so
the bracket at least halves every two steps; it stops when the bracket is
below ``2·(rtol·|b| + xtol/2)`` or f(b) = 0, the same stopping rule as
``scipy.optimize.brentq`` (tests/test_solvers.py compares the two).
"""
from __future__ import annotations

from typing import Callable

from ..errors import IntegrationError

__all__ = ["brent_root"]


def brent_root(f: Callable[[float], float], a: float, b: float, xtol: float = 2e-12, rtol: float = 8.9e-16,
               maxiter: int = 200) -> float:
    """A root of ``f`` in [a, b], where f(a) and f(b) differ in sign (or one is zero).

    Parameters
    ----------
    f : a continuous scalar function.
    a, b : the bracket.
    xtol, rtol : absolute and relative tolerance on the root (same meaning as in scipy's brentq).
    maxiter : iterations before giving up.

    Raises
    ------
    IntegrationError : no sign change in [a, b], or no convergence within ``maxiter``.
    """
    fa, fb = float(f(a)), float(f(b))
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if (fa > 0) == (fb > 0):
        raise IntegrationError(f"no sign change between {a!r} and {b!r} to locate a threshold crossing")
    c, fc = a, fa
    d = e = b - a
    for _ in range(maxiter):
        if (fb > 0) == (fc > 0):  # keep the root between b and c
            c, fc = a, fa
            d = e = b - a
        if abs(fc) < abs(fb):  # b is the best estimate so far
            a, b, c = b, c, b
            fa, fb, fc = fb, fc, fb
        tol = 2.0 * rtol * abs(b) + 0.5 * xtol
        m = 0.5 * (c - b)
        if abs(m) <= tol or fb == 0.0:
            return b
        if abs(e) >= tol and abs(fa) > abs(fb):
            s = fb / fa
            if a == c:  # secant
                p, q = 2.0 * m * s, 1.0 - s
            else:  # inverse quadratic interpolation
                q, r = fa / fc, fb / fc
                p = s * (2.0 * m * q * (q - r) - (b - a) * (r - 1.0))
                q = (q - 1.0) * (r - 1.0) * (s - 1.0)
            if p > 0:
                q = -q
            else:
                p = -p
            if 2.0 * p < min(3.0 * m * q - abs(tol * q), abs(e * q)):
                e, d = d, p / q  # the interpolation is accepted
            else:
                d = e = m  # bisection
        else:
            d = e = m
        a, fa = b, fb
        b += d if abs(d) > tol else (tol if m > 0 else -tol)
        fb = float(f(b))
    raise IntegrationError(f"locating a threshold crossing did not converge in {maxiter} iterations")
