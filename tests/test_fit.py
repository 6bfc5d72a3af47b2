"""Fitting part values to a measured waveform.

Reference model: the series RLC driven by a voltage step V, current
i(t) = V/(ωd L) e^{−αt} sin ωd t and capacitor voltage
v(t) = V [1 − e^{−αt}(cos ωd t + (α/ωd) sin ωd t)], α = R/2L, ωd² = 1/LC − α²
(Nilsson & Riedel, Electric Circuits, ch. 8).  The current fixes R, L and C;
the capacitor voltage fixes only α and ω0, i.e. not R, L and C separately.
"""
from pathlib import Path

import numpy as np
import pytest

from circuitode.cli import main
from circuitode.measured.fit import NotIdentifiableError, fit_parameters

R, L, C, V = 2.0, 1e-3, 1e-6, 10.0
T = np.linspace(0, 2e-3, 800)
TRUE = np.array([R, L, C])
START, LOW, HIGH = TRUE * [1.1, 0.9, 1.15], TRUE * 0.5, TRUE * 2.0

ROOT = Path(__file__).resolve().parents[1]
DEMO = str(ROOT / "netlists" / "dc_link_ring.cnet")
CAPTURE = str(ROOT / "netlists" / "captures" / "dc_link_ring_decimal_comma.csv")


def _alpha_wd(theta):
    r, l, c = theta[:, 0:1], theta[:, 1:2], theta[:, 2:3]
    a = r / (2 * l)
    return a, np.sqrt(1 / (l * c) - a * a), l


def current(theta):
    a, wd, l = _alpha_wd(theta)
    return V / (wd * l) * np.exp(-a * T) * np.sin(wd * T)


def capacitor_voltage(theta):
    a, wd, _ = _alpha_wd(theta)
    return V * (1 - np.exp(-a * T) * (np.cos(wd * T) + a / wd * np.sin(wd * T)))


def test_fit_recovers_r_l_c_within_intervals_about_95_percent():
    truth = current(TRUE[None])[0]
    noise = 0.01 * np.max(np.abs(truth))  # 1 % of the peak
    hits = np.zeros(3)
    for seed in range(200):
        y = truth + noise * np.random.default_rng(seed).standard_normal(T.size)
        fit = fit_parameters(current, y, ["R", "L", "C"], START, LOW, HIGH)
        hits += (fit.intervals[:, 0] <= TRUE) & (TRUE <= fit.intervals[:, 1])
    assert np.all((0.90 <= hits / 200) & (hits / 200 <= 0.99)), hits / 200


def test_fit_is_exact_without_noise_and_finds_an_offset():
    y = current(TRUE[None])[0] + 0.25
    fit = fit_parameters(current, y, ["R", "L", "C"], START, LOW, HIGH, offset=True)
    np.testing.assert_allclose(fit.values, TRUE, rtol=1e-6)
    assert fit.offset == pytest.approx(0.25, abs=1e-9)


def test_refuses_parameters_the_signal_cannot_separate():
    with pytest.raises(NotIdentifiableError, match="R\\^-1.00 · L\\^-1.00 · C\\^\\+1.00"):
        fit_parameters(capacitor_voltage, capacitor_voltage(TRUE[None])[0], ["R", "L", "C"], START, LOW, HIGH)

    def lc_only(theta):  # a lossless LC: only the frequency 1/√(LC) shows
        return 1 - np.cos(T / np.sqrt(theta[:, 0:1] * theta[:, 1:2]))

    with pytest.raises(NotIdentifiableError, match="do(es)? not tell L, C apart"):
        fit_parameters(lc_only, lc_only(np.array([[L, C]]))[0], ["L", "C"], [1.1 * L, 0.9 * C],
                       [0.5 * L, 0.5 * C], [2 * L, 2 * C])


def test_cli_fit_on_the_invented_capture(capsys):
    """The capture was made with L_cab·C_link = 3.25 µH · 205 µF and a 0.3 V probe offset."""
    code = main(["fit", DEMO, "--measured", CAPTURE,
                 "--channel", "2", "--as", "voltage at link", "--free", "L_cab,C_link"])
    out = capsys.readouterr().out
    assert code == 0 and "correlation" in out and "residual rms" in out
    from circuitode.jobs.fit import fit_job

    r = fit_job(DEMO, measured=CAPTURE,
                channel=2, quantity="voltage at link", free=["L_cab", "C_link"])
    assert np.prod(r.fit.values) == pytest.approx(3.25e-6 * 205e-6, rel=0.01)  # the ringing frequency
    assert r.fit.offset == pytest.approx(0.3, abs=0.05)
    assert main(["fit", DEMO, "--measured", CAPTURE,
                 "--channel", "2", "--as", "voltage at link", "--free", "R_bleed"]) == 2
