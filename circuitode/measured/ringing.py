"""Ringing figures from measured samples alone: damping ratio, damped and natural frequency.

Three estimators, each on the samples from ``start`` on (a step response from
its first extremum after the switching):

* :func:`log_decrement` — the logarithmic decrement over n cycles,
  δ = (1/n) ln(x₀ / xₙ) and ζ = δ / √(4π² + δ²) (a standard vibration-textbook
  result, cited from memory).  xₖ is the height from the k-th peak to the
  trough after it, so the final level cancels; each extremum is the vertex of a
  local least-squares quartic (±Td/10), whose standard error gives the
  interval.  n is the largest number of whole cycles whose last height is still
  at least :data:`HEIGHT_TO_NOISE` times its standard error and
  :data:`RELATIVE_FLOOR` of the first height.
* :func:`fit_damped_sine` — least squares (scipy.optimize.least_squares) of
  y = c + e^{−στ}(p cos ω_d τ + q sin ω_d τ); confidence intervals from the
  Jacobian, cov = s² (JᵀJ)⁻¹, carried to ζ and ωn by first-order propagation.
* :func:`matrix_pencil` — several damped modes at once (Hua & Sarkar, "Matrix
  pencil method for estimating parameters of exponentially damped/undamped
  sinusoids in noise", IEEE Trans. ASSP, 1990 — cited from memory).

The noise level is estimated from fourth differences of the samples
(median absolute value / 0.6745 / √70), which assumes many samples per period.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares
from scipy.stats import norm

from ..errors import CircuitodeError

__all__ = ["RingingError", "LogDecrement", "SineFit", "PencilMode", "HEIGHT_TO_NOISE",
           "noise_level", "ringing_start", "log_decrement", "fit_damped_sine", "matrix_pencil"]

#: Last peak-to-trough height counted by the log decrement, in standard errors of it.
HEIGHT_TO_NOISE = 10.0
#: ... and at least this fraction of the first height (rounding, not noise, limits a clean signal).
RELATIVE_FLOOR = 1e-3
_PENCIL_SAMPLES = 600


class RingingError(CircuitodeError):
    """The samples do not ring enough (or are too few) for the figure asked."""


@dataclass(frozen=True)
class LogDecrement:
    """cycles : n used.  delta : δ per cycle.  zeta, zeta_interval : ζ and its (low, high).
    damped_frequency_hz : from the mean spacing of the extrema.  natural_frequency_hz : f_d / √(1 − ζ²).
    heights : (n + 1,) the peak-to-trough heights x₀ … xₙ in the signal's unit.  confidence : e.g. 0.95."""

    cycles: int
    delta: float
    zeta: float
    zeta_interval: tuple[float, float]
    damped_frequency_hz: float
    natural_frequency_hz: float
    heights: np.ndarray
    confidence: float


@dataclass(frozen=True)
class SineFit:
    """zeta, natural_frequency_hz, damped_frequency_hz with (low, high) intervals; offset and
    amplitude in the signal's unit; residual_rms; confidence; start (s) of the fitted window."""

    zeta: float
    zeta_interval: tuple[float, float]
    natural_frequency_hz: float
    natural_frequency_interval: tuple[float, float]
    damped_frequency_hz: float
    damped_frequency_interval: tuple[float, float]
    offset: float
    amplitude: float
    residual_rms: float
    confidence: float
    start: float


@dataclass(frozen=True)
class PencilMode:
    """One damped mode: damped frequency (Hz, 0 for a real mode), ζ, natural frequency (Hz), amplitude."""

    damped_frequency_hz: float
    zeta: float
    natural_frequency_hz: float
    amplitude: float


def noise_level(y) -> float:
    """Standard deviation of white noise on a smooth signal, from its fourth differences
    (Δ⁴ of white noise has variance 70 σ²; a smooth signal sampled finely adds little)."""
    d4 = np.diff(np.asarray(y, dtype=float), 4)
    return float(np.median(np.abs(d4)) / 0.6745 / np.sqrt(70.0)) if d4.size else 0.0


def ringing_start(t, y, after: float | None = None) -> float:
    """s, the instant of the largest deviation from the final level after ``after`` (the first
    overshoot of a step response): where the ringing figures start."""
    t, y = np.asarray(t, float), np.asarray(y, float)
    keep = t >= (t[0] if after is None else after)
    tail = y[keep][-max(3, keep.sum() // 10):]
    k = int(np.argmax(np.abs(y[keep] - np.median(tail))))
    return float(t[keep][k])


def _window(t, y, start):
    t, y = np.asarray(t, float), np.asarray(y, float)
    if t.shape != y.shape or t.ndim != 1:
        raise RingingError(f"time and values must be 1-D arrays of one length; got {t.shape} and {y.shape}")
    keep = t >= (t[0] if start is None else start)
    if keep.sum() < 20:
        raise RingingError(f"only {int(keep.sum())} samples after the start of the ringing; need at least 20")
    return t[keep], y[keep]


def _rough_period(t, y) -> float:
    """s, twice the median spacing of the first ten crossings of the final level (with hysteresis
    of three noise levels, so that noise near the end does not count)."""
    d = y - np.median(y[-max(3, y.size // 4):])
    h = 3.0 * noise_level(y)
    side = np.where(d > h, 1, np.where(d < -h, -1, 0))
    kept = np.nonzero(side)[0]
    change = kept[1:][np.diff(side[kept]) != 0]
    if change.size < 2:
        raise RingingError("the samples cross their final level fewer than twice: no ringing to measure")
    return float(2 * np.median(np.diff(t[change[:10]])))


def _local_fit(t, y, k, half):
    """Least-squares quartic over t[k] ± half: (coefficients in τ = (t − t[k]) / half, (XᵀX)⁻¹).

    A quartic rather than a parabola: over ±Td/10 a parabola misses the top of a
    damped cosine by ~10⁻³ of its height, a quartic by ~10⁻⁵ (and the ratio of
    two heights cancels most of the rest)."""
    sel = np.abs(t - t[k]) <= half
    X = ((t[sel] - t[k]) / half)[:, None] ** np.arange(5)
    coef, *_ = np.linalg.lstsq(X, y[sel], rcond=None)
    return coef, np.linalg.pinv(X.T @ X)


def _vertex_offset(coef) -> float:
    """τ of the extremum nearest 0 of a quartic (Newton on its slope), within ±1."""
    slope, curve = np.polynomial.polynomial.polyder(coef), np.polynomial.polynomial.polyder(coef, 2)
    at = 0.0
    for _ in range(8):
        c2 = np.polynomial.polynomial.polyval(at, curve)
        if c2 == 0:
            break
        at = float(np.clip(at - np.polynomial.polynomial.polyval(at, slope) / c2, -1.0, 1.0))
    return at


def _extrema(t, y, period, sigma):
    """Local fits of the alternating extrema from the first whole one on, one per half period:
    a list of (sample index, quartic coefficients, (XᵀX)⁻¹, vertex time), and the half window (s).

    The extrema of a damped sinusoid are exactly half a damped period apart, so
    their times are taken from a straight line through the local vertex times;
    each value is the local quartic read at that time.  (Reading each value at its
    own noisy vertex would overstate every height by the noise it maximises.)"""
    half_window = period / 10
    fits, guess = [], t[0]
    first = int(np.argmax(np.abs(y[t <= t[0] + period / 4] - np.median(y))))
    want_max = y[first] > np.median(y)
    while guess <= t[-1] - half_window:
        near = np.nonzero(np.abs(t - guess) <= period / 4)[0]
        if near.size < 5:
            break
        k = near[np.argmax(y[near])] if want_max else near[np.argmin(y[near])]
        if t[k] + half_window > t[-1]:
            break
        if t[k] - half_window < t[0] or k == near[0] or k == near[-1]:
            if fits:  # lost the alternation in the middle: stop counting here
                break
            guess, want_max = t[k] + period / 2, not want_max  # cut by the start: not a whole extremum
            continue
        coef, inv = _local_fit(t, y, k, half_window)
        fits.append((k, coef, inv, t[k] + _vertex_offset(coef) * half_window))
        guess, want_max = fits[-1][3] + period / 2, not want_max
    return fits, half_window


def _read(t, fit, time, half_window, sigma):
    """(time, value, standard error) of one local quartic read at ``time``."""
    k, coef, inv, _ = fit
    g = ((time - t[k]) / half_window) ** np.arange(5)
    return time, float(g @ coef), sigma * float(np.sqrt(g @ inv @ g))


def _read_on_line(t, fits, half_window, sigma, count):
    """The first ``count`` extrema read at times on a straight line through their vertex times."""
    fits = fits[:count]
    line = np.polyfit(np.arange(len(fits)), [f[3] for f in fits], 1)
    return np.array([_read(t, f, np.polyval(line, i), half_window, sigma) for i, f in enumerate(fits)])


def _heights(ext):
    """Peak-to-trough heights of whole cycles and their standard errors."""
    pairs = ext.shape[0] // 2
    heights = np.abs(ext[0:2 * pairs:2, 1] - ext[1:2 * pairs:2, 1])
    return heights, np.hypot(ext[0:2 * pairs:2, 2], ext[1:2 * pairs:2, 2])


def _last_usable(heights, errors) -> int:
    short = np.nonzero((heights < HEIGHT_TO_NOISE * errors) | (heights < RELATIVE_FLOOR * heights[0]))[0]
    return int(short[0] - 1) if short.size else heights.size - 1


def log_decrement(t, y, *, start: float | None = None, cycles: int | None = None,
                  confidence: float = 0.95) -> LogDecrement:
    """ζ from the logarithmic decrement over n cycles (n chosen unless ``cycles`` is given).

    Parameters
    ----------
    t : (nt,) s.  y : (nt,) samples.  start : s, first sample used (default the first).
    cycles : n; default the most whole cycles whose last height is ≥ HEIGHT_TO_NOISE standard errors.
    confidence : of the interval on ζ (normal approximation).
    """
    t, y = _window(t, y, start)
    sigma = noise_level(y)
    period = _rough_period(t, y)
    fits, half_window = _extrema(t, y, period, sigma)
    if len(fits) < 4:
        raise RingingError(f"the samples hold {len(fits)} extrema; the log decrement needs at least "
                           "one whole cycle (4 extrema)")
    # first pass: each extremum read at its own vertex, to find how many cycles stand above the noise;
    # second pass: only those, read on the line of their times (see _extrema)
    own = np.array([_read(t, f, f[3], half_window, sigma) for f in fits])
    last = _last_usable(*_heights(own))
    ext = _read_on_line(t, fits, half_window, sigma, 2 * max(last, 1) + 2)
    heights, errors = _heights(ext)
    last = min(last, _last_usable(heights, errors))
    pairs = heights.size
    n = int(cycles) if cycles is not None else int(last)
    if n < 1 or n > pairs - 1:
        raise RingingError(f"the ringing stands above the noise for {max(last, 0)} whole cycle(s); "
                           + ("asked for " + str(cycles) if cycles is not None else "need at least 1"))
    delta = float(np.log(heights[0] / heights[n]) / n)
    se_delta = float(np.hypot(errors[0] / heights[0], errors[n] / heights[n]) / n)
    z = norm.ppf(0.5 + confidence / 2)
    zeta_of = lambda d: d / np.sqrt(4 * np.pi**2 + d * d)  # noqa: E731
    zeta = float(zeta_of(delta))
    low, high = float(zeta_of(delta - z * se_delta)), float(zeta_of(delta + z * se_delta))
    fd = n / (ext[2 * n, 0] - ext[0, 0])
    return LogDecrement(n, delta, zeta, (low, high), float(fd), float(fd / np.sqrt(1 - zeta**2)),
                        heights[:n + 1].copy(), confidence)


def fit_damped_sine(t, y, *, start: float | None = None, confidence: float = 0.95) -> SineFit:
    """Least-squares damped sinusoid plus offset, with intervals from the Jacobian.

    y ≈ c + e^{−στ}(p cos ω_d τ + q sin ω_d τ), τ = t − start.  ζ = σ/√(σ² + ω_d²),
    ωn = √(σ² + ω_d²).
    """
    t, y = _window(t, y, start)
    tau = t - t[0]
    period = _rough_period(t, y)
    try:
        guess = log_decrement(t, y)
        sigma0, omega0 = guess.delta / (1 / guess.damped_frequency_hz), 2 * np.pi * guess.damped_frequency_hz
    except RingingError:
        sigma0, omega0 = 1.0 / (t[-1] - t[0]), 2 * np.pi / period

    def basis(s, w):
        e = np.exp(-s * tau)
        return np.stack([np.ones_like(tau), e * np.cos(w * tau), e * np.sin(w * tau)], axis=1)

    lin, *_ = np.linalg.lstsq(basis(sigma0, omega0), y, rcond=None)
    x0 = np.array([*lin, sigma0, omega0])
    scale = np.array([max(np.ptp(y), 1e-300)] * 3 + [omega0, omega0])

    def residual(x):
        return basis(x[3], x[4]) @ x[:3] - y

    def jac(x):
        c, p, q, s, w = x
        e = np.exp(-s * tau)
        cw, sw = np.cos(w * tau), np.sin(w * tau)
        core = e * (p * cw + q * sw)
        return np.stack([np.ones_like(tau), e * cw, e * sw, -tau * core,
                         tau * e * (-p * sw + q * cw)], axis=1)

    fit = least_squares(residual, x0, jac=jac, x_scale=scale, method="lm", xtol=1e-14, ftol=1e-14, gtol=1e-14)
    c, p, q, s, w = fit.x
    w = abs(w)
    dof = max(tau.size - 5, 1)
    s2 = float(fit.fun @ fit.fun) / dof
    J = jac(fit.x)
    cov = s2 * np.linalg.pinv(J.T @ J)
    wn = float(np.hypot(s, w))
    zeta = float(s / wn)
    g_zeta = np.array([0, 0, 0, w * w / wn**3, -s * w / wn**3])
    g_wn = np.array([0, 0, 0, s / wn, w / wn])
    z = norm.ppf(0.5 + confidence / 2)
    se = lambda g: float(np.sqrt(max(g @ cov @ g, 0.0)))  # noqa: E731
    two_pi = 2 * np.pi
    return SineFit(
        zeta, (zeta - z * se(g_zeta), zeta + z * se(g_zeta)),
        wn / two_pi, ((wn - z * se(g_wn)) / two_pi, (wn + z * se(g_wn)) / two_pi),
        w / two_pi, ((w - z * np.sqrt(cov[4, 4])) / two_pi, (w + z * np.sqrt(cov[4, 4])) / two_pi),
        float(c), float(np.hypot(p, q)), float(np.sqrt(np.mean(fit.fun**2))), confidence, float(t[0]))


def matrix_pencil(t, y, *, start: float | None = None, order: int | None = None) -> list[PencilMode]:
    """Damped modes of the samples by the matrix pencil method (Hua & Sarkar 1990, from memory).

    The samples are decimated to at most about 600, the pencil parameter is a third
    of them, the model order is the number of singular values above the noise
    (or ``order``), and the amplitudes come from a least-squares Vandermonde fit.
    Returns oscillatory and real decaying modes, largest amplitude first (a
    constant level is left out).
    """
    t, y = _window(t, y, start)
    step = max(1, y.size // _PENCIL_SAMPLES)
    sigma = noise_level(y) / np.sqrt(step)  # a rough figure after decimation by averaging
    n_keep = (y.size // step) * step
    yd = y[:n_keep].reshape(-1, step).mean(axis=1)
    dt = (t[step - 1] - t[0]) / max(step - 1, 1) * step if step > 1 else (t[-1] - t[0]) / (t.size - 1)
    N = yd.size
    L = N // 3
    H = np.lib.stride_tricks.sliding_window_view(yd, L + 1)  # (N − L, L + 1) Hankel rows
    _, sv, Vh = np.linalg.svd(H, full_matrices=False)
    if order is None:
        floor = max(3.0 * sigma * (np.sqrt(N - L) + np.sqrt(L + 1)), 1e-9 * sv[0])
        order = int(np.clip(np.sum(sv > floor), 1, 12))
    V = Vh[:order].conj().T
    z = np.linalg.eigvals(np.linalg.pinv(V[:-1]) @ V[1:])
    vander = z[None, :] ** np.arange(N)[:, None]
    h, *_ = np.linalg.lstsq(vander, yd.astype(complex), rcond=None)
    s = np.log(z.astype(complex)) / dt
    modes = []
    for sk, hk in zip(s, h):
        if sk.imag < -1e-9 * abs(sk):
            continue  # the conjugate of a pair is reported once
        oscillates = sk.imag > 1e-9 * abs(sk)
        if not oscillates and abs(sk.real) * (t[-1] - t[0]) < 0.05:
            continue  # a level (a time constant over 20 windows long: the final value, or a slow drift)
        wn = abs(sk)
        modes.append(PencilMode(float(sk.imag / (2 * np.pi)), float(-sk.real / wn) if wn else np.nan,
                                float(wn / (2 * np.pi)), float((2 if oscillates else 1) * abs(hk))))
    return sorted(modes, key=lambda m: -m.amplitude)
