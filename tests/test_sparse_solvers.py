"""Fixed-step trapezoidal and TR-BDF2 on descriptor systems, against closed forms.

The RC and RLC step responses are the closed forms of Nilsson & Riedel, Electric
Circuits, ch. 7 (first order) and ch. 8 (series RLC), as in tests/test_solvers.py.
Both methods are of order 2 (Hairer & Wanner, Solving ODEs II, ch. IV.3 for the
trapezoidal rule; Hosea & Shampine, Appl. Numer. Math. 20 (1996) for TR-BDF2).
"""
from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

from circuitode.errors import CircuitodeError, IntegrationError
from circuitode.solvers.descriptor import DescriptorSegment
from circuitode.solvers.trapezoidal import Trapezoidal
from circuitode.solvers.trbdf2 import TRBDF2

METHODS = {"trapezoidal": Trapezoidal, "trbdf2": TRBDF2}


class Constant:
    def __init__(self, value):
        self.value = float(value)

    def values(self, t):
        return np.full((np.size(t), 1), self.value)


def series_rlc_step(R, L, C, V, t):
    """(v_C, i_L) of an underdamped series RLC from rest after a step of V (Nilsson & Riedel, ch. 8)."""
    alpha, w0 = R / (2 * L), 1 / np.sqrt(L * C)
    wd = np.sqrt(w0**2 - alpha**2)
    e = np.exp(-alpha * t)
    return V - V * e * (np.cos(wd * t) + alpha / wd * np.sin(wd * t)), V / (L * wd) * e * np.sin(wd * t)


def observed_orders(method, segment, t_end, want, steps):
    errors = []
    for h in steps:
        res = METHODS[method](step=h).solve(segment, [t_end])
        errors.append(np.max(np.abs(res.x[0, :want.size] - want)))
    return np.log2(np.array(errors[:-1]) / np.array(errors[1:])), errors


@pytest.mark.parametrize("method", sorted(METHODS))
def test_rc_step_order_two(method):
    # RC charging, v = V (1 − e^{−t/τ}) (Nilsson & Riedel, ch. 7); halving h quarters the error.
    tau, V = 1e-3, 10.0
    seg = DescriptorSegment(None, [[-1 / tau]], [[1 / tau]], Constant(V), 0.0, 2e-3, [0.0])
    orders, errors = observed_orders(method, seg, 2e-3, np.array([V * (1 - np.exp(-2.0))]),
                                     (1e-4, 5e-5, 2.5e-5))
    assert np.all((orders > 1.9) & (orders < 2.1)), orders
    assert errors[-1] < 1e-3 * V


@pytest.mark.parametrize("method", sorted(METHODS))
def test_series_rlc_order_two_in_descriptor_form(method):
    # Series RLC (R 4 Ω, L 1 mH, C 10 µF, 24 V step; Nilsson & Riedel, ch. 8) written as a
    # descriptor system with an algebraic unknown, the node voltage between R and L:
    # C v' = i, L i' = v_m − v, 0 = V − R i − v_m.  Order 2 in the states.
    R, L, C, V = 4.0, 1e-3, 10e-6, 24.0
    E = sp.diags([C, L, 0.0])
    A = np.array([[0.0, 1.0, 0.0], [-1.0, 0.0, 1.0], [0.0, -R, -1.0]])
    B = np.array([[0.0], [0.0], [1.0]])
    seg = DescriptorSegment(E, A, B, Constant(V), 0.0, 1e-3, [0.0, 0.0, V])
    want = np.array(series_rlc_step(R, L, C, V, np.array(1e-3))).ravel()
    orders, errors = observed_orders(method, seg, 1e-3, want, (4e-6, 2e-6, 1e-6))
    assert np.all((orders > 1.9) & (orders < 2.1)), orders
    assert errors[-1] < 1e-3 * V


@pytest.mark.parametrize("method", sorted(METHODS))
def test_algebraic_rows_stay_consistent(method):
    # The algebraic row 0 = V − R i − v_m holds at every output (it is enforced at each step end).
    R, L, C, V = 4.0, 1e-3, 10e-6, 24.0
    E = sp.diags([C, L, 0.0])
    A = np.array([[0.0, 1.0, 0.0], [-1.0, 0.0, 1.0], [0.0, -R, -1.0]])
    seg = DescriptorSegment(E, A, [[0.0], [0.0], [1.0]], Constant(V), 0.0, 1e-3, [0.0, 0.0, V])
    res = METHODS[method](step=1e-5).solve(seg, np.linspace(0, 1e-3, 11))
    assert np.max(np.abs(V - R * res.x[:, 1] - res.x[:, 2])) < 1e-9 * V


def test_trbdf2_damps_a_stiff_mode_trapezoidal_does_not():
    # Stability functions (Hairer & Wanner, ch. IV.3, from memory): trapezoidal R(z) → −1 as
    # z → −∞ (alternating, undamped); TR-BDF2 is L-stable, R(−∞) = 0.
    seg = DescriptorSegment(None, [[-1e9]], None, None, 0.0, 1e-5, [1.0])
    t = np.linspace(0, 1e-5, 11)
    trap = Trapezoidal(step=1e-6).solve(seg, t).x[:, 0]
    tr = TRBDF2(step=1e-6).solve(seg, t).x[:, 0]
    z = -1e9 * 1e-6
    np.testing.assert_allclose(trap, ((1 + z / 2) / (1 - z / 2)) ** np.arange(11), rtol=1e-9)
    assert np.all(np.sign(trap[1:-1]) != np.sign(trap[2:]))  # alternating, barely damped
    # TR-BDF2's own R(z) = [(1 + d z)/(1 − d z) − (1 − γ)²] / (γ (2 − γ)(1 − d z)), d = γ/2,
    # written out from the two stages; |R(−1000)| ≈ 5e-3 and → 0 as z → −∞.
    g = 2 - np.sqrt(2)
    d = g / 2
    R = ((1 + d * z) / (1 - d * z) - (1 - g) ** 2) / (g * (2 - g) * (1 - d * z))
    np.testing.assert_allclose(tr, R ** np.arange(11), rtol=1e-9)
    assert abs(R) < 5e-3


def test_observe_keeps_only_the_requested_rows():
    seg = DescriptorSegment(None, [[-1.0, 0.0], [0.0, -2.0]], None, None, 0.0, 1.0, [1.0, 1.0])
    full = TRBDF2(step=0.01).solve(seg, [0.5, 1.0])
    one = TRBDF2(step=0.01).solve(seg, [0.5, 1.0], observe=sp.csr_matrix([[0.0, 1.0]]))
    assert one.x.shape == (2, 1)
    np.testing.assert_allclose(one.x[:, 0], full.x[:, 1])
    np.testing.assert_allclose(full.x[:, 1], np.exp(-2 * np.array([0.5, 1.0])), rtol=1e-4)


def test_sparse_rk45_on_the_descriptor_rlc():
    # The same descriptor RLC, adaptive Dormand–Prince on the eliminated system, against
    # the closed form of Nilsson & Riedel, ch. 8, within its tolerance.
    from circuitode.solvers.sparse_explicit import SparseRK45

    R, L, C, V = 4.0, 1e-3, 10e-6, 24.0
    E = sp.diags([C, L, 0.0])
    A = np.array([[0.0, 1.0, 0.0], [-1.0, 0.0, 1.0], [0.0, -R, -1.0]])
    seg = DescriptorSegment(E, A, [[0.0], [0.0], [1.0]], Constant(V), 0.0, 1e-3, [0.0, 0.0, V])
    t = np.linspace(0.0, 1e-3, 41)
    res = SparseRK45(rtol=1e-9, atol=1e-12).solve(seg, t)
    v, i = series_rlc_step(R, L, C, V, t)
    assert np.max(np.abs(res.x[:, 0] - v)) < 1e-6 * V
    assert np.max(np.abs(res.x[:, 1] - i)) < 1e-6 * V / R
    np.testing.assert_allclose(res.x[:, 2], V - R * res.x[:, 1], rtol=1e-12, atol=1e-12)  # algebraic row


def test_needs_a_step_and_refuses_events():
    with pytest.raises(CircuitodeError, match="needs a positive step"):
        Trapezoidal()
    seg = DescriptorSegment(None, [[-1.0]], None, None, 0.0, 1.0, [1.0])
    with pytest.raises(IntegrationError, match="threshold"):
        Trapezoidal(step=0.1).solve(seg, [1.0], events=[object()])
