"""Requirements checked on waveforms whose figures are known in closed form."""
from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from circuitode.model import CurrentThrough, NodeVoltage, PowerIn, Requirement
from circuitode.errors import CircuitodeError
from circuitode.analysis.limits import (
    LimitError,
    all_passed,
    check_requirements,
    check_requirements_batch,
    figures_needed,
    requirement_margins_batch,
)
from circuitode.analysis.measure import MeasurementError

# An invented pre-charge: 48 V through 33 Ω into 1.5 mF (Nilsson & Riedel ch. 7, RC step):
# i = (V/R) e^{-t/RC}, peak V/R ≈ 1.4545 A, I²t = V²C/(2R), energy in R = ½CV².
V, R, C = 48.0, 33.0, 1.5e-3
TAU = R * C


@pytest.fixture
def run():
    t = np.linspace(0.0, 25 * TAU, 25001)
    i = V / R * np.exp(-t / TAU)
    v = V * (1 - np.exp(-t / TAU))
    return SimpleNamespace(
        t=t,
        signals={"current through R1": i, "voltage at link": v, "power in R1": i * i * R},
        units={"current through R1": "A", "voltage at link": "V", "power in R1": "W"},
        probes={},
    )


def req(figure, probe, comparison, limit):
    return Requirement(figure=figure, probe=probe, comparison=comparison, limit=limit)


def test_pass_fail_and_margins_against_closed_forms(run):
    peak_limit = req("peak", CurrentThrough("R1"), "<", 2.0)
    tight = req("peak", CurrentThrough("R1"), "<", 1.0)
    i2t = req("i2t", CurrentThrough("R1"), "<=", 0.1)
    energy = req("energy", PowerIn("R1"), "<", 1.0)
    final_v = req("final", NodeVoltage("link"), ">", 47.0)
    results = check_requirements([peak_limit, tight, i2t, energy, final_v], run)
    assert [r.passed for r in results] == [True, False, True, False, True]
    assert results[0].margin == pytest.approx(2.0 - V / R) and results[0].unit == "A"
    assert results[1].margin == pytest.approx(1.0 - V / R) and results[1].margin < 0
    assert "does not meet" in results[1].reason and results[0].reason == ""
    assert results[2].value == pytest.approx(V**2 * C / (2 * R), rel=1e-5) and results[2].unit == "A²s"
    # ½ C V² = 1.728 J > 1 J: the resistor energy limit fails by 0.728 J
    assert results[3].value == pytest.approx(0.5 * C * V**2, rel=1e-5) and results[3].unit == "J"
    assert results[3].margin == pytest.approx(1.0 - 0.5 * C * V**2, rel=1e-4)
    assert results[4].margin == pytest.approx(V * (1 - np.exp(-25)) - 47.0)
    assert not all_passed(results) and all_passed(results[:1]) and all_passed([])


def test_equality_passes_only_non_strict(run):
    exact = float(run.signals["current through R1"].max())
    strict, loose = check_requirements(
        [req("peak", CurrentThrough("R1"), "<", exact), req("peak", CurrentThrough("R1"), "<=", exact)], run
    )
    assert not strict.passed and loose.passed and loose.margin == 0.0


def test_unmeasurable_figure_fails_with_reason(run):
    # An RC charge does not ring, so its damping ratio is NaN and the limit fails.
    (result,) = check_requirements([req("damping_ratio", NodeVoltage("link"), ">", 0.3)], run)
    assert np.isnan(result.value) and not result.passed and np.isnan(result.margin)
    assert "does not ring" in result.reason


@pytest.mark.parametrize(
    "requirement, error, words",
    [
        (req("peak", CurrentThrough("K9"), "<", 1.0), LimitError, "record current through K9"),
        (req("loudness", CurrentThrough("R1"), "<", 1.0), LimitError, "unknown figure"),
        (req("peak", CurrentThrough("R1"), "==", 1.0), LimitError, "unknown comparison"),
        (req("energy", CurrentThrough("R1"), "<", 1.0), MeasurementError, "power"),
    ],
)
def test_bad_requirements_get_our_error(run, requirement, error, words):
    with pytest.raises(error, match=words) as info:
        check_requirements([requirement], run)
    assert isinstance(info.value, CircuitodeError)


def test_batch_agrees_with_single_checks(run):
    # A batch of RC charges with spread resistance; figures computed in closed form
    # (peak V/R, I²t V²C/(2R)) and also checked one by one on waveforms.
    resistances = np.array([20.0, 30.0, 33.0, 40.0, 60.0])
    requirements = [
        req("peak", CurrentThrough("R1"), "<", 1.5),
        req("i2t", CurrentThrough("R1"), ">=", 0.04),
        req("damping_ratio", NodeVoltage("link"), ">", 0.1),
    ]
    assert figures_needed(requirements) == [
        ("peak", "current through R1"),
        ("i2t", "current through R1"),
        ("damping_ratio", "voltage at link"),
    ]
    figures = {
        ("peak", "current through R1"): V / resistances,
        ("i2t", "current through R1"): V**2 * C / (2 * resistances),
        ("damping_ratio", "voltage at link"): np.full(resistances.size, np.nan),
    }
    passed = check_requirements_batch(requirements, figures)
    margins = requirement_margins_batch(requirements, figures)
    assert passed.shape == margins.shape == (5, 3)
    np.testing.assert_array_equal(passed[:, 0], V / resistances < 1.5)
    np.testing.assert_array_equal(passed[:, 1], V**2 * C / (2 * resistances) >= 0.04)
    assert not passed[:, 2].any() and np.isnan(margins[:, 2]).all()
    np.testing.assert_allclose(margins[:, 0], 1.5 - V / resistances)
    for k, r in enumerate(resistances):
        tau = r * C
        t = np.linspace(0.0, 25 * tau, 25001)
        i = V / r * np.exp(-t / tau)
        single = SimpleNamespace(
            t=t,
            signals={"current through R1": i, "voltage at link": V * (1 - np.exp(-t / tau))},
            units={"current through R1": "A", "voltage at link": "V"},
        )
        results = check_requirements(requirements, single)
        assert [res.passed for res in results] == list(passed[k])


def test_batch_input_errors():
    requirement = req("peak", CurrentThrough("R1"), "<", 1.0)
    with pytest.raises(LimitError, match="did not measure"):
        check_requirements_batch([requirement], {})
    with pytest.raises(LimitError, match="1-D"):
        check_requirements_batch([requirement], {("peak", "current through R1"): np.ones((2, 2))})
    assert check_requirements_batch([], {("peak", "current through R1"): np.ones(4)}).shape == (4, 0)
