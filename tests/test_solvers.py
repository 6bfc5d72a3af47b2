"""Integrators on bare x' = A x + B u(t) systems, checked against closed forms.

Each check names its source.  Book chapter numbers are cited from memory
(they shift between editions); the closed forms themselves are re-derived in the
comments or are standard results.  Circuits here are written directly as state-space
models (states: capacitor voltages, inductor currents) so the numerical core is
tested with no netlist and no assembly.
"""
from __future__ import annotations

import numpy as np
import pytest
import scipy.signal as signal

from circuitode.errors import CircuitodeError, IntegrationError, UnstableStepError
from circuitode.solvers import (METHODS, EXACT_MAX_STATES, LinearEvent, LinearSegment,
                                check_rk4_step, choose_method, get_integrator,
                                rk4_stability_limit, stiffness_ratio)
from circuitode.solvers.scipy_ivp import jacobian_for
from circuitode.model import LinearGenerator

ALL = sorted(METHODS)
# Relative error allowed per method at the settings of `integrator()` below.
TOL = {"rk4": 1e-7, "rk45": 1e-6, "dop853": 1e-6, "radau": 1e-6, "bdf": 1e-5, "exact": 1e-9}
# Event instants, as a fraction of the window.  The crossing is located on each method's own
# solution to event_tol; what is left is that solution's own error, larger for BDF.
EVENT_TOL = {"rk4": 1e-9, "rk45": 1e-9, "dop853": 1e-9, "radau": 1e-9, "bdf": 1e-8, "exact": 1e-9}


def integrator(name, step=1e-7):
    """rk4 gets a fixed step (stable for every system below); the others tight tolerances."""
    rtol = 1e-9 if name == "radau" else 1e-10  # Radau is slow at 1e-10 and meets TOL at 1e-9
    return get_integrator(name, step=step if name == "rk4" else None, rtol=rtol, atol=1e-13)


class Constant:
    """u(t) = value (one input), with its generator z' = 0."""

    def __init__(self, value):
        self.value = float(value)

    def values(self, t):
        return np.full((np.size(t), 1), self.value)

    def generators(self, t0, t1):
        return LinearGenerator(np.zeros((1, 1)), np.array([self.value]), np.array([1.0]))


class SineInput:
    """u(t) = amplitude sin(ω t + phase); generator z = [sin θ, cos θ], z' = [[0, ω], [−ω, 0]] z."""

    def __init__(self, amplitude, omega, phase=0.0):
        self.amplitude, self.omega, self.phase = amplitude, omega, phase

    def values(self, t):
        return (self.amplitude * np.sin(self.omega * np.asarray(t) + self.phase)).reshape(-1, 1)

    def generators(self, t0, t1):
        theta = self.omega * t0 + self.phase
        F = np.array([[0.0, self.omega], [-self.omega, 0.0]])
        return LinearGenerator(F, np.array([np.sin(theta), np.cos(theta)]),
                               np.array([self.amplitude, 0.0]))


def series_rlc(R, L, C):
    """States [v_C, i_L]; a source V drives R, L, C in series: C v' = i, L i' = V − R i − v."""
    A = np.array([[0.0, 1.0 / C], [-1.0 / L, -R / L]])
    B = np.array([[0.0], [1.0 / L]])
    return A, B


def series_rlc_step(R, L, C, V, t):
    """(v_C, i_L) of a series RLC from rest after a step of V volts at t = 0.

    Nilsson & Riedel, Electric Circuits, ch. 8 (step response of a series RLC);
    Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 8.
    """
    alpha, w0 = R / (2 * L), 1 / np.sqrt(L * C)
    if np.isclose(alpha, w0, rtol=1e-12):
        v = V - V * np.exp(-alpha * t) * (1 + alpha * t)
        i = V / L * t * np.exp(-alpha * t)
    elif alpha < w0:
        wd = np.sqrt(w0**2 - alpha**2)
        e = np.exp(-alpha * t)
        v = V - V * e * (np.cos(wd * t) + alpha / wd * np.sin(wd * t))
        i = V / (L * wd) * e * np.sin(wd * t)
    else:
        root = np.sqrt(alpha**2 - w0**2)
        s1, s2 = -alpha + root, -alpha - root
        A1, A2 = V * s2 / (s1 - s2), -V * s1 / (s1 - s2)
        v = V + A1 * np.exp(s1 * t) + A2 * np.exp(s2 * t)
        i = C * (s1 * A1 * np.exp(s1 * t) + s2 * A2 * np.exp(s2 * t))
    return v, i


def rel_err(got, want):
    return float(np.max(np.abs(got - want)) / np.max(np.abs(want)))


# ---------------------------------------------------------------------------
# First-order circuits
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("name", ALL)
def test_rc_charging_reaches_63_percent_after_one_time_constant(name):
    # v(t) = V (1 − e^{−t/RC}); after one τ = RC, 1 − 1/e = 63.2 % (common practice).
    R, C, V = 1e3, 1e-6, 10.0
    tau = R * C
    seg = LinearSegment([[-1 / tau]], [[1 / tau]], Constant(V), 0.0, 5 * tau, [0.0])
    t = np.linspace(0.0, 5 * tau, 51)
    res = integrator(name).solve(seg, t)
    assert rel_err(res.x[:, 0], V * (1 - np.exp(-t / tau))) < TOL[name]
    assert res.x[10, 0] / V == pytest.approx(1 - np.exp(-1), rel=TOL[name])
    assert res.x[10, 0] / V == pytest.approx(0.632, abs=5e-4)  # the rounded figure of the trade


@pytest.mark.parametrize("name", ALL)
def test_rl_current_rises_to_v_over_r(name):
    # i(t) = (V/R)(1 − e^{−R t / L}) (Nilsson & Riedel, ch. 7, step response of RL).
    R, L, V = 5.0, 10e-3, 12.0
    seg = LinearSegment([[-R / L]], [[1 / L]], Constant(V), 0.0, 10e-3, [0.0])
    t = np.linspace(0.0, 10e-3, 41)
    res = integrator(name).solve(seg, t)
    assert rel_err(res.x[:, 0], V / R * (1 - np.exp(-R * t / L))) < TOL[name]


# ---------------------------------------------------------------------------
# Second-order circuits
# ---------------------------------------------------------------------------

DAMPINGS = {  # R for L = 1 mH, C = 10 µF: R_critical = 2√(L/C) = 20 Ω
    "underdamped": 4.0,
    "critically damped": 20.0,
    "overdamped": 60.0,
}


@pytest.mark.parametrize("case", sorted(DAMPINGS))
@pytest.mark.parametrize("name", ALL)
def test_series_rlc_step_response(name, case):
    # Nilsson & Riedel, ch. 8; Alexander & Sadiku, ch. 8 (closed forms in series_rlc_step).
    R, L, C, V = DAMPINGS[case], 1e-3, 10e-6, 24.0
    A, B = series_rlc(R, L, C)
    seg = LinearSegment(A, B, Constant(V), 0.0, 3e-3, [0.0, 0.0])
    t = np.linspace(0.0, 3e-3, 61)
    res = integrator(name).solve(seg, t)
    v, i = series_rlc_step(R, L, C, V, t)
    assert rel_err(res.x[:, 0], v) < TOL[name]
    assert rel_err(res.x[:, 1], i) < TOL[name]


@pytest.mark.parametrize("name", ALL)
def test_parallel_rlc_natural_response_from_inductor_current(name):
    # Nilsson & Riedel, ch. 8 (natural response of a parallel RLC): v(0) = 0, i_L(0) = I0,
    # v(t) = −I0/(C ω_d) e^{−α t} sin ω_d t with α = 1/(2RC), ω_d = √(ω0² − α²).
    R, L, C, I0 = 50.0, 2e-3, 5e-6, 0.3
    A = np.array([[-1 / (R * C), -1 / C], [1 / L, 0.0]])  # C v' = −v/R − i_L, L i_L' = v
    seg = LinearSegment(A, np.zeros((2, 0)), None, 0.0, 2e-3, [0.0, I0])
    t = np.linspace(0.0, 2e-3, 81)
    res = integrator(name).solve(seg, t)
    alpha, w0 = 1 / (2 * R * C), 1 / np.sqrt(L * C)
    wd = np.sqrt(w0**2 - alpha**2)
    assert rel_err(res.x[:, 0], -I0 / (C * wd) * np.exp(-alpha * t) * np.sin(wd * t)) < TOL[name]


@pytest.mark.parametrize("name", ALL)
def test_lossless_lc_period_and_energy(name):
    # Period 2π√(LC) and ½CV² + ½LI² constant (Alexander & Sadiku, ch. 8, LC circuit).
    L, C, V0 = 1e-3, 1e-6, 5.0
    A, _ = series_rlc(0.0, L, C)
    period = 2 * np.pi * np.sqrt(L * C)
    seg = LinearSegment(A, np.zeros((2, 0)), None, 0.0, 3 * period, [V0, 0.0])
    t = np.linspace(0.0, 3 * period, 121)
    res = integrator(name).solve(seg, t)
    v, i = res.x.T
    assert v[-1] == pytest.approx(V0, rel=10 * TOL[name])  # back to the start after 3 periods
    assert v[20] == pytest.approx(-V0, rel=10 * TOL[name])  # half a period
    energy = 0.5 * C * v**2 + 0.5 * L * i**2
    assert np.max(np.abs(energy / (0.5 * C * V0**2) - 1)) < 10 * TOL[name]


@pytest.mark.parametrize("name", ALL)
def test_series_rlc_sine_steady_state_matches_phasor(name):
    # Phasor analysis (Alexander & Sadiku, ch. 9–10; Nilsson & Riedel, ch. 9):
    # V_C / V = 1 / (1 − ω²LC + jωRC); after the transient (e^{−αt}, α = R/2L) decays.
    R, L, C, amp, f = 16.0, 1e-3, 10e-6, 3.0, 1e3
    w = 2 * np.pi * f
    A, B = series_rlc(R, L, C)
    seg = LinearSegment(A, B, SineInput(amp, w), 0.0, 5e-3, [0.0, 0.0])
    t = np.linspace(4.4e-3, 5e-3, 25)  # α t ≥ 35: transient below 1e-15
    res = integrator(name, step=1e-7).solve(seg, t)
    H = 1 / (1 - w**2 * L * C + 1j * w * R * C)
    want = amp * abs(H) * np.sin(w * t + np.angle(H))
    assert rel_err(res.x[:, 0], want) < 10 * TOL[name]


@pytest.mark.parametrize("case", sorted(DAMPINGS))
@pytest.mark.parametrize("name", ALL)
def test_series_rlc_against_scipy_lsim(name, case):
    # Transfer function derived by hand (voltage divider of 1/(sC) against R + sL):
    # V_C(s)/V(s) = 1 / (LC s² + RC s + 1); scipy.signal.lsim as the reference library,
    # driven by a sine switched on at t = 0 (lsim interpolates the input linearly, so its
    # grid is fine enough for its own error to stay near 1e-7).
    R, L, C = DAMPINGS[case], 1e-3, 10e-6
    w = 2 * np.pi * 700.0
    A, B = series_rlc(R, L, C)
    t = np.linspace(0.0, 4e-3, 4001)
    src = SineInput(2.0, w)
    _, y_ref, _ = signal.lsim(([1.0], [L * C, R * C, 1.0]), src.values(t)[:, 0], t)
    seg = LinearSegment(A, B, src, 0.0, 4e-3, [0.0, 0.0])
    res = integrator(name).solve(seg, t[::100])
    assert rel_err(res.x[:, 0], y_ref[::100]) < max(TOL[name], 2e-6)


# ---------------------------------------------------------------------------
# Exactness, order, stability, events
# ---------------------------------------------------------------------------


def test_exact_sine_driven_rc_is_exact():
    # RC driven by sin ωt from rest: v = [sin ωt − ωτ cos ωt + ωτ e^{−t/τ}] / (1 + ω²τ²)
    # (first-order linear ODE solved by integrating factor; Nilsson & Riedel, ch. 9 / any ODE text).
    tau, w = 1e-3, 2 * np.pi * 400.0
    seg = LinearSegment([[-1 / tau]], [[1 / tau]], SineInput(1.0, w), 0.0, 10e-3, [0.0])
    t = np.linspace(0.0, 10e-3, 2001)
    res = get_integrator("exact").solve(seg, t)
    wt = w * tau
    want = (np.sin(w * t) - wt * np.cos(w * t) + wt * np.exp(-t / tau)) / (1 + wt**2)
    assert rel_err(res.x[:, 0], want) < 1e-9
    assert res.counters["expm_calls"] == 1  # a uniform grid reuses one exponential


def test_rk4_observed_order_is_four():
    # Global error of classic RK4 is O(h⁴) (Butcher, Numerical Methods for ODEs, ch. 3):
    # halving h divides the error by 2⁴; observed order log2(e(h)/e(h/2)) in [3.8, 4.2].
    R, L, C, V = 4.0, 1e-3, 10e-6, 24.0
    A, B = series_rlc(R, L, C)
    seg = LinearSegment(A, B, Constant(V), 0.0, 1e-3, [0.0, 0.0])
    t_end = np.array([1e-3])
    want = np.array(series_rlc_step(R, L, C, V, t_end)).ravel()
    errors = []
    for h in (4e-6, 2e-6, 1e-6):
        res = get_integrator("rk4", step=h).solve(seg, t_end)
        errors.append(np.max(np.abs(res.x[0] - want)))
    orders = np.log2(np.array(errors[:-1]) / np.array(errors[1:]))
    assert np.all((orders > 3.8) & (orders < 4.2)), orders


def test_rk4_shortens_the_last_step_to_land_on_the_end():
    seg = LinearSegment([[-1.0]], [[1.0]], Constant(1.0), 0.0, 1.05, [0.0])
    res = get_integrator("rk4", step=0.1).solve(seg, [1.05])
    assert res.counters["steps"] == 11
    assert res.x_end[0] == pytest.approx(1 - np.exp(-1.05), rel=1e-5)  # common practice: RK4 at h = 0.1


def test_rk4_stability_limit_on_the_axes():
    # From memory (Hairer & Wanner, Solving ODEs II, ch. IV.2 figure of RK stability
    # regions): classic RK4 reaches −2.785 on the negative real axis and ±2√2 on the
    # imaginary axis (|R(iy)|² = 1 − y⁶/72 + y⁸/576, which is 1 at y² = 8).
    assert rk4_stability_limit([-1.0]) == pytest.approx(2.785293563, rel=1e-8)
    assert rk4_stability_limit([-1000.0]) == pytest.approx(2.785293563e-3, rel=1e-8)
    assert rk4_stability_limit([2j, -2j]) == pytest.approx(np.sqrt(2), rel=1e-9)
    assert rk4_stability_limit([0.0]) == np.inf
    # the limit is the minimum over eigenvalues
    assert rk4_stability_limit([-1.0, -10.0]) == pytest.approx(0.2785293563, rel=1e-8)


def test_rk4_stability_limit_is_the_boundary_of_the_region():
    lam = np.array([-3.0 + 40.0j, -200.0 + 5.0j, -50.0 - 50.0j])
    h = rk4_stability_limit(lam)
    z = h * lam
    gain = np.abs(1 + z + z**2 / 2 + z**3 / 6 + z**4 / 24)
    assert np.all(gain <= 1 + 1e-9)
    assert np.max(gain) == pytest.approx(1.0, abs=1e-9)  # one eigenvalue sits on the boundary
    z = 1.001 * h * lam
    assert np.max(np.abs(1 + z + z**2 / 2 + z**3 / 6 + z**4 / 24)) > 1


def test_rk4_guard_refuses_unstable_step_and_accepts_stable_one():
    eig = np.array([-1e6, -10.0])  # a stiff RC pair
    limit = 2.785293563e-6
    with pytest.raises(UnstableStepError) as info:
        check_rk4_step(eig, 1e-5)
    message = str(info.value)
    # the limit in engineering notation, and a suggested step rounded down (still stable)
    assert "2.78529 µs" in message and "2.78 µs or less" in message
    assert "radau" in message and "exact" in message
    assert info.value.largest_stable_step == pytest.approx(limit, rel=1e-8)
    assert info.value.exit_code == 3
    check_rk4_step(eig, 2.7e-6)  # must not raise
    # a lightly damped pair binds before a faster real mode (2√2/30 ≈ 0.094 < 2.785/3 ≈ 0.93)
    with pytest.raises(UnstableStepError, match=r"-1\+30j"):
        check_rk4_step([-3.0, -1 + 30j, -1 - 30j], 0.5)


@pytest.mark.parametrize("name", ALL)
def test_threshold_event_instant_matches_closed_form(name):
    # RC charging crosses Vth at t = −RC ln(1 − Vth/V) (common practice); located to 1e-9 × window.
    R, C, V, Vth = 2.2e3, 4.7e-6, 48.0, 43.0
    tau, window = R * C, 5 * R * C
    seg = LinearSegment([[-1 / tau]], [[1 / tau]], Constant(V), 0.0, window, [0.0])
    t = np.linspace(0.0, window, 26)
    event = LinearEvent(c=[1.0], d=[0.0], level=Vth, rising=True)
    res = integrator(name, step=1e-6).solve(seg, t, [event])
    t_star = -tau * np.log(1 - Vth / V)
    assert res.event_index == 0
    assert abs(res.event_time - t_star) < EVENT_TOL[name] * window
    assert res.x_end[0] == pytest.approx(Vth, rel=1e-8)
    assert np.all(res.t < res.event_time) and res.t.size == np.count_nonzero(t < t_star)


@pytest.mark.parametrize("name", ["exact", "rk45", "rk4"])
def test_falling_event_and_earliest_of_two(name):
    # LC oscillation v = V0 cos ω0 t (Alexander & Sadiku, ch. 8): falls through V0/2 at
    # ω0 t = π/3, before it falls through 0 at π/2; the rising watch on −v fires at the same time.
    L, C, V0 = 1e-3, 1e-6, 5.0
    A, _ = series_rlc(0.0, L, C)
    w0 = 1 / np.sqrt(L * C)
    seg = LinearSegment(A, np.zeros((2, 0)), None, 0.0, 2e-3, [V0, 0.0])
    events = [LinearEvent([1.0, 0.0], [], 0.0, rising=False),
              LinearEvent([-1.0, 0.0], [], -V0 / 2, rising=True)]
    res = integrator(name, step=1e-7).solve(seg, np.linspace(0, 2e-3, 5), events)
    assert res.event_index == 1
    assert res.event_time == pytest.approx(np.pi / 3 / w0, rel=1e-7)


def test_exact_finds_a_crossing_between_sparse_output_times():
    # With only the two end points requested, the oscillation still gets checked
    # every quarter period, so the first downward zero of V0 cos ω0 t is found.
    L, C, V0 = 1e-3, 1e-6, 5.0
    A, _ = series_rlc(0.0, L, C)
    seg = LinearSegment(A, np.zeros((2, 0)), None, 0.0, 1e-3, [V0, 0.0])
    event = LinearEvent([1.0, 0.0], [], 0.0, rising=False)
    res = get_integrator("exact").solve(seg, [0.0, 1e-3], [event])
    assert res.event_time == pytest.approx(np.pi / 2 * np.sqrt(L * C), rel=1e-9)


# ---------------------------------------------------------------------------
# Registry, method choice, bad requests
# ---------------------------------------------------------------------------


def test_unknown_method_lists_the_valid_names():
    with pytest.raises(CircuitodeError) as info:
        get_integrator("euler")
    assert isinstance(info.value, ValueError) and info.value.exit_code == 2
    for name in ALL:
        assert name in str(info.value)


def test_rk4_without_step_is_refused_with_advice():
    with pytest.raises(CircuitodeError, match="step"):
        get_integrator("rk4")


def test_capabilities_are_declared():
    assert METHODS["radau"].stiff and METHODS["radau"].uses_jacobian
    assert METHODS["bdf"].stiff and METHODS["rk45"].adaptive and not METHODS["rk45"].stiff
    assert METHODS["rk4"].fixed_step and METHODS["exact"].exact


def test_outputs_outside_the_segment_are_refused():
    seg = LinearSegment([[-1.0]], [[1.0]], Constant(1.0), 0.0, 1.0, [0.0])
    with pytest.raises(IntegrationError, match="segment"):
        get_integrator("exact").solve(seg, [0.5, 2.0])


def test_mismatched_shapes_are_refused():
    with pytest.raises(IntegrationError, match="shapes"):
        LinearSegment(np.eye(2), np.ones((2, 1)), Constant(1.0), 0.0, 1.0, [0.0])


def test_choose_method_prefers_exact_and_names_its_figures():
    name, reason = choose_method([np.array([-1e6, -10.0])], True)
    assert name == "exact"
    assert "1e+05" in reason  # stiffness ratio 1e6 / 10, named in the reason
    big = [np.linspace(-1e6, -1.0, EXACT_MAX_STATES + 1)]
    assert choose_method(big, True)[0] == "bdf"
    assert choose_method([np.array([-2.0, -1.0 + 5j, -1.0 - 5j])], False)[0] == "rk45"
    assert choose_method([np.array([-1e5, -1.0])], False)[0] == "radau"
    assert stiffness_ratio([0.0, -2.0, -8.0 + 3j]) == pytest.approx(4.0)


def test_large_sparse_jacobian_is_handed_over_sparse():
    n = 300
    A = -2 * np.eye(n) + np.eye(n, k=1) + np.eye(n, k=-1)  # an RC ladder's tridiagonal shape
    assert hasattr(jacobian_for(A), "tocsc")
    assert isinstance(jacobian_for(A[:10, :10]), np.ndarray)
    seg = LinearSegment(A * 1e3, np.eye(n)[:, :1] * 1e3, Constant(1.0), 0.0, 1e-2, np.zeros(n))
    for name in ("radau", "bdf"):
        res = get_integrator(name, rtol=1e-8, atol=1e-12).solve(seg, [1e-2])
        ref = get_integrator("exact").solve(seg, [1e-2])
        assert np.max(np.abs(res.x_end - ref.x_end)) < 1e-5


def test_docstring_examples_run():
    import doctest

    import circuitode.solvers as package
    from circuitode.solvers import auto, rk4

    for module in (package, auto, rk4):
        result = doctest.testmod(module)
        assert result.failed == 0 and result.attempted > 0, module.__name__


# ---------------------------------------------------------------------------
# Brent's root finder (solvers/roots.py) against scipy.optimize.brentq
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("f, a, b, root", [
    (lambda x: x**3 - 2 * x - 5, 2.0, 3.0, 2.0945514815423265),  # Wallis' cubic (a classic test, from memory)
    (lambda x: np.cos(x) - x, 0.0, 1.0, 0.7390851332151607),  # the Dottie number (from memory)
    (lambda x: np.exp(x) - 2.0, 0.0, 1.0, np.log(2.0)),
    (lambda x: np.tanh(200 * (x - 0.3)), 0.0, 1.0, 0.3),  # steep, like a threshold crossing
    (lambda x: 1e-9 * (x - 0.123456789), 0.0, 1.0, 0.123456789),  # tiny values, as a current in µA
])
def test_brent_root_agrees_with_scipy_brentq(f, a, b, root):
    from scipy.optimize import brentq

    from circuitode.solvers.roots import brent_root

    xtol, rtol = 1e-13, 4 * np.finfo(float).eps
    ours = brent_root(f, a, b, xtol=xtol, rtol=rtol)
    theirs = brentq(f, a, b, xtol=xtol, rtol=rtol)
    assert abs(ours - root) <= 4 * (xtol + rtol * abs(root))
    assert abs(ours - theirs) <= 4 * (xtol + rtol * abs(root))


def test_brent_root_needs_a_sign_change_and_accepts_an_end_root():
    from circuitode.errors import IntegrationError
    from circuitode.solvers.roots import brent_root

    with pytest.raises(IntegrationError):
        brent_root(lambda x: x * x + 1.0, -1.0, 1.0)
    assert brent_root(lambda x: x - 1.0, 0.0, 1.0) == 1.0
