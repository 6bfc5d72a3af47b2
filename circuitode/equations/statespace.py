"""Modified nodal analysis → state-space matrices, one switch configuration at a time.

For a fixed set of switch states the circuit becomes a *companion* resistive
network: every capacitor is a voltage source of its state value, every
inductor a current source of its state value, every independent source an
input, every closed ideal switch a 0 V source, every open ideal switch is
absent, and a switch with a resistance in its present state is a resistor.
One modified-nodal-analysis solve, with one right-hand side per state and per
input, gives every node voltage and branch current as a linear function of
``(x, u)``; from it

* ``dv_C/dt = i_C / C`` and ``L di/dt = v_L`` (``L`` the inductance matrix,
  ``M_ij = k √(L_i L_j)``), hence ``dx/dt = A x + B u``;
* every probe as ``y = C x + D u``.

Batches: ``values`` overrides element values per sample (arrays of shape
(N,)); then every matrix carries a leading batch axis and the N systems are
stamped with index arithmetic and solved with one stacked ``np.linalg.solve``
— no Python loop over samples.  The single-circuit path is the same code with
N = 1, squeezed.  Above :data:`SPARSE_THRESHOLD` unknowns a single circuit is
solved with a sparse LU factorisation instead.

A sample whose values are unusable (a resistance that is not positive, an
inductance matrix that is not positive definite …) does not stop a batch: its
matrices are NaN and ``StateSpace.sample_ok`` is False for it.  A single
circuit raises instead.

The work is split in three modules: :mod:`circuitode.equations.companion` lays out the
companion network and proves from the graph alone that it has a unique
solution (or says why not); :mod:`circuitode.equations.mna` stamps and solves it for
every sample; this module turns the solution into ``A, B, C, D`` and the
initial state.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from ..model import Circuit, CurrentSource
from .companion import (
    StateSpaceRequestError,
    build_layout,
    check_closed,
    check_structure,
    describe_configuration,
)
from ..errors import NoSteadyStateError
from .constraints import solve_constrained
from .mna import (SPARSE_THRESHOLD, VARIABLE_FIELDS, Samples, dense_system, inductance_matrix, probe_rows,
                  solve_companion)

__all__ = [
    "SPARSE_THRESHOLD",
    "VARIABLE_FIELDS",
    "StateSpace",
    "StateSpaceCache",
    "StateSpaceRequestError",
    "assemble",
    "initial_state",
    "describe_configuration",
]


# --------------------------------------------------------------------------
# Result
# --------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class StateSpace:
    """``dx/dt = A x + B u``, ``y = C x + D u`` for one switch configuration.

    A : (n, n) 1/s.  B : (n, m).  C : (p, n).  D : (p, m); with a batch of N
    samples each has a leading axis: (N, n, n) …
    state_names, state_units : n names ("voltage across C1") and units ("V"/"A").
    input_names, input_units : m source names and units ("V" for a voltage
    source, "A" for a current source), in ``circuit.sources`` order.
    output_labels, output_units : p probe labels and units.
    closed : the switch states, in ``circuit.switches`` order.
    sample_ok : (N,) bool for a batch (False where the sample's values were
    unusable; its matrices are NaN), None for a single circuit.
    sample_problems : for a batch, one message per failed sample index.
    """

    A: np.ndarray
    B: np.ndarray
    C: np.ndarray
    D: np.ndarray
    state_names: tuple[str, ...]
    state_units: tuple[str, ...]
    input_names: tuple[str, ...]
    output_labels: tuple[str, ...]
    output_units: tuple[str, ...]
    closed: tuple[bool, ...]
    input_units: tuple[str, ...] = ()
    sample_ok: np.ndarray | None = None
    sample_problems: Mapping[int, str] | None = None
    basis: np.ndarray | None = None
    free: tuple[int, ...] | None = None
    tied_loops: tuple[tuple[str, ...], ...] = ()
    held_groups: tuple[tuple[tuple[str, ...], tuple[str, ...], tuple[str, ...]], ...] = ()

    @property
    def n_free(self) -> int:
        """States free in this configuration: n less one per constraint."""
        return self.n_states if self.basis is None else int(self.basis.shape[1])

    @property
    def free_names(self) -> tuple[str, ...]:
        """Names of the free states (all states when nothing is tied or held)."""
        return self.state_names if self.free is None else tuple(self.state_names[i] for i in self.free)

    @property
    def free_units(self) -> tuple[str, ...]:
        return self.state_units if self.free is None else tuple(self.state_units[i] for i in self.free)

    @property
    def A_free(self) -> np.ndarray:
        """``S A T``: the configuration's own (n_free, n_free) state matrix (or (N, …)) over
        its free states (see :mod:`circuitode.equations.constraints`); its eigenvalues are
        the configuration's modes, without the held directions."""
        if self.basis is None:
            return self.A
        return self.A[..., list(self.free), :] @ self.basis

    def project(self, x: np.ndarray) -> np.ndarray:
        """Full states (…, n) put exactly on the constraint: ``T S x``."""
        if self.basis is None:
            return x
        return x[..., list(self.free)] @ self.basis.T

    @property
    def batch_size(self) -> int | None:
        """N for a batch, None for a single circuit."""
        return None if self.sample_ok is None else int(self.A.shape[0])

    @property
    def n_states(self) -> int:
        return len(self.state_names)

    @property
    def n_inputs(self) -> int:
        return len(self.input_names)

    @property
    def n_outputs(self) -> int:
        return len(self.output_labels)

    def sample(self, index: int) -> "StateSpace":
        """The single-circuit StateSpace of one sample of a batch."""
        if self.sample_ok is None:
            raise StateSpaceRequestError("this StateSpace is not a batch; it has no samples to pick")
        return StateSpace(
            self.A[index], self.B[index], self.C[index], self.D[index],
            self.state_names, self.state_units, self.input_names,
            self.output_labels, self.output_units, self.closed, self.input_units,
            basis=self.basis, free=self.free, tied_loops=self.tied_loops, held_groups=self.held_groups,
        )


def assemble(
    circuit: Circuit,
    closed: Sequence[bool],
    probes: Sequence = (),
    values: Mapping[tuple[str, str], np.ndarray] | None = None,
    *,
    solver: str = "auto",
) -> StateSpace:
    """State-space matrices of ``circuit`` with the switches in states ``closed``.

    Parameters
    ----------
    circuit : the built circuit.
    closed : one bool per switch, in ``circuit.switches`` order.
    probes : linear probes (NodeVoltage, VoltageBetween, VoltageAcross,
        CurrentThrough), one output row each.
    values : optional {(element name, field): (N,) array} overriding element
        values per sample (fields in :data:`VARIABLE_FIELDS`, and "k" for a
        coupling); the result then carries a leading batch axis N.
    solver : "auto" (sparse LU for a single circuit above
        :data:`SPARSE_THRESHOLD` unknowns, dense otherwise), "dense" or "sparse".

    Returns
    -------
    StateSpace with A (n, n), B (n, m), C (p, n), D (p, m), or (N, …) for a batch.

    Raises
    ------
    SingularSystemError : the configuration has no unique solution (a loop of
        capacitors/voltage sources/closed switches, a floating part or an
        inductor/current-source cut set, a non-positive-definite inductance matrix).
    BadValueError : a single circuit with an unusable element value.
    StateSpaceRequestError : a probe, switch-state tuple or batch that makes no sense.

    Notes
    -----
    A batch holds N dense MNA matrices at once: about 8·N·K² bytes for K unknowns
    (nodes + capacitors + voltage sources + closed ideal switches); split very
    large batches into chunks.

    A loop made only of closed ideal switches leaves the split of current among
    them undetermined (the voltages are fine); the switch that closes the loop,
    in file order, is given 0 A and the others carry the current.

    Examples
    --------
    An RC low-pass, 1 kΩ and 1 µF: A = −1/RC = −1000 1/s.

    >>> from circuitode.model import Capacitor, Circuit, Resistor, VoltageSource, NodeVoltage
    >>> from circuitode.model import Dc
    >>> rc = Circuit("rc", "gnd", (VoltageSource("V", "in", "gnd", Dc(1.0)),
    ...                            Resistor("R", "in", "out", 1e3), Capacitor("C", "out", "gnd", 1e-6)))
    >>> ss = assemble(rc, (), [NodeVoltage("out")])
    >>> ss.A, ss.B, ss.C, ss.D
    (array([[-1000.]]), array([[1000.]]), array([[1.]]), array([[0.]]))
    >>> batch = assemble(rc, (), values={("R", "resistance"): np.array([1e3, 2e3])})
    >>> batch.A[:, 0, 0]
    array([-1000.,  -500.])
    """
    closed = check_closed(circuit, closed)
    layout = build_layout(circuit, closed)
    samples = Samples(circuit, values)
    conductance = np.stack(
        [1.0 / samples.positive(name, f, "ohms") for name, f, _, _ in layout.conductors], axis=1
    ) if layout.conductors else np.zeros((samples.size, 0))
    capacitance = np.stack(
        [samples.positive(c.name, "capacitance", "farads") for c in circuit.capacitors], axis=1
    ) if circuit.capacitors else np.zeros((samples.size, 0))
    inductance = inductance_matrix(circuit, samples)
    W, direct = probe_rows(circuit, layout, tuple(probes), conductance, len(circuit.state_names))
    caps, inds = circuit.capacitors, circuit.inductors
    n = len(caps) + len(inds)
    index = dict(layout.node, **{circuit.ground: layout.size})
    a = [index[l.first] for l in inds]
    b = [index[l.second] for l in inds]

    def rates_of(Z: np.ndarray) -> np.ndarray:
        """dx/dt (N, n, c) from solutions Z (N, size + 1, c): i_C / C and L⁻¹ v_L."""
        cap_rows = Z[:, [layout.branch_of[c.name] for c in caps], :] / capacitance[:, :, None]
        ind_rows = np.linalg.solve(inductance, Z[:, a, :] - Z[:, b, :]) if inds else Z[:, :0, :]
        return np.concatenate([cap_rows, ind_rows], axis=1)

    basis = None
    if layout.n_null:  # a configuration that ties states: see equations.constraints
        M, rhs = dense_system(circuit, layout, conductance)
        Z, basis, free = solve_constrained(M, rhs, layout.n_null, layout.n_constraints, n, rates_of,
                                           describe_configuration(circuit, closed))
        if not layout.n_constraints:  # only parts cut off by blocking diodes: all states free
            basis = None
    else:
        Z = solve_companion(circuit, layout, conductance, solver)
    rates = rates_of(Z)
    outputs = np.einsum("npk,nkc->npc", W, Z) + direct
    A, B = rates[..., :n], rates[..., n:]
    C, D = outputs[..., :n], outputs[..., n:]
    if basis is not None:  # on the constraint x = T Tᵀ x: held directions do not move
        projector = basis[:, :] @ np.eye(n)[free]  # Π = T S
        A, B, C = projector @ A @ projector, projector @ B, C @ projector
    sources = circuit.inputs  # the sources, then the diodes' drops
    extra = {}
    if samples.batched:
        bad = ~samples.ok
        for M in (A, B, C, D):
            M[bad] = np.nan
        extra = dict(sample_ok=samples.ok.copy(), sample_problems=dict(samples.problems))
    else:
        A, B, C, D = A[0], B[0], C[0], D[0]
    return StateSpace(
        A=A, B=B, C=C, D=D,
        state_names=tuple(circuit.state_names), state_units=tuple(circuit.state_units),
        input_names=tuple(s.name for s in sources),
        output_labels=tuple(p.label for p in probes), output_units=tuple(p.unit for p in probes),
        closed=closed,
        input_units=tuple("A" if isinstance(s, CurrentSource) else "V" for s in sources),
        basis=basis,
        free=None if basis is None else tuple(int(i) for i in free),
        tied_loops=tuple(tuple(loop) for loop in layout.tied_loops),
        held_groups=tuple((tuple(g), tuple(l), tuple(k)) for g, l, k in layout.held_groups),
        **extra,
    )


class StateSpaceCache:
    """StateSpace per switch configuration, assembled once each.

    Parameters are those of :func:`assemble`; ``get(closed)`` returns the cached
    :class:`StateSpace` for that tuple of switch states.
    """

    def __init__(self, circuit: Circuit, probes: Sequence = (), values=None, *, solver: str = "auto"):
        self.circuit = circuit
        self.probes = tuple(probes)
        self.values = values
        self.solver = solver
        self._cache: dict[tuple[bool, ...], StateSpace] = {}

    @property
    def initially_closed(self) -> tuple[bool, ...]:
        """The switch states at t = 0."""
        return tuple(s.initially_closed for s in self.circuit.switches)

    def get(self, closed: Sequence[bool]) -> StateSpace:
        key = check_closed(self.circuit, closed)
        if key not in self._cache:
            self._cache[key] = assemble(self.circuit, key, self.probes, self.values, solver=self.solver)
        return self._cache[key]

    def __len__(self) -> int:
        return len(self._cache)


def initial_state(circuit: Circuit, mode: str, ss_at_start: StateSpace, u0=None) -> np.ndarray:
    """The state at the start of a run.

    Parameters
    ----------
    mode : "rest" (all zero), "given" (capacitor ``initial_voltage`` / inductor
        ``initial_current`` where stated, 0 elsewhere) or "steady" (the DC steady
        state of ``ss_at_start``: solve A x = −B u0).
    ss_at_start : the configuration at t = 0⁻ (single or batch).
    u0 : inputs at t = 0⁻, (m,) or (N, m); needed for "steady".

    Returns
    -------
    x0 : (n,) for a single circuit, (N, n) for a batch (V for capacitors, A for inductors).

    Raises
    ------
    NoSteadyStateError : "steady" where the DC network has no unique solution,
        worded with what this stage sees (nodes with no DC path, loops);
        :func:`circuitode.checks.dc.explain_singular_dc` words it by element.
    """
    n, N = ss_at_start.n_states, ss_at_start.batch_size
    shape = (n,) if N is None else (N, n)
    if mode == "rest":
        return np.zeros(shape)
    if mode == "given":
        given = [c.initial_voltage for c in circuit.capacitors] + [l.initial_current for l in circuit.inductors]
        return np.broadcast_to(np.array([0.0 if g is None else float(g) for g in given]), shape).copy()
    if mode != "steady":
        raise StateSpaceRequestError(f"unknown initial state {mode!r}; choose 'rest', 'given' or 'steady'")
    _, _, problems = check_structure(circuit, ss_at_start.closed, dc=True)
    if problems:  # our own words; a caller that ran the checks may word it better (checks.dc)
        raise NoSteadyStateError(describe_configuration(circuit, ss_at_start.closed), ss_at_start.closed, problems)
    m = ss_at_start.n_inputs
    u = np.zeros(m) if u0 is None else np.asarray(u0, dtype=float)
    if u.shape[-1:] != (m,) or (N is None and u.ndim > 1):
        raise StateSpaceRequestError(
            f"u0 must have {m} entries (one per source){'' if N is None else ', or shape (N, m)'}, "
            f"got shape {u.shape}")
    if n == 0:
        return np.zeros(shape)
    drive = -np.einsum("...ij,...j->...i", ss_at_start.B, u)
    drive = np.broadcast_to(drive, shape)
    ok = np.ones(() if N is None else N, dtype=bool) if ss_at_start.sample_ok is None else ss_at_start.sample_ok
    if ss_at_start.basis is not None:  # solve over the free states; the held ones follow
        drive = drive[..., list(ss_at_start.free)]
    r = ss_at_start.n_free
    A = ss_at_start.A_free if N is None else np.where(ok[:, None, None], ss_at_start.A_free, np.eye(r))
    x = np.linalg.solve(A, drive[..., None])[..., 0] if r else np.zeros(shape[:-1] + (0,))
    if ss_at_start.basis is not None:
        x = x @ ss_at_start.basis.T
    if N is not None:
        x[~ok] = np.nan
    return x
