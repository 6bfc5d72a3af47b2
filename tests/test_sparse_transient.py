"""The sparse path for large circuits, against the dense path and outside facts.

* The sparse descriptor equations, with the algebraic unknowns eliminated, are the
  dense state-space matrices (same circuit theory, two assemblies): to rounding.
* TR-BDF2 on the sparse path against the dense exact method at 1,000 states: the error
  falls as h² (order 2; Hosea & Shampine, Appl. Numer. Math. 20 (1996)) and stays
  below a bound stated for the step.
* Lossless LC ladder (lumped telegrapher's equations, from memory): the front of a
  step travels one section per √(LC); at the delay S·√(LC) the far end has reached
  1/3 of its final value (the front of a lumped line is an Airy-function integral
  centred on the low-frequency delay, whose value there is 1/3 — from memory); a line
  matched at both ends by Z₀ = √(L/C) sends nothing back: the source current stays
  at V / (2 Z₀) after the wave would have returned.
"""
from __future__ import annotations

import numpy as np
import pytest

import circuitode as co
from circuitode.equations.sparse_statespace import assemble_sparse
from circuitode.equations.statespace import assemble
from circuitode.errors import CircuitodeError
from circuitode.transient.sparse_driver import SPARSE_STATES, sparse_choice
from circuitode.transient.driver import _linear_probes, recorded_probes

L_SEC, C_SEC = 10e-6, 1e-6
Z0 = float(np.sqrt(L_SEC / C_SEC))


def ladder(sections, *, lossless=False, method="auto", step="1 us", until="2 ms", far_end="matched"):
    """1 V step through Z₀ into S sections (series 50 mΩ + 10 µH, shunt 1 µF), load Z₀ (or open)."""
    lines = ['circuit "ladder"', "ground gnd", "voltage_source V1 src -- gnd constant 1 V",
             f"resistor R_s src -- n0 {Z0!r} Ω"]
    for k in range(1, sections + 1):
        if lossless:
            lines.append(f"inductor L{k} n{k - 1} -- n{k} 10 uH")
        else:
            lines += [f"resistor R{k} n{k - 1} -- m{k} 50 mΩ", f"inductor L{k} m{k} -- n{k} 10 uH"]
        lines.append(f"capacitor C{k} n{k} -- gnd 1 uF")
    if far_end == "matched":
        lines.append(f"resistor R_t n{sections} -- gnd {Z0!r} Ω")
    lines += [f"transient until {until} step {step} method {method} initial rest",
              f"record voltage at n{sections}, voltage at n1, current through R_s"]
    return "\n".join(lines) + "\n"


def expm_reference(text, step=1e-6):
    """Dense exact reference without the driver: the assembled dense A, B, C, D stepped by
    Φ = scipy.linalg.expm([[A, B], [0, 0]] h) (exact for the constant sources of these
    ladders), outputs C x + D u on the output grid; {label: (rows,)} and the times.
    A recurrence over the 1 µs rows (each row needs the previous one)."""
    from scipy.linalg import expm

    from circuitode.model import SourceBank

    circuit = co.loads(text)
    probes = _linear_probes(recorded_probes(circuit))
    ss = assemble(circuit, (), probes)
    n, m = ss.B.shape
    M = np.zeros((n + m, n + m))
    M[:n, :n], M[:n, n:] = ss.A, ss.B
    phi = expm(M * step)
    u = SourceBank.of(circuit).values(np.array([step / 2]))[0]
    rows = int(round(circuit.analysis.until / step)) + 1
    X = np.zeros((rows, n))
    forced = phi[:n, n:] @ u
    for k in range(1, rows):
        X[k] = phi[:n, :n] @ X[k - 1] + forced
    Y = X @ ss.C.T + u @ ss.D.T
    return {p.label: Y[:, j] for j, p in enumerate(probes)}


def reduced(sparse):
    """Eliminate z from E w' = A w + B u, y = C w + D u (dense, small circuits only)."""
    n = sparse.n_states
    A, B, E, C = sparse.A.toarray(), sparse.B.toarray(), sparse.E.toarray(), sparse.C.toarray()
    G, P, Rx, Ru = -A[n:, n:], A[:n, n:], A[n:, :n], B[n:]
    Zx, Zu = np.linalg.solve(G, Rx), np.linalg.solve(G, Ru)
    Ex = E[:n, :n]
    return (np.linalg.solve(Ex, P @ Zx), np.linalg.solve(Ex, P @ Zu),
            C[:, :n] + C[:, n:] @ Zx, sparse.D + C[:, n:] @ Zu)


COUPLED = """
circuit "coupled"
ground g
voltage_source V1 a -- g constant 10 V
resistor R1 a -- b 2 Ω
inductor L1 b -- c 1 mH
inductor L2 d -- g 4 mH
coupling M1 L1 with L2 k 0.9
resistor R2 d -- g 50 Ω
capacitor C1 c -- g 10 uF
switch S1 c -- e closes at 1 ms on 10 mΩ
resistor R3 e -- g 5 Ω
capacitor C2 e -- g 1 uF
transient until 2 ms
"""


@pytest.mark.parametrize("source", ["netlists/cable_ladder.cnet", COUPLED])
def test_sparse_equations_reduce_to_the_dense_state_space(source):
    circuit = co.load(source) if source.endswith(".cnet") else co.loads(source)
    probes = _linear_probes(recorded_probes(circuit))
    for closed in [(False,) * len(circuit.switches), (True,) * len(circuit.switches)]:
        dense = assemble(circuit, closed, probes)
        for got, want in zip(reduced(assemble_sparse(circuit, closed, probes)),
                             (dense.A, dense.B, dense.C, dense.D)):
            np.testing.assert_allclose(got, want, rtol=1e-10, atol=1e-10 * np.abs(want).max())


def test_trbdf2_against_dense_exact_at_1000_states():
    # 500 sections; 0.4 ms (the front reaches section ~126).  Error at the near end and in
    # the source current against the dense exact method, at h = 1 µs and 0.5 µs.
    text = ladder(500, until="0.4 ms")
    exact = expm_reference(text)
    exact_t = np.linspace(0.0, 0.4e-3, 401)
    errors = []
    for step in (1e-6, 0.5e-6):
        w = co.simulate(text, method="trbdf2", step=step)
        assert w.method == "trbdf2" and w.states.shape[1] == 1000
        pick = np.searchsorted(w.t, exact_t)
        errors.append(max(np.max(np.abs(w[label][pick] - exact[label]))
                          for label in ("voltage at n1", "current through R_s")))
    order = np.log2(errors[0] / errors[1])
    assert 1.7 < order < 2.3, errors
    assert errors[0] < 0.03  # V (and A): stated bound for the 1 µs step on this ladder


def test_auto_takes_the_sparse_path_above_the_size_and_says_why():
    small = co.loads(ladder(SPARSE_STATES // 2))
    assert sparse_choice(small, "auto") is None
    w = co.simulate(ladder(SPARSE_STATES // 2 + 1, until="0.1 ms"))
    assert w.method == "rk45" and w.method_reason.startswith("rk45: not stiff")
    assert f"{SPARSE_STATES + 2} states is above {SPARSE_STATES}" in w.method_reason
    assert "no dense eigenvalues" in w.method_reason
    # a 1 nF capacitor behind the 3.16 Ω source resistor: a 3 ns time constant makes the
    # explicit method's stability cost exceed TR-BDF2's, so auto turns to TR-BDF2
    stiff = ladder(SPARSE_STATES // 2 + 1, until="0.1 ms").replace(
        "resistor R_t", "capacitor C_fast n0 -- gnd 1 nF\nresistor R_t")
    w = co.simulate(stiff)
    assert w.method == "bdf" and w.method_reason.startswith("bdf: stiff")
    assert w.counters["lu_decompositions"] > 0  # scipy's BDF factored the sparse Jacobian


def test_auto_takes_trbdf2_when_the_reduced_matrix_would_be_too_large(monkeypatch):
    import circuitode.solvers.schur as schur
    from circuitode.solvers.sparse_explicit import SparseIVP

    monkeypatch.setattr(schur, "SMALL", 0)  # every connected block counts as large …
    monkeypatch.setattr(SparseIVP, "budget", 10.0)  # … and their dense cost exceeds the budget
    w = co.simulate(ladder(SPARSE_STATES // 2 + 1, until="0.1 ms"))
    assert w.method == "trbdf2" and "too large to form" in w.method_reason
    with pytest.raises(CircuitodeError, match="use method trbdf2"):
        co.simulate(ladder(SPARSE_STATES // 2 + 1, until="0.1 ms"), method="bdf")


def test_reduced_matrix_by_blocks_equals_the_dense_elimination():
    # schur.reduced_matrix (connected blocks of the algebraic part, batched dense inverses)
    # against numpy's dense elimination E₁₁⁻¹(A₁₁ − A₁₂ A₂₂⁻¹ A₂₁), with small blocks and
    # with every block treated as large (sparse LU per block).
    import scipy.sparse as sp

    import circuitode.solvers.schur as schur

    for source in ("netlists/cable_ladder.cnet", ladder(40)):
        circuit = co.load(source) if source.endswith(".cnet") else co.loads(source)
        d = assemble_sparse(circuit, (False,) * len(circuit.switches))
        n, A = d.n_states, d.A.toarray()
        E11 = d.E.toarray()[:n, :n]
        want = np.linalg.solve(E11, A[:n, :n] - A[:n, n:] @ np.linalg.solve(A[n:, n:], A[n:, :n]))
        scale = sp.diags(1.0 / np.diag(E11))
        for small in (64, 0):
            schur.SMALL, keep = small, schur.SMALL
            try:
                got = schur.reduced_matrix(d.A[:n, :n], d.A[:n, n:], d.A[n:, :n], d.A[n:, n:], scale)
            finally:
                schur.SMALL = keep
            np.testing.assert_allclose(got.toarray(), want, rtol=1e-12, atol=1e-12 * np.abs(want).max())


def test_sparse_exact_against_dense_exact_at_1000_states():
    # The sparse exact method (expm_multiply on the reduced sparse matrix, Al-Mohy & Higham
    # 2011) against the dense exact method (dense matrix exponential) at 1,000 states:
    # both exact up to rounding, so they agree to 1e-9 (of a 0.5 V / 0.16 A scale).
    text = ladder(500, until="0.4 ms")
    exact = expm_reference(text)  # scipy.linalg.expm of the dense matrices, stepped per row
    w = co.simulate(text, method="exact")
    assert w.method == "exact" and "reduced sparse" in w.method_reason
    assert set(exact) == set(w.signals)
    for label in exact:
        assert np.max(np.abs(w[label] - exact[label])) < 1e-9, label


@pytest.mark.parametrize("method", ["bdf", "radau"])
def test_sparse_bdf_and_radau_against_dense_exact(method):
    # scipy's BDF and Radau on the reduced sparse equations with the sparse Jacobian, at
    # 602 states, against the dense exact method: within their global error at rtol 1e-6
    # (tighter rtol 1e-8 shrinks it, so the difference is the method's, not a wrong system).
    text = ladder(301, until="0.3 ms")
    exact = expm_reference(text)
    errors = []
    for rtol in (1e-6, 1e-8):
        w = co.simulate(text, method=method, rtol=rtol, atol=1e-12)
        assert w.method == method and w.counters["lu_decompositions"] > 0
        errors.append(max(np.max(np.abs(w[label] - exact[label])) for label in exact))
    assert errors[0] < 1e-3 and errors[1] < errors[0] / 5, errors


@pytest.mark.parametrize("reduced", [True, False])
def test_sparse_rk45_against_dense_exact(reduced, monkeypatch):
    # auto's rk45 on the sparse path (600 states, 2 ms: the front passes 200 sections)
    # against the dense exact method: within the global error of rtol 1e-6; both with
    # the reduced sparse matrix and with the operator that never forms it.
    import circuitode.solvers.sparse_explicit as explicit

    if not reduced:  # auto still picks rk45; the integrator is denied the reduced matrix
        monkeypatch.setattr(explicit, "_reduced_matrix", lambda *args, **kw: None)
    text = ladder(300)
    w = co.simulate(text)
    assert w.method == "rk45"
    exact = expm_reference(text)
    for label in exact:
        assert np.max(np.abs(w[label] - exact[label])) < 1e-4, label


def test_lossless_ladder_delay_and_matched_line():
    S = 300
    delay = S * np.sqrt(L_SEC * C_SEC)  # 948.7 µs
    w = co.simulate(ladder(S, lossless=True, until="3 ms"))
    assert w.method == "rk45"
    t, far = w.t, w[f"voltage at n{S}"]
    k = np.argmax(far > 0.5 / 3)  # first row above 1/3 of the final 0.5 V
    crossing = t[k - 1] + (0.5 / 3 - far[k - 1]) * (t[k] - t[k - 1]) / (far[k] - far[k - 1])
    assert abs(crossing - delay) < 1e-6  # within one output step
    assert np.max(np.abs(far[t < 0.9 * delay])) < 1e-3 * 0.5  # nothing arrives early
    settled = far[t > delay + 200e-6]
    assert abs(np.mean(settled) - 0.5) < 0.01 * 0.5  # half the step: matched divider, no doubling
    source = w["current through R_s"][t > 2 * delay + 100e-6]
    assert np.max(np.abs(source / (1 / (2 * Z0)) - 1)) < 0.03  # no reflection returns
    # the open-ended line does reflect: the far end goes to about twice 0.5 V
    w_open = co.simulate(ladder(S, lossless=True, until="1.5 ms", far_end="open"))
    assert np.max(w_open[f"voltage at n{S}"]) > 0.9


def test_threshold_switches_are_refused_with_words():
    circuit = co.load("netlists/precharge.cnet")
    with pytest.raises(CircuitodeError, match="threshold.*exact, radau or bdf"):
        sparse_choice(circuit, "trbdf2")
    assert sparse_choice(circuit, "auto") is None  # small, and dense handles thresholds


def test_run_prints_the_reduced_mode_table_above_the_size_and_says_so(tmp_path):
    from circuitode.jobs.run import run_job
    from circuitode.output.mode_table import modes_json

    result = run_job(ladder(SPARSE_STATES // 2 + 1, until="50 us"), out_dir=None)
    (cfg,) = result.modes
    assert 6 <= len(cfg.modes) <= 12 and cfg.states is None
    assert "not all 502" in cfg.note
    assert any("lists only the slowest and the least damped" in p for p in result.problems)
    assert "shift-invert" in modes_json(result.modes)[0]["note"]


def test_sparse_estimate_of_the_fastest_rate_matches_dense_eigenvalues():
    # scipy.linalg.eigvals of the dense A as the reference library; the estimate (ARPACK at
    # tol 1e-2) is within 1 % of the largest |λ|, never forming the n × n matrix.
    from circuitode.solvers.sparse_spectrum import largest_rate

    for source in ("netlists/cable_ladder.cnet", COUPLED):
        circuit = co.load(source) if source.endswith(".cnet") else co.loads(source)
        for closed in [(False,) * len(circuit.switches), (True,) * len(circuit.switches)]:
            sparse = assemble_sparse(circuit, closed)
            want = np.max(np.abs(np.linalg.eigvals(assemble(circuit, closed).A)))
            got = largest_rate(sparse.E, sparse.A, sparse.n_states, tol=1e-2, maxiter=50)
            assert got == pytest.approx(want, rel=1e-2)


def test_scheduled_switch_on_the_sparse_path_matches_dense_exact():
    # A contactor closes the ladder onto the source at 0.2 ms; the sparse path (trbdf2 named,
    # 40 states) against the dense exact method on the same netlist: the same event, the
    # two rows at the switching instant, and waveforms within the h² error of the step.
    text = ladder(20, until="0.6 ms").replace(
        f"resistor R_s src -- n0 {Z0!r} Ω",
        f"resistor R_s src -- a {Z0!r} Ω\nswitch Q1 a -- n0 closes at 0.2 ms off 10 MΩ")
    exact = co.simulate(text, method="exact")
    for step, bound in ((1e-6, 0.02), (0.25e-6, 0.02 / 16 * 1.3)):
        w = co.simulate(text, method="trbdf2", step=step)
        assert [(e.time, e.switch, e.closed) for e in w.events] == [(2e-4, "Q1", True)]
        assert np.count_nonzero(w.t == 2e-4) == 2
        pick = np.searchsorted(w.t, exact.t[exact.t != 2e-4])
        for label in ("voltage at n20", "current through R_s"):
            assert np.max(np.abs(w[label][pick] - exact[label][exact.t != 2e-4])) < bound, (label, step)
        before = w.t < 2e-4
        assert np.max(np.abs(w["current through R_s"][before])) < 1.001e-7  # 1 V across 10 MΩ (and the step error)


def test_dc_steady_start_on_the_sparse_path_stays_put():
    # Lossy matched ladder at DC (Ohm's law along the series chain, capacitors open):
    # I = 1 V / (2 Z₀ + S · 50 mΩ), far end at I · Z₀; a steady start stays there.
    S = 300
    for method in ("auto", "trbdf2"):
        w = co.simulate(ladder(S, until="0.1 ms").replace("initial rest", "initial steady"), method=method)
        assert w.method == ("rk45" if method == "auto" else method)
        current = 1.0 / (2 * Z0 + S * 0.05)
        rtol = 1e-9 if method == "trbdf2" else 2e-6  # rk45 drifts within its own rtol (1e-6)
        np.testing.assert_allclose(w[f"voltage at n{S}"], current * Z0, rtol=rtol)
        np.testing.assert_allclose(w["current through R_s"], current, rtol=rtol)


@pytest.mark.parametrize("method", ["rk45", "exact"])
def test_sine_driven_ladder_on_the_sparse_path_against_solve_ivp(method):
    # A 20 kHz sine (delay 0, so the input is continuous) drives 602 states; reference:
    # scipy.integrate.solve_ivp DOP853 at rtol 1e-10 on the dense A, B of the same circuit
    # (the reference library).  rk45 uses the reduced matrix with the input at each t;
    # exact propagates the sine's own linear generator with expm_multiply.
    from scipy.integrate import solve_ivp

    text = ladder(301, until="0.2 ms").replace("constant 1 V", "sine amplitude 1 V frequency 20 kHz")
    circuit = co.loads(text)
    probes = _linear_probes(recorded_probes(circuit))
    ss = assemble(circuit, (), probes)
    t = np.linspace(0.0, 2e-4, 201)
    omega = 2 * np.pi * 20e3
    b = ss.B[:, 0]
    ref = solve_ivp(lambda tt, x: ss.A @ x + b * np.sin(omega * tt), (0.0, 2e-4), np.zeros(ss.A.shape[0]),
                    method="DOP853", t_eval=t, rtol=1e-10, atol=1e-13)
    Y = ref.y.T @ ss.C.T + np.sin(omega * t)[:, None] @ ss.D.T
    w = co.simulate(text, method=method, step=1e-6)
    assert w.method == method and w.states.shape[1] == 602
    pick = np.searchsorted(w.t, t)
    bound = {"rk45": 1e-4, "exact": 1e-8}[method]  # rk45's rtol 1e-6 global error; exact: rounding
    for j, p in enumerate(probes):
        assert np.max(np.abs(w[p.label][pick] - Y[:, j])) < bound, p.label


def test_sparse_exact_refuses_a_stiff_circuit_with_words():
    # With the contactor open, the first inductor's current flows into 10 MΩ: a rate of
    # R/L = 1e12 1/s, for which expm_multiply's series would need ~1e8 products.
    text = ladder(260, until="0.6 ms").replace(
        f"resistor R_s src -- n0 {Z0!r} Ω",
        f"resistor R_s src -- a {Z0!r} Ω\nswitch Q1 a -- n0 closes at 0.2 ms off 10 MΩ")
    with pytest.raises(CircuitodeError, match="too stiff for it; use method bdf"):
        co.simulate(text, method="exact")
