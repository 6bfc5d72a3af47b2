"""Batch statistics: summaries, Wilson yield interval, sensitivity ranking."""
import numpy as np
import pytest
from scipy.stats import spearmanr

from circuitode.tolerance.statistics import (
    PERCENTILES,
    estimate_yield,
    rank_correlations,
    sensitivity_ranking,
    summarise_figure,
    variance_shares,
    wilson_interval,
)


@pytest.mark.parametrize(
    "k, n, low, high",
    [
        # Wilson score intervals tabulated by Newcombe, "Two-sided confidence intervals
        # for the single proportion", Statistics in Medicine 17 (1998) 857, Table I
        # (values from memory, 4 decimals).
        (81, 263, 0.2553, 0.3662),
        (15, 148, 0.0624, 0.1605),
        (0, 20, 0.0, 0.1611),
        (1, 29, 0.0061, 0.1718),
    ],
)
def test_wilson_interval_against_published_values(k, n, low, high):
    lo, hi = wilson_interval(k, n)
    assert lo == pytest.approx(low, abs=6e-5)
    assert hi == pytest.approx(high, abs=6e-5)


@pytest.mark.parametrize("k, n", [(3, 10), (950, 1000), (9999, 10000), (40, 41)])
def test_wilson_bounds_solve_the_score_equation(k, n):
    # Wilson (1927): the bounds are the p with (p̂ − p)² = z² p (1 − p) / n, z = 1.959964.
    z = 1.959963984540054
    p = k / n
    # (1 + z²/n) p² − (2p̂ + z²/n) p + p̂² = 0
    roots = np.sort(np.roots([1 + z * z / n, -(2 * p + z * z / n), p * p]).real)
    assert np.allclose(wilson_interval(k, n), roots, atol=1e-12)


def test_yield_counts_failed_runs_as_not_passing():
    ran = np.array([True, True, True, False, True])
    limits = {"a": np.array([True, False, True, True, True]), "b": np.array([True, True, True, True, False])}
    y = estimate_yield(limits, ran)
    assert (y.passed, y.total) == (2, 5)
    assert y.per_limit == {"a": 3, "b": 3}
    assert (y.low, y.high) == wilson_interval(2, 5)


def test_summary_matches_numpy_and_names_the_extreme_samples():
    rng = np.random.default_rng(0)
    v = rng.normal(size=1001)
    v[[10, 500]] = np.nan
    s = summarise_figure("peak", v)
    good = v[np.isfinite(v)]
    assert (s.count, s.failed) == (999, 2)
    assert s.mean == pytest.approx(good.mean()) and s.std == pytest.approx(good.std(ddof=1))
    assert s.percentiles == pytest.approx(tuple(np.percentile(good, PERCENTILES)))
    assert v[s.argmin] == good.min() and v[s.argmax] == good.max()


def test_rank_correlation_equals_scipy_spearman():
    rng = np.random.default_rng(1)
    x = rng.normal(size=(300, 3))
    y = np.exp(x[:, 0]) - 0.3 * x[:, 2] ** 3 + 0.1 * rng.normal(size=300)
    ours = rank_correlations(x, y)
    ref = [spearmanr(x[:, j], y).statistic for j in range(3)]
    assert np.allclose(ours, ref, atol=1e-12)


def test_sensitivity_ranks_the_strong_driver_first_and_constant_last():
    rng = np.random.default_rng(2)
    x = rng.uniform(size=(500, 3))
    x[:, 1] = 0.5
    y = -5 * x[:, 2] + 0.5 * x[:, 0]
    ranking = sensitivity_ranking(("a", "b", "c"), x, y)
    assert [d.parameter for d in ranking] == ["c", "a", "b"]
    assert ranking[0].rho < -0.9 and np.isnan(ranking[2].rho)


def test_variance_share_sees_a_rise_and_fall_that_spearman_misses():
    # y = sin²(θ) + 0.1·x, θ ~ U(0, π), x ~ U(0, 1) independent.  First-order index
    # S_θ = Var(E[y|θ]) / Var(y) (Saltelli et al., "Global Sensitivity Analysis: The
    # Primer", 2008, ch. 1): sin²θ = (1 − cos 2θ)/2 has variance ½·½·½ = 1/8 over
    # whole periods, 0.1·x has 0.01/12, so S_θ = (1/8) / (1/8 + 1/1200) = 150/151 and
    # S_x = 1/151.  sin²θ is symmetric about π/2, so its rank correlation is ≈ 0.
    rng = np.random.default_rng(3)
    n = 4000
    theta, x = rng.uniform(0.0, np.pi, n), rng.uniform(0.0, 1.0, n)
    params = np.column_stack([x, theta])
    y = np.sin(theta) ** 2 + 0.1 * x
    var_theta, var_x = 1 / 8, 0.01 / 12
    exact = np.array([var_x, var_theta]) / (var_theta + var_x)
    eta2 = variance_shares(params, y)
    assert eta2[1] == pytest.approx(exact[1], abs=0.005)  # binning of about √N slices loses ~1e-3
    assert eta2[0] == pytest.approx(exact[0], abs=0.01)
    rho = rank_correlations(params, y)
    assert abs(rho[0]) > abs(rho[1])  # Spearman would name x
    ranking = sensitivity_ranking(("x", "theta"), params, y)
    assert [d.parameter for d in ranking] == ["theta", "x"]
    assert ranking[0].eta2 == pytest.approx(eta2[1]) and ranking[0].rho == pytest.approx(rho[1])


def test_variance_share_of_two_level_parameters_is_the_anova_main_effect():
    # A corners batch gives each parameter two levels: ties share a bin, so η² is the
    # one-way ANOVA between-group share SS_between / SS_total (common practice), less
    # Kelley's bias term (B − 1)/(N − B)·SS_within/SS_total with B = 2 groups.
    rng = np.random.default_rng(4)
    a = rng.choice([-1.0, 1.0], 400)
    b = rng.choice([-1.0, 1.0], 400)
    y = 3.0 * a + 1.0 * b + 0.5 * rng.normal(size=400)
    total = ((y - y.mean()) ** 2).sum()
    expected = []
    for g in (a, b):
        between = sum((g == v).sum() * (y[g == v].mean() - y.mean()) ** 2 for v in (-1.0, 1.0))
        expected.append((between - (total - between) / (400 - 2)) / total)
    assert np.allclose(variance_shares(np.column_stack([a, b]), y), expected, atol=1e-12)


def test_variance_share_of_noise_is_near_zero_and_of_a_constant_is_nan():
    rng = np.random.default_rng(5)
    x = rng.normal(size=(2000, 2))
    x[:, 1] = 7.0
    eta2 = variance_shares(x, rng.normal(size=2000))
    assert 0.0 <= eta2[0] < 0.02 and np.isnan(eta2[1])


def test_a_level_of_rounding_size_beside_its_quantity_prints_as_zero():
    # The minimum of a link voltage that charges from 0 V to 49 V came out of the solution
    # as -2e-15 V ± 4e-16 V in a 500-sample batch and was printed as "-0.000147 pV": rounding
    # of the solution, not a spread. Against the quantity's own 49 V it is 4e-17 relative.
    from types import SimpleNamespace

    from circuitode.tolerance.summary import _state

    noise = SimpleNamespace(mean=-1.5e-16, std=4.4e-16, minimum=-1.7e-15, maximum=0.0)
    assert _state(noise, "V", level=49.0) == "zero"
    assert _state(noise, "V") == "varies"  # without the quantity's scale nothing says it is rounding
    real = SimpleNamespace(mean=-2.75e-3, std=2.7e-4, minimum=-3.3e-3, maximum=-2.2e-3)
    assert _state(real, "A", level=4.8) == "varies"  # a 3 mA undershoot beside a 4.8 A peak is real


def test_an_angle_axis_of_the_batch_plots_reads_in_degrees():
    """A closing angle is written and printed in degrees; its plot axis must not read in rad."""
    import numpy as np

    from circuitode.tolerance.plots import _axis

    factor, unit = _axis(np.array([0.5, 1.5]), "rad")
    assert unit == "deg" and factor * np.pi == pytest.approx(180.0)
    assert _axis(np.array([1e-3, 2e-3]), "A") == (1e3, "mA")
