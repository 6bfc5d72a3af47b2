"""How accurate the energy and I²t of the adaptive and implicit methods are, measured.

Two ways of integrating the outputs are measured against closed forms: quadrature
over the method's dense output (the default) and the integrals as extra states of
the ODE under the method's own error control (``integrals_as_states``,
circuitode/solvers/augmented.py).  The factor is the worst relative error over the
cases, in units of rtol (1e-6); the bounds below are the README's accuracy table.

Closed forms: a capacitor charged from rest through R to V loses ½CV² in R and
∫ i² dt = V²C/(2R), for an RC (Nilsson & Riedel ch. 7) and a series RLC
(ch. 8, energy balance once the transient has died out: e^(−αT) < 1e-13 here).
"""
import math

import numpy as np
import pytest

from circuitode.analysis.measure import summarise
from circuitode.model import Capacitor, Circuit, CurrentThrough, Dc, Inductor, PowerIn, Resistor, VoltageSource
from circuitode.solvers import scipy_ivp
from circuitode.solvers.augmented import AugmentedIntegrals
from circuitode.transient import simulate

RTOL = 1e-6

#: Worst measured error / rtol (README, "Accuracy"), rounded up: (dense output, extra states).
FACTORS = {"rk45": (10, 20), "dop853": (1, 1), "radau": (0.1, 0.1), "bdf": (100, 100)}


def _circuit(R, L, C, V):
    parts = [VoltageSource("V1", "in", "gnd", Dc(V)), Resistor("R1", "in", "a", R)]
    if L:
        parts.append(Inductor("L1", "a", "b", L, initial_current=0.0))
    else:
        parts.append(Resistor("Rw", "a", "b", 1e-3))  # an RC: a 1 mΩ wire where the inductor was
    parts.append(Capacitor("C1", "b", "gnd", C, initial_voltage=0.0))
    return Circuit("charge", "gnd", tuple(parts), records=(CurrentThrough("R1"), PowerIn("R1")))


CASES = [  # (R, L, C, V, until): RC τ = 1 ms; RLC ζ = 0.16; RLC ζ = 0.05 (≈ 100 periods of ringing)
    (1e3, 0.0, 1e-6, 10.0, 20e-3),
    (10.0, 1e-3, 1e-6, 12.0, 20e-3),
    (3.1622776601683795, 1e-3, 1e-6, 12.0, 20e-3),
]


def _worst(method: str) -> float:
    worst = 0.0
    for R, L, C, V, until in CASES:
        w = simulate(_circuit(R, L, C, V), until=until, step=1e-3, method=method, rtol=RTOL)
        f = summarise(w)
        r_total = R + (0.0 if L else 1e-3)  # the RC case has a 1 mΩ wire in series
        i2t = V**2 * C / (2 * r_total)
        worst = max(worst, abs(f["current through R1"]["i2t"][0] / i2t - 1),
                    abs(f["power in R1"]["energy"][0] / (R * i2t) - 1))
    return worst / RTOL


@pytest.mark.parametrize("method", sorted(FACTORS))
@pytest.mark.parametrize("as_states", [False, True], ids=["dense_output", "extra_states"])
def test_integral_error_factor(method, as_states, monkeypatch):
    monkeypatch.setattr(scipy_ivp.ScipyIntegrator, "integrals_as_states", as_states)
    factor = _worst(method)
    print(f"{method} {'extra states' if as_states else 'dense output'}: {factor:.3g} × rtol")
    assert factor <= FACTORS[method][int(as_states)]


def test_augmented_jacobian_is_the_derivative_of_its_right_hand_side():
    # Structural check: the Jacobian handed to radau and bdf equals central differences
    # of the augmented right-hand side (exact for its quadratic terms).
    rng = np.random.default_rng(4)
    n, m = 3, 2
    A, B = rng.normal(size=(n, n)), rng.normal(size=(n, m))
    C, D = rng.normal(size=(4, n)), rng.normal(size=(4, m))
    aug = AugmentedIntegrals(A, B, C, D, [(0, 0), (1, 2), (3, 3)], None, rng.normal(size=m), 1e-9, 1e-3)
    z = rng.normal(size=aug.size)
    h = 1e-6
    numeric = np.stack([(aug.rhs(0.0, z + h * e) - aug.rhs(0.0, z - h * e)) / (2 * h) for e in np.eye(aug.size)], axis=1)
    assert np.allclose(aug.jacobian(0.0, z), numeric, rtol=1e-7, atol=1e-7)
    # vectorised right-hand side: columns are independent states
    Z = rng.normal(size=(aug.size, 5))
    assert np.allclose(aug.rhs(0.0, Z), np.stack([aug.rhs(0.0, Z[:, j]) for j in range(5)], axis=1))
