"""Sampling of component tolerances: distributions, designs, corners, overrides."""
import numpy as np
import pytest
from scipy.stats import norm

from circuitode.model import Circuit, Resistor, Spread
from circuitode.errors import CircuitodeError
from circuitode.tolerance.sampling import (
    MAX_CORNER_PARAMETERS,
    draw_samples,
    parse_spread_override,
    spreads_with_overrides,
)


def _spreads(**kw):
    return {n: Spread(n, nom, rel, dist) for n, (nom, rel, dist) in kw.items()}


def test_uniform_spread_bounds_mean_and_variance():
    s = _spreads(R=(100.0, 0.1, "uniform"))
    t = draw_samples(s, 100_000, "mc", seed=1)
    v = t.values[:, 0]
    assert v.min() >= 90.0 and v.max() <= 110.0
    # Uniform on [a, b]: mean (a+b)/2, variance (b-a)^2/12 (any probability text, e.g.
    # Papoulis "Probability, Random Variables and Stochastic Processes" ch. 4).
    assert abs(v.mean() - 100.0) < 4 * np.sqrt(400 / 12 / 1e5)
    assert v.var() == pytest.approx(20.0**2 / 12, rel=0.02)


def test_normal_spread_is_truncated_at_three_sigma():
    s = _spreads(C=(1e-3, 0.2, "normal"))
    t = draw_samples(s, 200_000, "mc", seed=2)
    d = t.deviations[:, 0]
    assert np.abs(d).max() <= 0.2 + 1e-15  # truncated at ± tolerance (common practice)
    sigma = 0.2 / 3
    # Variance of a normal truncated at ±c·σ: σ²(1 − 2cφ(c)/(Φ(c) − Φ(−c)))
    # (Johnson, Kotz & Balakrishnan, "Continuous Univariate Distributions" vol. 1, ch. 13).
    c = 3.0
    var = sigma**2 * (1 - 2 * c * norm.pdf(c) / (norm.cdf(c) - norm.cdf(-c)))
    assert d.var() == pytest.approx(var, rel=0.02)
    assert abs(d.mean()) < 4 * np.sqrt(var / d.size)


def test_latin_hypercube_puts_one_sample_in_each_stratum():
    # Latin hypercube (McKay, Beckman & Conover 1979): each of the n equal strata of
    # every marginal holds exactly one point.
    n = 500
    s = _spreads(A=(1.0, 0.1, "uniform"), B=(2.0, 0.05, "uniform"), C=(3.0, 0.3, "uniform"))
    t = draw_samples(s, n, "lhs", seed=3)
    u = (t.deviations / t.relative + 1.0) / 2.0
    for j in range(3):
        strata = np.floor(u[:, j] * n).astype(int)
        assert sorted(strata.tolist()) == list(range(n))


def test_sobol_marginals_are_balanced_for_a_power_of_two():
    # Sobol' points with n = 2^m: each one-dimensional projection is a (0, m, 1)-net,
    # one point in each interval [i/n, (i+1)/n) (Sobol' 1967; Dick & Pillichshammer
    # "Digital Nets and Sequences" ch. 4).
    n = 1024
    s = _spreads(A=(1.0, 0.1, "uniform"), B=(2.0, 0.1, "uniform"))
    t = draw_samples(s, n, "sobol", seed=4)
    u = (t.deviations / t.relative + 1.0) / 2.0
    for j in range(2):
        assert sorted(np.floor(u[:, j] * n).astype(int).tolist()) == list(range(n))


@pytest.mark.parametrize("sampler", ["mc", "lhs", "sobol"])
def test_same_seed_same_table_other_seed_other_table(sampler):
    s = _spreads(A=(1.0, 0.1, "normal"), B=(5.0, 0.2, "uniform"))
    a = draw_samples(s, 64, sampler, seed=7)
    b = draw_samples(s, 64, sampler, seed=7)
    c = draw_samples(s, 64, sampler, seed=8)
    assert np.array_equal(a.deviations, b.deviations)
    assert not np.array_equal(a.deviations, c.deviations)


def test_corners_take_every_extreme_once():
    s = _spreads(A=(1.0, 0.1, "normal"), B=(5.0, 0.2, "uniform"), C=(2.0, 0.05, "normal"))
    t = draw_samples(s, 10, "corners")
    assert t.count == 8 and "8 runs" in t.note
    signs = np.sign(t.deviations)
    assert len({tuple(r) for r in signs.tolist()}) == 8
    assert np.allclose(np.abs(t.deviations), t.relative[None, :])


def test_corners_refused_above_the_cap():
    s = {f"P{i}": Spread(f"P{i}", 1.0, 0.05) for i in range(MAX_CORNER_PARAMETERS + 1)}
    with pytest.raises(CircuitodeError, match="lhs or sobol"):
        draw_samples(s, 100, "corners")


def test_unknown_sampler_and_no_spreads_are_explained():
    with pytest.raises(CircuitodeError, match="mc, lhs, sobol, corners"):
        draw_samples(_spreads(A=(1.0, 0.1, "normal")), 10, "grid")
    with pytest.raises(CircuitodeError, match="no component tolerances"):
        draw_samples({}, 10, "mc")


def test_override_text_forms():
    assert parse_spread_override("R_pre=5%") == ("R_pre", 0.05, None)
    assert parse_spread_override("C1 = ± 20 % uniform") == ("C1", 0.2, "uniform")
    assert parse_spread_override("L=0.1") == ("L", 0.1, None)
    for bad in ("R_pre", "R=five%", "R=5% gaussian", "R=150%"):
        with pytest.raises(CircuitodeError):
            parse_spread_override(bad)


class _Recipe:
    def __init__(self, names):
        self.names = frozenset(names)

    def evaluate(self, env):
        return env["R_x"]


def test_overrides_applied_to_the_circuit_spreads():
    c = Circuit(
        title="t", ground="0",
        elements=(Resistor("R1", "a", "0", 10.0), Resistor("R2", "a", "0", 20.0)),
        parameters={"R_x": 10.0, "R_y": 20.0},
        spreads={"R_x": Spread("R_x", 10.0, 0.05, "normal")},
        recipes={("R1", "resistance"): _Recipe({"R_x"})},
    )
    out = spreads_with_overrides(c, ["R_x=1% uniform"])
    assert out["R_x"].relative == 0.01 and out["R_x"].distribution == "uniform"
    assert spreads_with_overrides(c, ["R_x=0%"]) == {}
    with pytest.raises(CircuitodeError, match="not a parameter"):
        spreads_with_overrides(c, ["R_z=5%"])
    with pytest.raises(CircuitodeError, match="no tolerance in the netlist"):
        spreads_with_overrides(c, ["R_y=5%"])
