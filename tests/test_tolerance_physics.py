"""Tolerance batches against closed forms from outside the project."""
import numpy as np
import pytest

from circuitode.netlist import loads
from circuitode.tolerance import run_batch

RC_CHARGE = """
circuit "RC charging from a 10 V rail"
param R_c = 1 kΩ ± 10 % uniform
param C_c = 10 uF ± 20 % uniform
ground gnd
voltage_source V1 rail -- gnd constant 10 V
resistor R1 rail -- out R_c
capacitor C1 out -- gnd C_c initial 0 V
transient until 160 ms step 40 us method exact initial given
record voltage at out, current through R1
"""


def _column(result, figure, label):
    return result.figures[:, result.figure_keys.index((figure, label))]


def test_rc_time_constant_moments_match_a_product_of_uniforms(tmp_path):
    result = run_batch(loads(RC_CHARGE), samples=2000, sampler="mc", seed=5, out_dir=tmp_path,
                       progress=False, plots=False)
    assert result.ok.all()
    # First-order step response v = V (1 - exp(-t/τ)) enters the 2 % band at t = τ ln 50
    # (Nilsson & Riedel, ch. 7); so τ = settling time / ln 50.
    tau = _column(result, "settling_time", "voltage at out") / np.log(50.0)
    values = result.samples.values
    # per sample first: the measured τ is R·C of that sample
    assert np.allclose(tau, values[:, 0] * values[:, 1], rtol=2e-4)
    # τ = R0 C0 (1 + a)(1 + b), a ~ U(±0.1), b ~ U(±0.2) independent: E = R0 C0 and
    # Var = (R0 C0)² [(1 + 0.1²/3)(1 + 0.2²/3) − 1] (moments of a product of independent
    # variables, e.g. Goodman, JASA 55 (1960) 708; uniform moments E a² = r²/3).
    tau0 = 1e3 * 10e-6
    var = tau0**2 * ((1 + 0.01 / 3) * (1 + 0.04 / 3) - 1)
    n = tau.size
    assert abs(tau.mean() - tau0) < 4.5 * np.sqrt(var / n)
    # the sample variance of a bounded variable: relative standard error below sqrt(2/n)·1.5
    assert tau.var(ddof=1) == pytest.approx(var, rel=4.5 * 1.5 * np.sqrt(2.0 / n))


SERIES_RLC = """
circuit "series RLC step, resistor with a normal spread"
param R_s = 4 Ω ± 30 % normal
ground gnd
voltage_source V1 in -- gnd step from 0 V to 10 V at 0 s
resistor R1 in -- a R_s
inductor L1 a -- b 1 mH initial 0 A
capacitor C1 b -- gnd 10 uF initial 0 V
transient until 30 ms step 1 us method exact initial given
record voltage at b
"""


def test_series_rlc_overshoot_follows_the_closed_form_on_every_sample(tmp_path):
    result = run_batch(loads(SERIES_RLC), samples=400, sampler="lhs", seed=2, out_dir=tmp_path,
                       progress=False, plots=False)
    R = result.samples.values[:, 0]
    # ζ = (R/2)·sqrt(C/L); percent overshoot of the capacitor voltage of a series RLC step
    # response: 100·exp(−ζπ/√(1−ζ²)) (Ogata, Modern Control Engineering, ch. 5;
    # Nilsson & Riedel ch. 8).
    zeta = R / 2.0 * np.sqrt(10e-6 / 1e-3)
    formula = 100.0 * np.exp(-zeta * np.pi / np.sqrt(1.0 - zeta**2))
    measured = _column(result, "overshoot", "voltage at b")
    assert np.all(zeta < 0.3)  # every sample underdamped
    assert np.allclose(measured, formula, rtol=0, atol=2e-3)  # percentage points
    # the distribution too: its percentiles are the formula's on the same samples
    assert np.allclose(np.percentile(measured, [5, 50, 95]), np.percentile(formula, [5, 50, 95]), atol=2e-3)
    # a normal spread of ± 30 % means σ = 10 %, truncated at ± 30 % (common practice)
    assert np.abs(R / 4.0 - 1.0).max() <= 0.3 and np.std(R / 4.0) == pytest.approx(0.1, rel=0.1)


def test_corners_reproduce_the_analytic_extremes_of_a_monotone_figure(tmp_path):
    result = run_batch(loads(RC_CHARGE), samples=1, sampler="corners", out_dir=tmp_path,
                       progress=False, plots=False)
    assert result.samples.count == 4
    # The charging current's Joule integral: ∫(V/R)² e^(−2t/RC) dt = V² C / (2R), over a
    # window of 12 time constants or more (Nilsson & Riedel ch. 7, energy in the resistor
    # = ½ C V² = R · I²t).  Monotone: up with C, down with R.
    i2t = _column(result, "i2t", "current through R1")
    high = 10.0**2 * 10e-6 * 1.2 / (2 * 1e3 * 0.9)
    low = 10.0**2 * 10e-6 * 0.8 / (2 * 1e3 * 1.1)
    assert i2t.max() == pytest.approx(high, rel=2e-3)
    assert i2t.min() == pytest.approx(low, rel=2e-3)
    values = result.samples.values
    assert values[np.argmax(i2t)].tolist() == pytest.approx([900.0, 12e-6])
    assert values[np.argmin(i2t)].tolist() == pytest.approx([1100.0, 8e-6])
