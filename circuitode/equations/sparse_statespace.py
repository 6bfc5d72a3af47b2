"""Sparse descriptor equations ``E w' = A w + B u`` of one switch configuration, for large circuits.

The dense path (:mod:`circuitode.equations.statespace`) solves the companion
network once per state and per input and keeps ``A`` (n × n) dense: O(n²)
memory and O(n³) work downstream.  Here nothing n × n is ever formed.  The
unknowns are ``w = [x, z]``: the n states ``x`` (capacitor voltages, then
inductor currents, as in ``circuit.state_names``) followed by the K unknowns
``z`` of the companion network's modified nodal analysis (node voltages, then
the currents of capacitors, voltage sources and closed ideal switches).  The
equations are

* ``C_k v_k' = i_k`` for every capacitor (its branch current in ``z``);
* ``L i_L' = v_a − v_b`` for the inductors (``L`` the sparse inductance matrix
  with ``M_ij = k √(L_i L_j)``);
* ``0 = R_x x + R_u u − G z``: the companion network (``G`` the MNA matrix,
  ``R`` the same right-hand sides the dense path solves for).

so ``E = diag(C, L, 0)`` and ``A = [[0, P], [R_x, −G]]``, ``B = [[0], [R_u]]``;
every block has O(n + K) nonzeros.  Eliminating ``z`` gives exactly the dense
``x' = A_x x + B_x u``.  Probes are ``y = C_w w + D u``.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu

from ..errors import BadCouplingError, Diagnostic, SingularSystemError
from ..model import Circuit, VoltageSource
from .companion import build_layout, check_closed, check_structure, describe_configuration
from .mna import Samples, _stamp, probe_rows

__all__ = ["SparseDescriptor", "assemble_sparse", "SparseDescriptorCache", "PROBE_CHUNK"]

#: Probes are turned into sparse rows this many at a time (bounds the dense scratch).
PROBE_CHUNK = 64


@dataclass(frozen=True, eq=False)
class SparseDescriptor:
    """``E w' = A w + B u``, ``y = C w + D u`` with ``w = [x (n), z (K)]``; CSC matrices.

    E, A : (n + K, n + K).  B : (n + K, m).  C : (p, n + K).  D : (p, m) dense.
    algebraic : (n + K,) bool, the rows of E that are zero (the companion network).
    companion_lu : sparse LU of the MNA matrix G (K × K), to make z consistent with (x, u).
    """

    E: sp.csc_matrix
    A: sp.csc_matrix
    B: sp.csc_matrix
    C: sp.csr_matrix
    D: np.ndarray
    n_states: int
    algebraic: np.ndarray
    companion_lu: object
    coupling_x: sp.csc_matrix  # R_x (K, n)
    coupling_u: sp.csc_matrix  # R_u (K, m)
    state_names: tuple[str, ...]
    state_units: tuple[str, ...]
    output_labels: tuple[str, ...]
    output_units: tuple[str, ...]
    closed: tuple[bool, ...]

    @property
    def size(self) -> int:
        return self.A.shape[0]

    @property
    def n_inputs(self) -> int:
        return self.B.shape[1]

    def consistent(self, x: np.ndarray, u: np.ndarray) -> np.ndarray:
        """The full unknown w (n + K,) for states x (n,) and inputs u (m,): z solved from G."""
        rhs = self.coupling_x @ x + (self.coupling_u @ u if self.n_inputs else 0.0)
        z = self.companion_lu.solve(np.asarray(rhs, dtype=float)) if self.size > self.n_states else np.zeros(0)
        return np.concatenate([x, z])

    def outputs(self, w: np.ndarray, u: np.ndarray) -> np.ndarray:
        """y (nt, p) for unknowns w (nt, n + K) and inputs u (nt, m)."""
        y = np.asarray((self.C @ np.atleast_2d(w).T).T)
        return y + np.atleast_2d(u) @ self.D.T if self.n_inputs else y


def _right_hand_sides(circuit: Circuit, layout) -> sp.csc_matrix:
    """(K, n + m) sparse: one column per state and per input (the dense path's
    :func:`circuitode.equations.mna._right_hand_sides`, as triplets)."""
    caps, inds, sources = circuit.capacitors, circuit.inductors, circuit.sources
    n = len(caps) + len(inds)
    index = dict(layout.node, **{circuit.ground: -1})
    rows, cols, vals = [], [], []
    for col, c in enumerate(caps):
        rows.append(layout.branch_of[c.name]); cols.append(col); vals.append(1.0)
    current_like = [(len(caps) + i, l) for i, l in enumerate(inds)]
    for col, s in enumerate(sources, start=n):
        if isinstance(s, VoltageSource):
            rows.append(layout.branch_of[s.name]); cols.append(col); vals.append(1.0)
        else:
            current_like.append((col, s))
    for col, e in current_like:  # current from first through the element to second
        for node, sign in ((index[e.first], -1.0), (index[e.second], 1.0)):
            if node >= 0:
                rows.append(node); cols.append(col); vals.append(sign)
    return sp.csc_matrix((vals, (rows, cols)), shape=(layout.size, n + len(sources)))


def _positive(circuit: Circuit, samples: Samples, items, unit: str) -> np.ndarray:
    """Values (k,) of the ``(name, field)`` items of one circuit, checked positive and finite
    together; a bad one raises through ``samples.positive`` in its words."""
    values = np.array([float(getattr(circuit.by_name[name], field)) for name, field in items], dtype=float)
    bad = ~(np.isfinite(values) & (values > 0))
    for i in np.flatnonzero(bad):
        samples.positive(items[i][0], items[i][1], unit)  # raises BadValueError
    return values


def _inductance(circuit: Circuit, samples: Samples) -> sp.csc_matrix:
    """Sparse inductance matrix (nL, nL), H; the coupled subset is checked positive definite."""
    inds = circuit.inductors
    pos = {l.name: i for i, l in enumerate(inds)}
    own = _positive(circuit, samples, [(l.name, "inductance") for l in inds], "henry")
    rows, cols, vals = list(range(len(inds))), list(range(len(inds))), list(own)
    coupled: dict[int, None] = {}
    for c in circuit.couplings:
        if c.first not in pos or c.second not in pos or c.first == c.second or not abs(c.k) < 1:
            raise BadCouplingError((Diagnostic(
                "bad-coupling", f"coupling {c.name} must join two different inductors with |k| < 1",
                (c.name,), "name two inductors of the circuit and a coupling factor between -1 and 1"),))
        i, j = pos[c.first], pos[c.second]
        mutual = c.k * np.sqrt(own[i] * own[j])
        rows += [i, j]; cols += [j, i]; vals += [mutual, mutual]
        coupled.setdefault(i); coupled.setdefault(j)
    L = sp.csc_matrix((vals, (rows, cols)), shape=(len(inds), len(inds)))
    if coupled:
        sub = list(coupled)
        if np.linalg.eigvalsh(L[sub][:, sub].toarray())[0] <= 1e-12 * own.max():
            raise SingularSystemError(
                "the inductance matrix of the coupled inductors is not positive definite; "
                "reduce the coupling factors so that the coupled set stores positive energy")
    return L


def assemble_sparse(circuit: Circuit, closed: Sequence[bool], probes: Sequence = ()) -> SparseDescriptor:
    """Sparse descriptor equations of ``circuit`` with the switches in states ``closed``.

    Parameters are those of :func:`circuitode.equations.statespace.assemble` (single
    circuit only).  Memory and work are linear in the circuit (plus the sparse LU of
    the MNA matrix).

    Raises
    ------
    SingularSystemError, BadValueError : as the dense path, in the same words.
    """
    closed = check_closed(circuit, closed)
    layout = build_layout(circuit, closed)
    samples = Samples(circuit, None)
    conductance = 1.0 / _positive(circuit, samples, [(name, f) for name, f, _, _ in layout.conductors], "ohms")[None, :]
    caps, inds = circuit.capacitors, circuit.inductors
    n, nc, K = len(caps) + len(inds), len(caps), layout.size
    rows, cols, vals = _stamp(layout, conductance.reshape(1, -1))
    G = sp.csc_matrix((vals[0], (rows, cols)), shape=(K, K))
    R = _right_hand_sides(circuit, layout)
    Rx, Ru = R[:, :n].tocsc(), R[:, n:].tocsc()
    capacitance = _positive(circuit, samples, [(c.name, "capacitance") for c in caps], "farads")
    E = sp.block_diag([sp.diags(capacitance), _inductance(circuit, samples), sp.csc_matrix((K, K))], format="csc")
    # P: capacitor rows pick their branch current, inductor rows v_a − v_b
    p_rows = list(range(nc))
    p_cols = [layout.branch_of[c.name] for c in caps]
    p_vals = [1.0] * nc
    for i, l in enumerate(inds):
        for node, sign in ((layout.node.get(l.first), 1.0), (layout.node.get(l.second), -1.0)):
            if node is not None:
                p_rows.append(nc + i); p_cols.append(node); p_vals.append(sign)
    P = sp.csc_matrix((p_vals, (p_rows, p_cols)), shape=(n, K))
    A = sp.bmat([[sp.csc_matrix((n, n)), P], [Rx, -G]], format="csc")
    B = sp.vstack([sp.csc_matrix((n, Ru.shape[1])), Ru], format="csc")
    lu = splu(G) if K else None
    C_rows, D_rows = [], []
    probes = tuple(probes)
    for start in range(0, len(probes), PROBE_CHUNK):
        W, direct = probe_rows(circuit, layout, probes[start:start + PROBE_CHUNK], conductance, n)
        C_rows.append(sp.hstack([sp.csr_matrix(direct[:, :n]), sp.csr_matrix(W[0, :, :K])], format="csr"))
        D_rows.append(direct[:, n:])
    C = sp.vstack(C_rows, format="csr") if C_rows else sp.csr_matrix((0, n + K))
    D = np.concatenate(D_rows) if D_rows else np.zeros((0, len(circuit.sources)))
    algebraic = np.zeros(n + K, dtype=bool)
    algebraic[n:] = True
    return SparseDescriptor(
        E=E, A=A, B=B, C=C, D=D, n_states=n, algebraic=algebraic, companion_lu=lu,
        coupling_x=Rx, coupling_u=Ru,
        state_names=tuple(circuit.state_names), state_units=tuple(circuit.state_units),
        output_labels=tuple(p.label for p in probes), output_units=tuple(p.unit for p in probes),
        closed=closed)


def dc_steady_state(circuit: Circuit, desc: SparseDescriptor, u0: np.ndarray) -> np.ndarray:
    """States x (n,) of the DC steady state: solve 0 = A w + B u0 sparsely.

    Raises SingularSystemError in words when the DC state is undetermined.
    """
    _, _, problems = check_structure(circuit, desc.closed, dc=True)
    if problems:
        raise SingularSystemError(
            f"cannot start from the DC steady state of the circuit "
            f"{describe_configuration(circuit, desc.closed)}: " + "; ".join(problems))
    rhs = -(desc.B @ u0) if desc.n_inputs else np.zeros(desc.size)
    w = splu(desc.A.tocsc()).solve(np.asarray(rhs, dtype=float))
    return w[:desc.n_states]


class SparseDescriptorCache:
    """SparseDescriptor per switch configuration, assembled once each."""

    def __init__(self, circuit: Circuit, probes: Sequence = ()):
        self.circuit, self.probes = circuit, tuple(probes)
        self._cache: dict[tuple[bool, ...], SparseDescriptor] = {}

    def get(self, closed: Sequence[bool]) -> SparseDescriptor:
        key = check_closed(self.circuit, closed)
        if key not in self._cache:
            self._cache[key] = assemble_sparse(self.circuit, key, self.probes)
        return self._cache[key]
