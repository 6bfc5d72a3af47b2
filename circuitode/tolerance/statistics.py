"""Statistics of a finished batch: per-figure summaries, yield with a Wilson
interval, and the sensitivity ranking of parameters (by the share of a figure's
variance each parameter explains, η², which sees a rise-and-fall too; with the
Spearman rank correlation beside it for the direction).

All functions take whole arrays (N samples) and never loop over samples.
Samples whose run failed carry NaN figures and are left out of every
statistic (and counted as failed).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.stats import norm, rankdata

__all__ = [
    "PERCENTILES",
    "FigureSummary",
    "YieldEstimate",
    "Driver",
    "summarise_figure",
    "wilson_interval",
    "estimate_yield",
    "rank_correlations",
    "variance_shares",
    "sensitivity_ranking",
]

#: Percentiles reported for each figure (%).
PERCENTILES = (1.0, 5.0, 50.0, 95.0, 99.0)


@dataclass(frozen=True)
class FigureSummary:
    """Statistics of one figure over the batch (units of the figure).

    count : samples with a finite value.  failed : samples without one.
    percentiles : value at each of PERCENTILES.
    argmin / argmax : sample index (into the whole batch) of the minimum / maximum,
    -1 when no sample has a value.
    """

    name: str
    count: int
    failed: int
    mean: float
    std: float
    percentiles: tuple[float, ...]
    minimum: float
    argmin: int
    maximum: float
    argmax: int


def summarise_figure(name: str, values: np.ndarray) -> FigureSummary:
    """Mean, σ (sample, ddof = 1), percentiles, min and max (with their sample) of (N,) values."""
    v = np.asarray(values, dtype=float).reshape(-1)
    ok = np.isfinite(v)
    count = int(ok.sum())
    nan = float("nan")
    if count == 0:
        return FigureSummary(name, 0, v.size, nan, nan, (nan,) * len(PERCENTILES), nan, -1, nan, -1)
    good = v[ok]
    masked_low = np.where(ok, v, np.inf)
    masked_high = np.where(ok, v, -np.inf)
    imin, imax = int(np.argmin(masked_low)), int(np.argmax(masked_high))
    std = float(np.std(good, ddof=1)) if count > 1 else 0.0
    pct = tuple(float(p) for p in np.percentile(good, PERCENTILES))
    return FigureSummary(
        name, count, int(v.size - count), float(np.mean(good)), std, pct,
        float(v[imin]), imin, float(v[imax]), imax,
    )


def wilson_interval(successes: int, total: int, confidence: float = 0.95) -> tuple[float, float]:
    """Wilson score interval for a binomial proportion (Wilson, 1927, JASA 22:209).

    Returns (low, high) bounds on the true proportion; (0, 1) when total is 0.
    centre = (p̂ + z²/2n) / (1 + z²/n), half-width = z √(p̂(1-p̂)/n + z²/4n²) / (1 + z²/n).
    """
    n = int(total)
    if n <= 0:
        return 0.0, 1.0
    p = successes / n
    z = float(norm.ppf(0.5 + confidence / 2.0))
    z2 = z * z
    denom = 1.0 + z2 / n
    centre = (p + z2 / (2 * n)) / denom
    half = z * np.sqrt(p * (1 - p) / n + z2 / (4 * n * n)) / denom
    return max(0.0, float(centre - half)), min(1.0, float(centre + half))


@dataclass(frozen=True)
class YieldEstimate:
    """Share of samples meeting every limit.

    passed : samples that ran and met every limit.  total : all samples (a failed
    run counts as not passing).  fraction : passed / total.  low, high : 95 % Wilson
    score interval.  per_limit : label → samples meeting that one limit.
    """

    passed: int
    total: int
    fraction: float
    low: float
    high: float
    per_limit: dict[str, int]


def estimate_yield(limit_passes: dict[str, np.ndarray], ran: np.ndarray, confidence: float = 0.95) -> YieldEstimate:
    """Yield from per-limit pass masks.

    limit_passes : label → (N,) bool, True where the sample met that limit.
    ran : (N,) bool, True where the sample's run succeeded.
    With no limits, every sample that ran passes.
    """
    ran = np.asarray(ran, dtype=bool)
    every = ran.copy()
    per = {}
    for label, mask in limit_passes.items():
        m = np.asarray(mask, dtype=bool) & ran
        per[label] = int(m.sum())
        every &= m
    n, k = int(ran.size), int(every.sum())
    low, high = wilson_interval(k, n, confidence)
    return YieldEstimate(k, n, (k / n if n else float("nan")), low, high, per)


@dataclass(frozen=True)
class Driver:
    """One parameter's influence on a figure.

    eta2 : share of the figure's variance explained by the parameter alone, in [0, 1]
    (:func:`variance_shares`); sees non-monotonic effects.  rho : Spearman rank
    correlation in [-1, 1]; its sign says whether the figure rises with the parameter,
    and it is near 0 for an effect that rises then falls.
    """

    parameter: str
    rho: float
    eta2: float = float("nan")


def rank_correlations(parameters: np.ndarray, figure: np.ndarray) -> np.ndarray:
    """Spearman rank correlation of each parameter column with the figure.

    parameters : (N, k).  figure : (N,).  Samples with a non-finite figure are
    dropped.  Returns (k,) rho; NaN where a column or the figure is constant.
    Ties get average ranks (Spearman's rho as the Pearson correlation of ranks).
    """
    x = np.asarray(parameters, dtype=float)
    y = np.asarray(figure, dtype=float).reshape(-1)
    ok = np.isfinite(y) & np.all(np.isfinite(x), axis=1)
    x, y = x[ok], y[ok]
    if y.size < 3:
        return np.full(x.shape[1], np.nan)
    rx = rankdata(x, axis=0)
    ry = rankdata(y)
    rx = rx - rx.mean(axis=0)
    ry = ry - ry.mean()
    num = rx.T @ ry
    den = np.sqrt((rx * rx).sum(axis=0) * (ry @ ry))
    with np.errstate(invalid="ignore", divide="ignore"):
        rho = num / den
    return np.where(den > 0, rho, np.nan)


def _bin_count(n: int) -> int:
    """Bins per parameter for :func:`variance_shares`: about √n, 2 to 50."""
    return int(min(50, max(2, np.floor(np.sqrt(n)))))


def variance_shares(parameters: np.ndarray, figure: np.ndarray) -> np.ndarray:
    """Share of the figure's variance explained by each parameter alone: the correlation
    ratio η² = Var(E[y | x_j]) / Var(y), the first-order sensitivity index.

    Estimated by binning, as the first-order index is read off a scatter plot by
    cutting the parameter's axis into slices and taking the variance of the slice
    means (Saltelli et al., "Global Sensitivity Analysis: The Primer", Wiley 2008,
    ch. 1; from memory): each column is cut into about √N equal-count bins (tied
    values share a bin, so a corners batch gets one bin per level), and the bias
    the slices add on pure noise, (B − 1)/(N − B) of the unexplained share, is
    removed (Kelley's ε², PNAS 21 (1935) 554; from memory).  Unlike a rank
    correlation it sees effects that rise and fall (a closing angle).  A smooth effect
    loses about 1/B² of its share to the slicing (B bins: 6 % at 16 samples, 0.2 % at
    500), so compare parts within one batch rather than across batch sizes.

    parameters : (N, k).  figure : (N,).  Samples with a non-finite value are
    dropped.  Returns (k,) in [0, 1]; NaN where a column or the figure is constant
    or fewer than 3 samples remain.
    """
    x = np.asarray(parameters, dtype=float)
    y = np.asarray(figure, dtype=float).reshape(-1)
    ok = np.isfinite(y) & np.all(np.isfinite(x), axis=1)
    x, y = x[ok], y[ok]
    n, k = x.shape
    if n < 3:
        return np.full(k, np.nan)
    bins = _bin_count(n)
    ranks = rankdata(x, axis=0)  # average ranks: tied values fall in one bin
    slot = np.minimum(((ranks - 1.0) * bins / n).astype(np.int64), bins - 1)
    flat = (slot + bins * np.arange(k)).reshape(-1, order="C")  # (N·k,), column j in [j·B, (j+1)·B)
    dy = y - y.mean()
    counts = np.bincount(flat, minlength=k * bins).reshape(k, bins)
    sums = np.bincount(flat, weights=np.repeat(dy[:, None], k, axis=1).reshape(-1), minlength=k * bins)
    sums = sums.reshape(k, bins)
    with np.errstate(invalid="ignore", divide="ignore"):
        between = np.where(counts > 0, sums * sums / np.maximum(counts, 1), 0.0).sum(axis=1)
    total = float(dy @ dy)
    used = (counts > 0).sum(axis=1)
    if total <= 0.0:
        return np.full(k, np.nan)
    within = total - between
    share = (between - (used - 1) * within / np.maximum(n - used, 1)) / total
    return np.where(used > 1, np.clip(share, 0.0, 1.0), np.nan)


def sensitivity_ranking(names: tuple[str, ...], parameters: np.ndarray, figure: np.ndarray) -> list[Driver]:
    """Parameters ordered by the variance share η² they explain, strongest first (NaN last);
    ties (and a figure no share can be computed for) ordered by |Spearman rho|."""
    rho = rank_correlations(parameters, figure)
    eta2 = variance_shares(parameters, figure)
    key_rho = np.where(np.isfinite(rho), -np.abs(rho), np.inf)
    key_eta = np.where(np.isfinite(eta2), -eta2, np.inf)
    order = np.lexsort((key_rho, key_eta))
    return [Driver(names[i], float(rho[i]), float(eta2[i])) for i in order]
