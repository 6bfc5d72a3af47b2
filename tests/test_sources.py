"""Tests of the source waveforms: values, breakpoints and exact linear generators.

Closed forms of the waveforms are those written in each class's docstring (the
definitions of a step, ramp, trapezoidal pulse, sine and exponential are common
practice).  The generator checks use the exact solution of z' = F z,
z(t) = expm(F (t - t0)) z0 (Ogata "Modern Control Engineering" ch. 9, solution
of the homogeneous state equation; chapter number from memory), computed
independently with scipy.linalg.expm.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.linalg import expm

from circuitode.model import (
    Dc,
    Exponential,
    LinearGenerator,
    PiecewiseLinear,
    PulseTrain,
    Ramp,
    Sine,
    SourceBank,
    Step,
)

PULSE = PulseTrain(low=-1.0, high=4.0, delay=1e-3, rise=1e-4, fall=2e-4, width=5e-4, period=2e-3, count=3)
SQUARE = PulseTrain(low=0.0, high=1.0, delay=0.0, rise=0.0, fall=0.0, width=0.5, period=1.0)

WAVEFORMS = [
    Dc(3.3),
    Step(before=1.0, after=-2.0, at=0.4),
    Ramp(initial=0.5, final=3.0, start=0.2, duration=0.5),
    Ramp(initial=0.0, final=2.0, start=0.3, duration=0.0),
    PULSE,
    SQUARE,
    Sine(amplitude=2.0, frequency=3.0, phase=0.7, offset=0.25, delay=0.1),
    PiecewiseLinear(times=(0.1, 0.3, 0.35, 0.9), values=(0.0, 5.0, 5.0, -1.0)),
    Exponential(initial=10.0, final=2.0, delay=0.2, time_constant=0.15),
]


def _replay(gen: LinearGenerator, offsets: np.ndarray) -> np.ndarray:
    """H @ expm(F τ) @ z0 at every τ in ``offsets`` (stacked expm, no loop)."""
    propagators = expm(gen.F[None, :, :] * offsets[:, None, None])
    return propagators @ gen.z0 @ np.atleast_2d(gen.H).T


@pytest.mark.parametrize("waveform", WAVEFORMS, ids=lambda w: type(w).__name__)
def test_generator_reproduces_value_on_every_segment(waveform):
    # Exact solution of z' = F z is expm(F t) z0 (Ogata ch. 9); every segment between
    # breakpoints must be reproduced to rounding, including the one before any delay.
    window = (0.0, 0.012) if waveform is PULSE else (0.0, 2.5)
    corners = np.concatenate([[window[0]], waveform.breakpoints(*window), [window[1]]])
    assert corners.size >= 2
    for t0, t1 in zip(corners[:-1], corners[1:]):
        gen = waveform.generator(t0, t1)
        offsets = np.linspace(0.0, t1 - t0, 23)
        expected = waveform.value_at(t0 + offsets)
        # at the closing corner the waveform may already have jumped; the segment ends on its left limit
        np.testing.assert_allclose(_replay(gen, offsets)[:-1, 0], expected[:-1], rtol=1e-9, atol=1e-9)
        left_limit = waveform.value_at(t1 - 1e-9 * (t1 - t0))
        assert abs(_replay(gen, offsets)[-1, 0] - left_limit) < 1e-6 * (1 + abs(left_limit))


def test_generator_state_sizes_follow_the_kind():
    # Sizes fixed by the module docstring: Dc 1, piecewise-linear 2, sine 3, exponential 2.
    sizes = {type(w).__name__: w.generator(0.0, 1e-4).z0.size for w in WAVEFORMS}
    assert sizes == {"Dc": 1, "Step": 2, "Ramp": 2, "PulseTrain": 2, "Sine": 3,
                     "PiecewiseLinear": 2, "Exponential": 2}
    F = Sine(1.0, 50.0).generator(0.0, 1.0).F
    w = 2 * math.pi * 50.0
    np.testing.assert_allclose(F, [[0, 0, 0], [0, 0, w], [0, -w, 0]])
    np.testing.assert_allclose(Exponential(1, 0, 0, 0.5).generator(0, 1).F, [[0, 0], [0, -2.0]])


def test_generator_refuses_a_segment_with_a_breakpoint_inside():
    with pytest.raises(ValueError, match="breakpoints"):
        Step(0.0, 1.0, at=0.5).generator(0.0, 1.0)
    with pytest.raises(ValueError, match="before its start"):
        Dc(1.0).generator(1.0, 0.0)


def test_values_against_closed_forms():
    # Each closed form is the waveform's textbook definition (common practice).
    sine = Sine(amplitude=2.0, frequency=50.0, phase=0.0, offset=1.0, delay=0.01)
    assert sine.value(0.0) == pytest.approx(1.0)  # offset before the delay
    assert sine.value(0.01 + 1 / 200) == pytest.approx(3.0)  # quarter period: peak
    assert sine.value(0.01 + 3 / 200) == pytest.approx(-1.0)  # three quarters: trough
    exp = Exponential(initial=10.0, final=2.0, delay=1.0, time_constant=0.5)
    assert exp.value(0.5) == pytest.approx(10.0)
    assert exp.value(1.5) == pytest.approx(2.0 + 8.0 / math.e)  # one time constant: 1/e of the gap
    ramp = Ramp(initial=1.0, final=3.0, start=2.0, duration=4.0)
    np.testing.assert_allclose(ramp.value([0.0, 2.0, 3.0, 6.0, 9.0]), [1.0, 1.0, 1.5, 3.0, 3.0])
    # PULSE: low -1, high 4, delay 1 ms, rise 0.1 ms, width 0.5 ms, fall 0.2 ms, period 2 ms, 3 pulses
    t = np.array([0.0, 1.05e-3, 1.3e-3, 1.7e-3, 1.9e-3, 3.05e-3, 5.3e-3, 7.3e-3])
    np.testing.assert_allclose(PULSE.value(t), [-1.0, 1.5, 4.0, 1.5, -1.0, 1.5, 4.0, -1.0], atol=1e-12)
    pwl = PiecewiseLinear(times=(1.0, 2.0, 4.0), values=(0.0, 10.0, 0.0))
    np.testing.assert_allclose(pwl.value([0.0, 1.5, 3.0, 5.0]), [0.0, 5.0, 5.0, 0.0])
    assert Dc(4.5).value_at(7.0) == 4.5


def test_values_keep_the_shape_of_t_and_scalars_stay_scalars():
    grid = np.linspace(0.0, 1.0, 12).reshape(3, 4)
    for w in WAVEFORMS:
        assert np.shape(w.value_at(grid)) == (3, 4)
        assert isinstance(w.value_at(0.3), float)


def test_jumps_are_right_continuous():
    # Convention of sources.py: at a jump the value is the one after it.
    assert Step(1.0, 2.0, at=0.5).value(0.5) == 2.0
    assert Ramp(0.0, 2.0, start=0.3, duration=0.0).value(0.3) == 2.0
    corners = SQUARE.breakpoints(0.0, 10.0)
    assert corners.size == 19
    # on edges at k·period it is high, at k·period + width it is low, even after rounding in k·T
    np.testing.assert_array_equal(SQUARE.value(corners), np.tile([0.0, 1.0], 10)[:-1])


def test_breakpoints_by_hand():
    np.testing.assert_allclose(Step(0, 1, at=0.4).breakpoints(0.0, 1.0), [0.4])
    assert Step(0, 1, at=0.4).breakpoints(0.4, 1.0).size == 0  # open interval
    np.testing.assert_allclose(Ramp(0, 1, start=0.2, duration=0.5).breakpoints(0, 1), [0.2, 0.7])
    np.testing.assert_allclose(Ramp(0, 1, start=0.2, duration=0.5).breakpoints(0.3, 1), [0.7])
    np.testing.assert_allclose(
        PiecewiseLinear((0.1, 0.3, 0.35, 0.9), (0, 5, 5, -1)).breakpoints(0.2, 0.9), [0.3, 0.35])
    expected = []
    for k in range(3):  # corners of PULSE: start, end of rise, start of fall, end of fall
        base = 1e-3 + k * 2e-3
        expected += [base, base + 1e-4, base + 6e-4, base + 8e-4]
    np.testing.assert_allclose(PULSE.breakpoints(0.0, 1.0), expected, rtol=1e-12)
    np.testing.assert_allclose(Sine(1, 50, delay=0.2).breakpoints(0, 1), [0.2])
    assert Dc(1).breakpoints(0, 1).size == 0


def test_endless_pulse_train_generates_only_the_window():
    # 1 kHz square wave: between 1000.0002 s and 1000.0031 s lie edges at
    # …0005, …0010, …0015, …0020, …0025, …0030 only.
    train = PulseTrain(low=0, high=1, delay=0, rise=0, fall=0, width=5e-4, period=1e-3)
    got = train.breakpoints(1000.0002, 1000.0031)
    np.testing.assert_allclose(got, 1000.0 + np.arange(5, 31, 5) * 1e-4, rtol=0, atol=1e-9)
    with pytest.raises(ValueError, match="finite end"):
        train.breakpoints(0.0, math.inf)


def test_finite_train_ends_low():
    assert PULSE.breakpoints(7e-3, 1.0).size == 0
    assert np.all(PULSE.value(np.linspace(7e-3, 1.0, 50)) == -1.0)


@settings(max_examples=40, deadline=None)
@given(
    rise=st.floats(0.0, 0.2), width=st.floats(0.0, 0.3), fall=st.floats(0.0, 0.2),
    delay=st.floats(0.0, 0.5), low=st.floats(-5, 5), high=st.floats(-5, 5),
)
def test_any_pulse_segment_is_a_straight_line(rise, width, fall, delay, low, high):
    # Between two consecutive corners a trapezoidal pulse is linear (its definition),
    # so the generator's line must agree with value() at the segment's midpoint.
    train = PulseTrain(low=low, high=high, delay=delay, rise=rise, fall=fall, width=width, period=1.0)
    corners = np.concatenate([[0.0], train.breakpoints(0.0, 3.0), [3.0]])
    for t0, t1 in zip(corners[:-1], corners[1:]):
        gen = train.generator(t0, t1)
        mid = 0.5 * (t0 + t1)
        assert gen.z0[0] + gen.z0[1] * (mid - t0) == pytest.approx(train.value(mid), abs=1e-9)


def test_bank_values_breakpoints_and_stacked_generator():
    bank = SourceBank([Dc(2.0), Sine(1.0, 5.0, phase=0.3), Step(0.0, 1.0, at=0.25)], ["a", "b", "c"])
    t = np.linspace(0.0, 0.5, 9)
    values = bank.values(t)
    assert values.shape == (9, 3)
    assert bank.values(0.1).shape == (3,)
    np.testing.assert_allclose(values[:, 1], np.sin(2 * np.pi * 5.0 * t + 0.3))
    np.testing.assert_allclose(bank.breakpoints(0.0, 1.0), [0.25])
    gen = bank.generators(0.25, 0.8)
    assert gen.F.shape == (6, 6) and gen.z0.shape == (6,) and gen.H.shape == (3, 6)
    offsets = np.linspace(0.0, 0.55, 17)
    replay = expm(gen.F[None] * offsets[:, None, None]) @ gen.z0 @ gen.H.T  # (nt, m)
    np.testing.assert_allclose(replay, bank.values(0.25 + offsets), atol=1e-12)


def test_empty_bank():
    bank = SourceBank([])
    assert bank.values(np.zeros(4)).shape == (4, 0)
    gen = bank.generators(0.0, 1.0)
    assert gen.F.shape == (0, 0) and gen.H.shape == (0, 0)
    assert bank.breakpoints(0.0, 1.0).size == 0


@pytest.mark.parametrize("make, words", [
    (lambda: PulseTrain(0, 1, 0, 0, 0, 0.5, period=0.0), "period must be positive"),
    (lambda: PulseTrain(0, 1, 0, -1e-3, 0, 0.5, period=1.0), "rise time must not be negative"),
    (lambda: PulseTrain(0, 1, 0, 0, 0, 0.5, period=1.0, count=0), "count must be at least 1"),
    (lambda: Exponential(1, 0, 0, time_constant=0.0), "time constant must be positive"),
    (lambda: Ramp(0, 1, 0, duration=-1.0), "duration must not be negative"),
    (lambda: PiecewiseLinear((0.0, 1.0, 1.0), (0, 1, 2)), "increase strictly"),
    (lambda: PiecewiseLinear((0.0, 1.0), (0,)), "as many values as times"),
    (lambda: Sine(1.0, float("nan")), "'frequency' must be a finite number"),
    (lambda: Dc(float("inf")), "'value' must be a finite number"),
])
def test_nonsense_fields_raise_our_error(make, words):
    from circuitode.errors import CircuitodeError
    from circuitode.model import WaveformError

    with pytest.raises(WaveformError, match=words) as err:
        make()
    assert isinstance(err.value, CircuitodeError)


def test_value_just_before_time_zero_is_the_value_before_any_edge():
    # The transient driver asks for u(0⁻) at t = −tiny; a pulse or step starting at 0
    # must still give its value before the edge there.
    before = -np.finfo(float).tiny
    assert SQUARE.value(before) == 0.0 and SQUARE.value(0.0) == 1.0
    assert Step(1.0, 2.0, at=0.0).value(before) == 1.0
    assert Ramp(0.0, 2.0, start=0.0, duration=0.0).value(before) == 0.0


def test_edges_shorter_than_time_resolution_are_jumps():
    # A subnormal rise or ramp duration would give an infinite slope; it is taken as a jump.
    for wave in (Ramp(0.0, 1.0, start=0.0, duration=5e-324),
                 PulseTrain(0.0, 1.0, delay=0.0, rise=5e-324, fall=0.0, width=0.5, period=1.0)):
        corners = wave.breakpoints(-1.0, 0.9)
        np.testing.assert_allclose(corners, [0.0] + ([0.5] if isinstance(wave, PulseTrain) else []))
        gen = wave.generator(0.0, 0.4)
        assert np.all(np.isfinite(gen.z0)) and gen.z0[0] == 1.0 and gen.z0[1] == 0.0


def test_source_batch_equals_one_bank_per_sample():
    # Each waveform is linear in its level fields (its definition), so the batch built from
    # basis waveforms must equal a bank built per sample with those levels written in.
    import dataclasses

    from circuitode.model.source_batch import SourceBatch

    waves = [Dc(48.0), PULSE, Sine(2.0, 3.0, phase=0.7, offset=0.25, delay=0.1),
             Exponential(5.0, 5.0, delay=0.2, time_constant=0.15),
             PiecewiseLinear((0.1, 0.3), (0.0, 5.0))]
    bank = SourceBank(waves, ["pack", "drive", "hum", "surge", "ramp"])
    rng = np.random.default_rng(11)
    N = 5
    varied = {("pack", "waveform.value"): 48.0 * rng.uniform(0.9, 1.1, N),
              ("drive", "waveform.high"): rng.uniform(3, 5, N),
              ("hum", "waveform.amplitude"): rng.uniform(1, 3, N),
              ("surge", "waveform.initial"): rng.uniform(6, 9, N)}
    batch = SourceBatch(bank, varied)
    t = np.linspace(0.0, 0.012, 41)
    got = batch.values(t)
    assert got.shape == (N, 41, 5) and batch.values(0.01).shape == (N, 5)
    corners = batch.breakpoints(0.0, 0.5)
    assert 0.2 in corners  # the exponential's start, although its nominal levels are equal
    for i in range(N):
        per_field: dict[str, dict] = {}
        for (name, field), arr in varied.items():
            per_field.setdefault(name, {})[field.split(".")[1]] = arr[i]
        single = SourceBank([dataclasses.replace(w, **per_field.get(n, {})) for w, n in zip(waves, bank.names)])
        np.testing.assert_allclose(got[i], single.values(t), rtol=1e-13, atol=1e-12)
        t0, t1 = 0.2, 0.3  # no corner of any input inside
        gen, ref = batch.generators(t0, t1), single.generators(t0, t1)
        np.testing.assert_allclose(gen.z0[i], ref.z0, rtol=1e-13, atol=1e-12)
        np.testing.assert_array_equal(gen.F, ref.F)
    from circuitode.model import WaveformError

    with pytest.raises(WaveformError, match="timing stays common"):
        SourceBatch(bank, {("hum", "waveform.frequency"): np.ones(N)})
