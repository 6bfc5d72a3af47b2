"""The explicit adaptive methods refuse a hopeless stiff run (circuitode.solvers.explicit_guard)."""
from __future__ import annotations

import pytest

import circuitode.solvers.explicit_guard as guard
from circuitode.errors import UnstableStepError
from circuitode.model import Capacitor, Circuit, NodeVoltage, Resistor, VoltageSource
from circuitode.model import Dc
from circuitode.transient import simulate


def _stiff():
    # Two RC sections: 1 Ω · 1 nF (τ ≈ 1 ns) feeding 10 kΩ · 1 µF (τ ≈ 10 ms).  The eigenvalues
    # of the ladder are ≈ −1/(R1 C1) and ≈ −1/(R2 C2) when the sections barely load each other
    # (common practice for widely separated time constants).
    return Circuit("stiff", "gnd", (VoltageSource("V1", "in", "gnd", Dc(10.0)),
                                    Resistor("R1", "in", "a", 1.0),
                                    Capacitor("C1", "a", "gnd", 1e-9, initial_voltage=0.0),
                                    Resistor("R2", "a", "b", 1e4),
                                    Capacitor("C2", "b", "gnd", 1e-6, initial_voltage=0.0)),
                   records=(NodeVoltage("b"),))


@pytest.mark.parametrize("method", ["rk45", "dop853"])
def test_stiff_network_is_refused_with_the_methods_that_work(method):
    with pytest.raises(UnstableStepError) as refused:
        simulate(_stiff(), method=method, until=50e-3, step=10e-6)
    text = str(refused.value)
    assert f"method {method} would need at least" in text
    assert "radau" in text and "bdf" in text and "exact" in text and "insist" in text
    # the fastest mode is the 1 ns one: its time constant is named
    assert "999.9 ps" in text or "1 ns" in text


def test_the_same_network_runs_with_the_suggested_methods():
    # v_b(50 ms) = 10 V (1 − e^(−5)) to the accuracy of the slow section alone, since the fast
    # section settles in nanoseconds (RC step response, Nilsson & Riedel ch. 7); the loading of
    # C1 by R2 shifts the slow pole by ~R1/R2 = 1e-4 relative.
    import math

    for method in ("exact", "radau", "bdf"):
        w = simulate(_stiff(), method=method, until=50e-3, step=1e-3)
        assert w["voltage at b"][-1] == pytest.approx(10 * (1 - math.exp(-5)), rel=2e-4)


def test_insist_runs_anyway(monkeypatch):
    # With the cap lowered to 100 steps, a 10 µs RC over 20 ms (at least 1e5 · 0.02 / 3.3 ≈ 606
    # steps) is refused, and runs when insisted upon; it charges to 1 V (RC step, ch. 7).
    monkeypatch.setattr(guard, "MAX_EXPLICIT_STEPS", 100)
    rc = Circuit("rc", "gnd", (VoltageSource("V1", "in", "gnd", Dc(1.0)), Resistor("R1", "in", "out", 10.0),
                               Capacitor("C1", "out", "gnd", 1e-6, initial_voltage=0.0)),
                 records=(NodeVoltage("out"),))
    with pytest.raises(UnstableStepError):
        simulate(rc, method="rk45", until=20e-3, step=1e-3)
    w = simulate(rc, method="rk45", until=20e-3, step=1e-3, insist=True)
    assert w["voltage at out"][-1] == pytest.approx(1.0, abs=1e-6)


def test_guard_estimate_is_window_times_rate_over_reach():
    # 1e9 1/s over 50 ms with reach 3.3: 1.5e7 steps > cap; over 5 µs: 1.5e3 steps, allowed.
    guard.check_explicit_work("rk45", [-1e9], 5e-6)
    with pytest.raises(UnstableStepError):
        guard.check_explicit_work("rk45", [-1e9], 50e-3)
    guard.check_explicit_work("radau", [-1e9], 50e-3)  # not an explicit method: no limit
