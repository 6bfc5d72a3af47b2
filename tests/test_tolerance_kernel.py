"""The block kernel of the tolerance batch (circuitode/tolerance/kernel.py).

Reference: the states of w' = M w at t = k h are e^{M k h} w0 (the solution of a linear
time-invariant system, Ogata, Modern Control Engineering, ch. 9, state transition
matrix), computed here per sample by scipy.linalg.expm, an independent library.
"""
import numpy as np
import pytest
from scipy.linalg import expm

from circuitode.tolerance import kernel


def _systems(N=300, s=5, p=3, seed=1):
    """Damped random systems (eigenvalues shifted left) with their outputs and states."""
    rng = np.random.default_rng(seed)
    M = rng.normal(size=(N, s, s)) - 3.0 * np.eye(s)
    G = rng.normal(size=(N, p, s))
    w = rng.normal(size=(N, s))
    return M, G, w


@pytest.mark.parametrize("numba_off", ["0", "1"])
def test_block_states_are_the_exponential_solution(monkeypatch, numba_off):
    monkeypatch.setenv("CIRCUITODE_NO_NUMBA", numba_off)
    M, G, w = _systems()
    h, K = 0.01, 40
    phi = np.stack([expm(m * h) for m in M])
    W, Y, S1, S2 = kernel.block_steps(phi, G, w, K)
    assert W.shape == (300, K, 5) and Y.shape == (300, 3, K)
    for n in (0, 127, 128, 255, 256, 299):  # first, both sides of tile edges, last
        exact = np.stack([expm(M[n] * h * (k + 1)) @ w[n] for k in range(K)])
        assert np.allclose(W[n], exact, rtol=1e-12, atol=1e-12 * np.abs(exact).max())
        assert np.allclose(Y[n], G[n] @ exact.T, rtol=1e-11, atol=1e-12 * np.abs(G[n] @ exact.T).max())
        starts = np.vstack([w[n], exact[:-1]])
        assert np.allclose(S1[n], starts.sum(axis=0), rtol=1e-11, atol=1e-13)
        assert np.allclose(S2[n], starts.T @ starts, rtol=1e-11, atol=1e-13)


def test_compiled_and_numpy_paths_agree(monkeypatch):
    """Both compute w ← Φ w step by step; only rounding (fused multiply-add) may differ."""
    pytest.importorskip("numba")
    M, G, w = _systems(N=300, s=7, p=6, seed=4)
    phi = np.stack([expm(m * 0.02) for m in M])
    monkeypatch.setenv("CIRCUITODE_NO_NUMBA", "0")
    assert kernel.kernel_name() == "numba"
    fast = kernel.block_steps(phi, G, w, 64)
    monkeypatch.setenv("CIRCUITODE_NO_NUMBA", "1")
    assert kernel.kernel_name() == "numpy"
    slow = kernel.block_steps(phi, G, w, 64)
    for a, b in zip(fast, slow):
        assert np.allclose(a, b, rtol=1e-12, atol=1e-13 * np.abs(b).max())


def test_small_chunks_take_the_numpy_recurrence(monkeypatch):
    """Below MIN_SAMPLES the compiled loop is not started (its start costs more than the work)."""
    monkeypatch.setattr(kernel, "_compiled", lambda: (_ for _ in ()).throw(AssertionError("started")))
    M, G, w = _systems(N=kernel.MIN_SAMPLES - 1, s=3, p=2)
    phi = np.stack([expm(m * 0.1) for m in M])
    W = kernel.block_steps(phi, G, w, 3)[0]
    assert np.allclose(W[:, 2], (phi @ phi @ phi @ w[:, :, None])[:, :, 0], rtol=1e-13, atol=1e-14)


def test_without_sums_and_flop_count():
    M, G, w = _systems(N=10, s=3, p=2)
    phi = np.stack([expm(m * 0.1) for m in M])
    W, Y, S1, S2 = kernel.block_steps(phi, G, w, 1, sums=False)
    assert S1 is None and S2 is None
    assert np.allclose(W[:, 0], (phi @ w[:, :, None])[:, :, 0], rtol=1e-14, atol=1e-14)
    # per sample and step: 2s² (state) + 2ps (outputs) + s + 2s² (sums), multiply and add each count
    assert kernel.flops(10, 4, 3, 2) == 10 * 4 * (18 + 12 + 3 + 18)


def test_batch_figures_equal_with_and_without_the_compiled_loop(monkeypatch, tmp_path):
    """A 300-sample chunk of the pre-charge example (each sample closing its contactor at its
    own threshold crossing, so blocks are split and recomputed) gives the same figures with the
    compiled loop and with the numpy recurrence, within 1e-9 of each figure's scale — the
    bound the batch keeps against single runs (tests/test_tolerance_engine.py).  Left out: the
    instant of the link voltage's maximum and its overshoot, which are rounding noise in
    themselves (the link settles flat at the pack voltage; overshoot about 5e-11 %)."""
    pytest.importorskip("numba")
    from pathlib import Path

    from circuitode.tolerance import run_batch

    netlist = Path(__file__).resolve().parents[1] / "netlists" / "precharge.cnet"
    results = {}
    for off in ("0", "1"):
        monkeypatch.setenv("CIRCUITODE_NO_NUMBA", off)
        results[off] = run_batch(netlist, samples=300, seed=2, out_dir=tmp_path / off, chunk_size=300,
                                 progress=False, plots=False)
    fast, slow = results["0"], results["1"]
    assert fast.ok.all() and slow.ok.all()
    noise = {("time_of_peak", "voltage at link"), ("overshoot", "voltage at link")}
    compared = 0
    for j, key in enumerate(fast.figure_keys):
        if key in noise:
            continue
        a, b = fast.figures[:, j], slow.figures[:, j]
        scale = max(np.nanmax(np.abs(b)), 1e-300)
        assert np.nanmax(np.abs(a - b)) <= 1e-9 * scale, key
        compared += 1
    assert compared >= 10


def test_a_large_batch_of_small_chunks_takes_the_compiled_loop(monkeypatch):
    """A chunk below MIN_SAMPLES of a batch above it (a long run's chunks are small) runs the
    compiled loop: numba's start is paid once per process, not per chunk.  Same states as
    the exponential solution (Ogata ch. 9, as above)."""
    pytest.importorskip("numba")
    monkeypatch.setenv("CIRCUITODE_NO_NUMBA", "0")
    calls = []
    real = kernel._compiled()
    monkeypatch.setattr(kernel, "_compiled", lambda: calls.append(1) or real)
    M, G, w = _systems(N=20, s=3, p=2)
    h = 0.1
    phi = np.stack([expm(m * h) for m in M])
    W = kernel.block_steps(phi, G, w, 3, batch=kernel.MIN_SAMPLES)[0]
    assert calls, "the compiled loop was not used"
    exact = np.stack([expm(m * 3 * h) @ v for m, v in zip(M, w)])
    assert np.allclose(W[:, 2], exact, rtol=1e-12, atol=1e-13)
    assert not kernel.compiled_for(20, 0) and kernel.compiled_for(20, kernel.MIN_SAMPLES)


@pytest.mark.parametrize("moving", [False, True])
def test_compiled_record_copy_equals_the_numpy_copy(monkeypatch, moving):
    """Record.columns by the compiled loop (kernel.write_columns) puts every value where the
    numpy code puts it, bit for bit: samples with 0–5 extra rows before the block, and (moving)
    extra rows placed among the block's columns.  A structural check: the same copy two ways."""
    pytest.importorskip("numba")
    from circuitode.tolerance.stepping import Record

    monkeypatch.setenv("CIRCUITODE_NO_NUMBA", "0")
    rng = np.random.default_rng(3)
    N, p, K, c0 = 40, 3, 16, 20
    Y = rng.normal(size=(N, p, K))
    ts = 1e-3 + 1e-5 * np.arange(K)
    out = []
    for batch in (0, kernel.MIN_SAMPLES):
        r = Record(N, 64, 12, p, batch=batch)
        assert r.compiled == (batch > 0)
        r.y[:] = np.nan
        r.t[:] = np.nan
        r.common = c0
        rng2 = np.random.default_rng(5)
        for n in range(N):
            count = int(rng2.integers(0, 6))
            top = c0 + (K if moving and n % 2 else 0)
            r.ext_pos[n, :count] = np.sort(rng2.integers(0, top, count))
            r.ext_count[n] = count
        r.columns(ts, Y)
        out.append((r.y.copy(), r.t.copy()))
        t_end, y_end = r.finish()  # compiled: the rows moved to the front of the buffer
        assert y_end.shape == (N, p, c0 + K + int(r.ext_count.max()))
        assert y_end[:, 0].flags.c_contiguous == (batch > 0)
        out[-1] += (t_end.copy(), y_end.copy())
    (y_np, t_np, te_np, ye_np), (y_nb, t_nb, te_nb, ye_nb) = out
    assert np.array_equal(y_np, y_nb, equal_nan=True) and np.array_equal(t_np, t_nb, equal_nan=True)
    assert np.isfinite(y_nb).sum() == N * p * K  # every value written once, nothing else
    assert np.array_equal(ye_np, ye_nb, equal_nan=True) and np.array_equal(te_np, te_nb, equal_nan=True)
