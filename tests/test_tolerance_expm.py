"""Stacked matrix exponential and RK4 step matrices against outside references."""
import numpy as np
import pytest
from scipy.linalg import expm

from circuitode.tolerance.batchexpm import expm_stack, rk4_stack


def test_stacked_exponential_equals_scipy_across_scales():
    rng = np.random.default_rng(3)
    scale = np.exp(rng.uniform(-10, 4, size=(200, 1, 1)))  # from far below to far above θ13
    M = (rng.normal(size=(200, 7, 7)) - 3 * np.eye(7)) * scale
    ours = expm_stack(M)
    ref = np.array([expm(m) for m in M])  # scipy.linalg.expm, one at a time
    err = np.abs(ours - ref).max(axis=(1, 2)) / np.abs(ref).max(axis=(1, 2))
    assert err.max() < 1e-11


def test_exponential_of_a_rotation_generator_is_a_rotation():
    # exp([[0, -θ], [θ, 0]]) = [[cos θ, −sin θ], [sin θ, cos θ]] (closed form)
    theta = np.array([0.0, 0.3, 2.0, 40.0])
    M = np.zeros((4, 2, 2))
    M[:, 0, 1], M[:, 1, 0] = -theta, theta
    R = expm_stack(M)
    assert np.allclose(R[:, 0, 0], np.cos(theta), atol=1e-12)
    assert np.allclose(R[:, 1, 0], np.sin(theta), atol=1e-12)


def test_a_non_finite_matrix_gives_nan_and_spares_the_others():
    M = np.zeros((3, 2, 2))
    M[1, 0, 0] = np.nan
    R = expm_stack(M)
    assert np.isnan(R[1]).all()
    assert np.allclose(R[[0, 2]], np.eye(2), rtol=0, atol=1e-15)


def test_rk4_matrix_equals_the_four_stages_on_a_linear_system():
    # classic RK4 (Butcher, "Numerical Methods for ODEs", ch. 3) on x' = A x, one step h
    rng = np.random.default_rng(4)
    A = rng.normal(size=(5, 5))
    x = rng.normal(size=5)
    h = 0.1
    k1 = A @ x
    k2 = A @ (x + h / 2 * k1)
    k3 = A @ (x + h / 2 * k2)
    k4 = A @ (x + h * k3)
    stages = x + h / 6 * (k1 + 2 * k2 + 2 * k3 + k4)
    assert np.allclose(rk4_stack((A * h)[None])[0] @ x, stages, rtol=1e-13, atol=1e-13)
    # and it is fourth order: the error against the exponential shrinks as h^5 per step
    e1 = np.abs(rk4_stack(A[None] * h)[0] - expm(A * h)).max()
    e2 = np.abs(rk4_stack(A[None] * h / 2)[0] - expm(A * h / 2)).max()
    assert e1 / e2 == pytest.approx(32, rel=0.15)
