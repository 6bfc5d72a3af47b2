"""Point-on-wave closing and per-sample switching instants in batches and sweeps
(circuitode.tolerance.timed_switches, model.AngleSchedule, studies.worst)."""
from __future__ import annotations

import math
import re

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

import circuitode as co
from circuitode.cli import main
from circuitode.errors import CircuitodeError
from circuitode.model import CurrentThrough, VoltageAcross
from circuitode.netlist import loads
from circuitode.netlist.parts import part_names, set_parts
from circuitode.studies import sweep
from circuitode.tolerance import format_batch_summary, run_batch
from circuitode.tolerance.engine import simulate_chunk

# ---------------------------------------------------------------------------
# the language: "closes on angle A of SOURCE [from T]"
# ---------------------------------------------------------------------------

ANGLE = """
ground g
voltage_source Vs a -- g sine amplitude 10 V frequency 50 Hz phase 30 deg delay 1 ms
switch K1 a -- b closes on angle {angle} of Vs{start}
resistor R1 b -- g 1 Ω
transient until 40 ms step 10 us method exact
record current through R1
"""


@pytest.mark.parametrize("angle, start, expected", [
    # phase 2π·50 Hz·(t − 1 ms) + 30° reaches 90° at t − 1 ms = 60/360 · 20 ms
    ("90 deg", "", 1e-3 + 20e-3 / 6),
    ("90 deg", " from 6 ms", 1e-3 + 20e-3 / 6 + 20e-3),
    ("30 deg", " from 1 ms", 1e-3),                 # met at the earliest instant itself
    ("0 rad", "", 1e-3 + 20e-3 * 330 / 360),
])
def test_the_closing_instant_is_the_first_at_that_angle(angle, start, expected):
    c = loads(ANGLE.format(angle=angle, start=start))
    (t, closes), = c.by_name["K1"].control.changes
    assert closes and t == pytest.approx(expected, rel=1e-12)
    # an outside check of the instant: the source's own value there is A·sin(angle)
    wave = c.by_name["Vs"].waveform
    a = co.quantities.parse_quantity(angle, "rad")
    assert wave.value(t) == pytest.approx(10.0 * math.sin(a), abs=1e-9)


def test_a_run_lists_the_closing_by_its_angle():
    """The event names the angle the user wrote (it said "follows its timed schedule"), at the
    instant of the first parametrised case (1 ms + 20 ms/6 = 4.333 ms)."""
    waves = co.simulate(loads(ANGLE.format(angle="90 deg", start="")))
    (event,) = [e for e in waves.events if e.switch == "K1"]
    assert event.reason == "K1 closes on angle 90 deg of Vs"
    assert event.time == pytest.approx(1e-3 + 20e-3 / 6, rel=1e-12)


@pytest.mark.parametrize("argv", [["run", "--set", "K1.angle=30", "--no-plots"],
                                  ["sweep", "--vary", "K1.angle=0..360/5", "--no-plots"]])
def test_a_bare_angle_on_the_command_line_is_exit_2(argv, tmp_path, capsys):
    path = tmp_path / "angle.cnet"
    path.write_text(ANGLE.format(angle="90 deg", start=""), encoding="utf-8")
    assert main([argv[0], str(path), *argv[1:], "--out", str(tmp_path / "out")]) == 2
    assert "is an angle and needs its unit" in capsys.readouterr().err


def test_angle_and_instant_are_parts_to_set_and_vary():
    c = loads(ANGLE.format(angle="90 deg", start=""))
    assert "K1.angle" in part_names(c)
    moved = set_parts(c, {"K1.angle": "210 deg"})  # 180° after the source's start phase of 30°
    assert moved.by_name["K1"].control.changes[0][0] == pytest.approx(1e-3 + 10e-3, rel=1e-12)
    timed = loads(ANGLE.format(angle="90 deg", start="").replace(
        "closes on angle 90 deg of Vs", "closes at 3 ms"))
    assert "K1.at" in part_names(timed) and "K1.angle" not in part_names(timed)
    assert set_parts(timed, {"K1.at": "4 ms"}).by_name["K1"].control.changes == ((4e-3, True),)


# ---------------------------------------------------------------------------
# the engine: per-sample instants equal single runs at those instants
# ---------------------------------------------------------------------------

RLC = """
ground g
voltage_source Vs a -- g sine amplitude 100 V frequency 50 Hz phase 10 deg
switch K1 a -- b closes at 3 ms ± 50 % uniform
resistor R1 b -- c 2 Ω
inductor L1 c -- d 5 mH
capacitor C1 d -- g 200 uF initial 0 V
switch K2 d -- e closes at 12 ms
resistor R2 e -- g 20 Ω
transient until 30 ms step 20 us method exact initial given
record current through L1, voltage across C1
"""


def _last_per_instant(t, y):
    """Distinct instants and the value just after each (the later of two rows at a switching instant);
    instants within rounding (1e-13 s) of each other are one."""
    u, idx = np.unique(np.round(t[::-1], 13), return_index=True)
    return u, y[::-1][idx]


def test_per_sample_instants_equal_single_runs_at_those_instants():
    c = loads(RLC)
    # between grid instants, on a grid instant, at the other switch's instant, at the start,
    # and after the window (never closes)
    instants = np.array([1.2345678e-3, 5e-3, 12e-3, 0.0, 4.5e-3, 31e-3])
    probes = [CurrentThrough("L1"), VoltageAcross("C1")]
    w = simulate_chunk(c, {("K1", "control.changes.0"): instants}, probes, method="exact")
    assert w.ok.all()
    for k, t_close in enumerate(instants):
        single = co.simulate(set_parts(c, {"K1.at": float(t_close)}))
        for j, label in enumerate(("current through L1", "voltage across C1")):
            t1, y1 = _last_per_instant(np.asarray(single.t), np.asarray(single.signals[label]))
            t2, y2 = _last_per_instant(w.t[k], w.signals[j][k])
            assert np.array_equal(t1, t2), t_close
            scale = max(np.max(np.abs(y1)), 1e-30)
            assert np.max(np.abs(y1 - y2)) <= 1e-9 * scale, (t_close, label)
    # the batch records each sample's own instant (NaN when it never came)
    assert w.event_times[:5, 0] == pytest.approx([1.2345678e-3, 5e-3, 12e-3, 0.0, 4.5e-3], abs=1e-15)
    assert np.isnan(w.event_times[5, 0])


RC_DC = """
ground g
voltage_source V1 a -- g constant 12 V
switch K1 a -- b closes at 2 ms ± 50 % uniform
resistor R1 b -- c 10 Ω ± 10 %
capacitor C1 c -- g 100 uF initial 0 V
transient until 8 ms step 10 us method exact initial given
record current through R1
require peak current through R1 < 1.25 A
"""


def test_a_spread_on_a_closing_instant_runs_in_a_tolerance_batch(tmp_path):
    r = run_batch(loads(RC_DC), samples=60, seed=2, out_dir=tmp_path, progress=False, plots=False)
    assert r.ok.all()
    names = r.samples.names
    at = r.samples.values[:, names.index("K1.at")]
    R = r.samples.values[:, names.index("R1")]
    assert np.ptp(at) > 1e-3  # the instants do differ: 1 ms to 3 ms
    peak = r.figures[:, r.figure_keys.index(("peak", "current through R1"))]
    when = r.figures[:, r.figure_keys.index(("time_of_peak", "current through R1"))]
    # closing an empty capacitor onto 12 V through R: the peak is V/R at the instant of
    # closing (Nilsson & Riedel ch. 7), whenever that is
    assert np.allclose(peak, 12.0 / R, rtol=1e-9)
    assert np.allclose(when, at, rtol=0, atol=1e-12)
    text = format_batch_summary(r).replace("\u00a0", " ")
    k = int(np.argmax(peak))  # the worst sample is named with its instant, in seconds
    assert f"at sample {k} (K1.at {co.quantities.format_si(at[k], 's')}" in text


def test_a_switch_that_moves_twice_keeps_its_instants_common(tmp_path):
    text = RC_DC.replace("closes at 2 ms ± 50 % uniform", "closes at 2 ms ± 50 % uniform opens at 6 ms")
    with pytest.raises(CircuitodeError, match="moves 2 times"):
        run_batch(loads(text), samples=10, out_dir=tmp_path, progress=False)


# ---------------------------------------------------------------------------
# the worst closing angle of a series RL on a sine, against the closed form
# ---------------------------------------------------------------------------

V, F, R, L = 325.0, 50.0, 0.6, 20e-3
RL_ON_SINE = f"""
ground g
voltage_source Vmains a -- g sine amplitude {V} V frequency {F} Hz phase 0 deg
switch K a -- b closes on angle 90 deg of Vmains from 5 ms
resistor R b -- c {R} Ω
inductor L c -- g {L * 1e3} mH initial 0 A
transient until 37 ms step 2 us method exact initial given
record current through L
require peak current through L < 85 A
"""


def _closed_form_first_peak(theta: float) -> float:
    """Largest |i| of the first half-cycle and a bit after closing at source angle theta:
    i(t) = (V/|Z|)[sin(ωt + θ − φ) − sin(θ − φ) e^(−tR/L)] (Nilsson & Riedel ch. 9)."""
    w = 2 * math.pi * F
    Z, phi = math.hypot(R, w * L), math.atan2(w * L, R)

    def i(t):
        return V / Z * (np.sin(w * t + theta - phi) - math.sin(theta - phi) * np.exp(-t * R / L))

    t = np.linspace(0.0, 12e-3, 12001)
    k = int(np.argmax(np.abs(i(t))))
    best = minimize_scalar(lambda s: -abs(i(s)), bounds=(t[max(k - 1, 0)], t[min(k + 1, t.size - 1)]),
                           method="bounded", options={"xatol": 1e-13})
    return -best.fun


def test_worst_closing_angle_matches_the_maximised_closed_form(tmp_path):
    # the worst angle by maximisation of the closed form (scan, then bounded refinement)
    grid = np.radians(np.arange(0.0, 360.0, 2.0))
    coarse = np.array([_closed_form_first_peak(th) for th in grid])
    k = int(np.argmax(coarse))
    found = minimize_scalar(lambda th: -_closed_form_first_peak(th), bounds=(grid[k] - 0.04, grid[k] + 0.04),
                            method="bounded", options={"xatol": 1e-10})
    theta_star, peak_star = float(found.x), -float(found.fun)
    # the classic rule (largest DC offset at θ = φ − 90°) is close but not the worst first peak
    phi = math.atan2(2 * math.pi * F * L, R)
    rule = phi - math.pi / 2
    assert 1.0 < abs(math.degrees(_wrapped(theta_star - rule, math.pi))) < 10.0
    assert _closed_form_first_peak(rule) < peak_star * (1 - 1e-4)

    path = tmp_path / "rl.cnet"
    # a coarse 50 µs output step: each point's peak is located between rows on the solution
    # (tolerance/batch_extrema.py), so it is exact whatever the step (measured: 1e-14)
    path.write_text(RL_ON_SINE.replace("step 2 us", "step 50 us"), encoding="utf-8")
    # a 10° grid that misses the worst angle, then refined between its neighbours
    s = sweep(path, {"K.angle": "1deg..361deg/37"}, refine=True, progress=False)
    (worst,) = s.worst
    assert worst.refined and worst.margin < 0
    assert worst.value == pytest.approx(peak_star, rel=1e-9)
    # |i| repeats with the sign flipped half a period later, so angles count modulo 180°
    assert abs(_wrapped(worst.point[0] - theta_star, math.pi)) <= worst.step + 1e-7
    # the grid alone: the worst grid point lies within a grid step of the true worst angle
    grid_worst = s.points[int(np.argmin(s.results.margins[:, 0])), 0]
    assert abs(_wrapped(grid_worst - theta_star, math.pi)) <= math.radians(10.0)


def _wrapped(x: float, period: float) -> float:
    """x brought into [−period/2, period/2)."""
    return (x + period / 2) % period - period / 2


def test_sweep_command_names_the_worst_angle_in_degrees(tmp_path, capsys):
    path = tmp_path / "rl.cnet"
    path.write_text(RL_ON_SINE.replace("step 2 us", "step 50 us"), encoding="utf-8")
    assert main(["sweep", str(path), "--vary", "K.angle=0deg..360deg/13", "--out", str(tmp_path / "o"),
                 "--no-plots"]) == 0
    out = capsys.readouterr().out
    assert "K.angle 13 values 0 deg to 360 deg" in out
    # a voltage zero (0, 180 or 360 deg: equal first peaks of opposite sign, as above)
    assert "worst point of each limit:" in out
    assert re.search(r"89\.9\d A \(fails\) at K\.angle = (0|180|360) deg\n", out)
    assert "(grid point; ± 15 deg)" in out


def test_a_single_run_names_the_angle_its_switch_closed_on():
    # the event says why the switch moved in the language's own words (not "its timed schedule")
    wf = co.simulate(loads(ANGLE.format(angle="90 deg", start="")))
    (event,) = wf.events
    assert event.switch == "K1" and event.closed
    assert event.reason == "K1 closes on angle 90 deg of Vs"
    # phase 2π·50 Hz·(t − 1 ms) + 30° reaches 90° at t − 1 ms = 60/360 · 20 ms
    assert event.time == pytest.approx(1e-3 + 20e-3 / 6, rel=1e-12)
