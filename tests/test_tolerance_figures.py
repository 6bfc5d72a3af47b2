"""Per-sample-clock figures must equal circuitode.measure's on every sample."""
import numpy as np
import pytest

from circuitode import measure
from circuitode.tolerance.figures import BATCH_FIGURES, batch_figure, is_pulse


def _ringing_steps(n=6, nt=400, seed=0):
    """Underdamped second-order step responses (Ogata ch. 5 closed form) on clocks that
    differ per sample, each with one instant recorded twice (a switching event)."""
    rng = np.random.default_rng(seed)
    base = np.linspace(0.0, 0.02, nt)
    event = rng.uniform(0.002, 0.015, n)
    rows = np.arange(n)
    t = np.sort(np.concatenate([np.repeat(base[None, :], n, 0), event[:, None], event[:, None]], axis=1), axis=1)
    zeta = rng.uniform(0.1, 0.6, n)[:, None]
    wn = 2 * np.pi * rng.uniform(300, 800, n)[:, None]
    wd = wn * np.sqrt(1 - zeta**2)
    y = 1 - np.exp(-zeta * wn * t) * (np.cos(wd * t) + zeta / np.sqrt(1 - zeta**2) * np.sin(wd * t))
    # a jump at the event: the second copy of the instant carries the new value
    second = np.argmax(t == event[:, None], axis=1) + 1
    mask = np.arange(t.shape[1])[None, :] >= second[:, None]
    y = y + 0.05 * mask
    return t, y


@pytest.mark.parametrize("name", sorted(BATCH_FIGURES))
def test_every_figure_equals_the_single_run_measure(name):
    t, y = _ringing_steps()
    ours = batch_figure(name, t, y)
    reference = np.array([measure.measure(name, t[i], y[i], signal_unit="W" if name == "energy" else "V")
                          for i in range(t.shape[0])])
    reference = np.where(is_pulse(y) & (name in ("overshoot", "undershoot", "rise_time", "settling_time")),
                         np.nan, reference)
    assert np.allclose(ours, reference, rtol=1e-12, atol=0.0, equal_nan=True)
    assert np.isfinite(ours).any()


def test_every_measure_figure_has_a_batch_version():
    assert set(BATCH_FIGURES) == set(measure.FIGURE_UNITS)


def test_inrush_pulse_has_no_step_figures_but_has_a_peak():
    t = np.linspace(0, 2e-3, 400)
    y = (t / 1e-4) * np.exp(1 - t / 1e-4)  # returns to 0: a pulse, peak 1 at 0.1 ms
    assert np.isnan(batch_figure("overshoot", t[None], y[None]))[0]
    assert batch_figure("peak", t[None], y[None])[0] == pytest.approx(1.0, rel=1e-4)
