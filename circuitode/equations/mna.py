"""Batched modified nodal analysis of a companion network: values, stamping, solving, probes.

Element values come per sample (:class:`Samples`); conductances are stamped
by index arithmetic into N matrices at once (``np.bincount``, no Python loop
over samples) and solved with one stacked ``np.linalg.solve``, or, for one
large circuit, with a sparse LU factorisation from the very same triplets.
"""
from __future__ import annotations

from typing import Mapping

import numpy as np

from ..model import (
    Capacitor,
    Circuit,
    CurrentThrough,
    Diode,
    Inductor,
    NodeVoltage,
    PowerIn,
    Resistor,
    Switch,
    VoltageAcross,
    VoltageBetween,
    VoltageSource,
)
from .companion import Layout, StateSpaceRequestError
from ..errors import BadCouplingError, BadValueError, Diagnostic, SingularSystemError

__all__ = [
    "SPARSE_THRESHOLD",
    "VARIABLE_FIELDS",
    "Samples",
    "inductance_matrix",
    "solve_companion",
    "dense_system",
    "probe_rows",
]

#: Above this many MNA unknowns a single (unbatched) circuit is solved with sparse LU.
SPARSE_THRESHOLD = 200

#: Element fields that ``values`` may override per sample, by element kind.
VARIABLE_FIELDS = {
    Resistor: ("resistance",),
    Capacitor: ("capacitance",),
    Inductor: ("inductance",),
    Switch: ("on_resistance", "off_resistance"),
}
_COUPLING_FIELDS = ("k",)


class Samples:
    """Element values for N samples: the nominal value unless ``values`` overrides it.

    Also collects which samples are unusable; a single circuit (``batched`` False)
    raises at the first unusable value instead.
    """

    def __init__(self, circuit: Circuit, values: Mapping[tuple[str, str], np.ndarray] | None):
        self.circuit = circuit
        self.batched = values is not None
        self.values: dict[tuple[str, str], np.ndarray] = {}
        sizes = set()
        for key, array in (values or {}).items():
            if not (isinstance(key, tuple) and len(key) == 2):
                raise StateSpaceRequestError(f"batch key {key!r} must be (element name, field)")
            name, field_ = key
            element = circuit.by_name.get(name)
            if element is None:
                raise StateSpaceRequestError(f"batch values name {name!r}, which is not an element of the circuit")
            coupled = name in {c.name for c in circuit.couplings}
            allowed = _COUPLING_FIELDS if coupled else VARIABLE_FIELDS.get(type(element), ())
            if field_ not in allowed:
                kind = "coupling" if coupled else type(element).__name__.lower()
                can = (f"a {kind} can vary only in {', '.join(allowed)}" if allowed else
                       f"a {kind} has no value this stage can vary per sample (source waveforms are "
                       "evaluated by the source bank, not by the state-space matrices)")
                raise StateSpaceRequestError(f"batch values for {name!r} give field {field_!r}; {can}")
            if getattr(element, field_) is None:
                raise StateSpaceRequestError(
                    f"switch {name!r} has no {field_.replace('_', ' ')} (it is ideal in that state), "
                    "so it cannot vary per sample; give it a nominal resistance first"
                )
            arr = np.asarray(array, dtype=float)
            if arr.ndim != 1:
                raise StateSpaceRequestError(f"batch values for {key!r} must be 1-D (one per sample), got shape {arr.shape}")
            sizes.add(arr.shape[0])
            self.values[key] = arr
        if len(sizes) > 1:
            raise StateSpaceRequestError(f"batch values disagree on the number of samples: {sorted(sizes)}")
        self.size = sizes.pop() if sizes else 1
        if self.size < 1:
            raise StateSpaceRequestError("a batch needs at least one sample")
        self.ok = np.ones(self.size, dtype=bool)
        self.problems: dict[int, str] = {}

    def get(self, name: str, field_: str) -> np.ndarray:
        """(N,) values of ``field_`` of element ``name``."""
        if (name, field_) in self.values:
            return self.values[(name, field_)]
        return np.full(self.size, float(getattr(self.circuit.by_name[name], field_)))

    def require(self, bad: np.ndarray, name: str, message: str, fix: str, singular: bool = False) -> None:
        """Record samples where ``bad``; for a single circuit raise with ``message``."""
        if not np.any(bad):
            return
        if not self.batched:
            if singular:
                raise SingularSystemError(f"{message}; {fix}")
            raise BadValueError((Diagnostic("bad-value", message, (name,), fix),))
        for i in np.flatnonzero(bad & self.ok):
            self.problems[int(i)] = message
        self.ok &= ~bad

    def positive(self, name: str, field_: str, unit: str) -> np.ndarray:
        """(N,) values that must be positive and finite; unusable ones replaced by 1."""
        v = self.get(name, field_)
        bad = ~(np.isfinite(v) & (v > 0))
        self.require(bad, name, f"{field_.replace('_', ' ')} of {name} must be a positive number of {unit}",
                     f"give {name} a {field_.replace('_', ' ')} above zero")
        return np.where(bad, 1.0, v)


def inductance_matrix(circuit: Circuit, samples: Samples) -> np.ndarray:
    """(N, nL, nL) inductance matrix, H; unusable samples get the identity."""
    inductors = circuit.inductors
    position = {l.name: i for i, l in enumerate(inductors)}
    N, nL = samples.size, len(inductors)
    L = np.zeros((N, nL, nL))
    own = np.stack([samples.positive(l.name, "inductance", "henry") for l in inductors], axis=1) if nL else np.zeros((N, 0))
    L[:, np.arange(nL), np.arange(nL)] = own
    seen: set[frozenset] = set()
    for c in circuit.couplings:
        if c.first not in position or c.second not in position or c.first == c.second:
            raise BadCouplingError((Diagnostic(
                "bad-coupling", f"coupling {c.name} joins {c.first!r} and {c.second!r}; it needs two different inductors",
                (c.name,), "name two inductors of the circuit"),))
        pair = frozenset((c.first, c.second))
        if pair in seen:
            raise BadCouplingError((Diagnostic(
                "bad-coupling", f"inductors {c.first} and {c.second} are coupled twice", (c.name,),
                "keep one coupling per pair"),))
        seen.add(pair)
        k = samples.get(c.name, "k")
        bad = ~(np.isfinite(k) & (np.abs(k) < 1))
        samples.require(bad, c.name, f"coupling factor k of {c.name} must lie strictly between -1 and 1",
                        f"give {c.name} a coupling |k| < 1", singular=True)
        i, j = position[c.first], position[c.second]
        mutual = np.where(bad, 0.0, k) * np.sqrt(own[:, i] * own[:, j])
        L[:, i, j] = mutual
        L[:, j, i] = mutual
    if nL and circuit.couplings:
        lowest = np.linalg.eigvalsh(L)[:, 0]
        bad = ~(lowest > 1e-12 * own.max(axis=1))
        names = ", ".join(c.name if samples.batched else f"{c.name} (k = {c.k:g})" for c in circuit.couplings)
        samples.require(
            bad, circuit.couplings[0].name,
            f"the inductance matrix of the coupled inductors is not positive definite (couplings {names})",
            "reduce the coupling factors so that the coupled set stores positive energy for every current",
            singular=True,
        )
        L[bad] = np.eye(nL) * own[bad][:, None, :]
    return L


# --------------------------------------------------------------------------
# Stamping and solving (one implementation for batched, single and sparse)
# --------------------------------------------------------------------------


def _stamp(layout: Layout, conductance: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Triplets of the MNA matrix: rows (nnz,), cols (nnz,), vals (N, nnz); duplicates add.

    conductance : (N, number of conductors) in S.
    """
    N = conductance.shape[0]
    a = np.array([c[2] for c in layout.conductors], dtype=int)
    b = np.array([c[3] for c in layout.conductors], dtype=int)
    count = a.size
    rows = np.concatenate([a, b, a, b])
    cols = np.concatenate([a, b, b, a])
    sign = np.repeat([1.0, 1.0, -1.0, -1.0], count)
    which = np.tile(np.arange(count), 4)
    keep = (rows >= 0) & (cols >= 0)
    g_vals = conductance[:, which[keep]] * sign[keep]
    ba = np.array([br[1] for br in layout.branches], dtype=int)
    bb = np.array([br[2] for br in layout.branches], dtype=int)
    j = layout.nn + np.arange(ba.size)
    f_rows = np.concatenate([ba, bb, j, j])
    f_cols = np.concatenate([j, j, ba, bb])
    f_vals = np.repeat([1.0, -1.0, 1.0, -1.0], ba.size)
    f_keep = (f_rows >= 0) & (f_cols >= 0)
    rows = np.concatenate([rows[keep], f_rows[f_keep]])
    cols = np.concatenate([cols[keep], f_cols[f_keep]])
    vals = np.concatenate([g_vals, np.broadcast_to(f_vals[f_keep], (N, int(f_keep.sum())))], axis=1)
    return rows, cols, vals


def _dense(rows: np.ndarray, cols: np.ndarray, vals: np.ndarray, size: int) -> np.ndarray:
    """(N, size, size) matrices from triplets, summing duplicates (np.bincount, no loop)."""
    N = vals.shape[0]
    flat = (np.arange(N)[:, None] * size * size + (rows * size + cols)[None, :]).ravel()
    return np.bincount(flat, weights=vals.ravel(), minlength=N * size * size).reshape(N, size, size)


def _right_hand_sides(circuit: Circuit, layout: Layout) -> np.ndarray:
    """(size, n + m): one column per state (capacitors, inductors) and per input.

    The inputs are the sources, then each diode's drop V_d (``circuit.inputs``): a
    conducting ideal diode is a branch ``v = V_d``; one with an on-resistance R is the
    conductance 1/R with the current ``V_d / R`` driven back from cathode to anode
    (``i = (v − V_d)/R``); a blocking diode does not see its drop.
    """
    caps, inds, inputs = circuit.capacitors, circuit.inductors, circuit.inputs
    n = len(caps) + len(inds)
    index = dict(layout.node, **{circuit.ground: -1})
    rhs = np.zeros((layout.size + 1, n + len(inputs)))  # last row: ground, dropped
    for col, c in enumerate(caps):
        rhs[layout.branch_of[c.name], col] = 1.0
    current_like = [(len(caps) + i, l, 1.0) for i, l in enumerate(inds)]
    on_field = {name: f for name, f, _, _ in layout.conductors}
    for col, s in enumerate(inputs, start=n):
        if isinstance(s, Diode):
            if s.name in layout.branch_of:
                rhs[layout.branch_of[s.name], col] = 1.0
            elif on_field.get(s.name) == "on_resistance":
                current_like.append((col, s, -1.0 / s.on_resistance))
        elif isinstance(s, VoltageSource):
            rhs[layout.branch_of[s.name], col] = 1.0
        else:
            current_like.append((col, s, 1.0))
    for col, e, scale in current_like:  # current from first through the element to second
        rhs[index[e.first], col] -= scale
        rhs[index[e.second], col] += scale
    return rhs[:-1]


def dense_system(circuit: Circuit, layout: Layout, conductance: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The MNA matrices (N, size, size) and right-hand sides (size, n + m), one column
    per state and per input, for the configurations whose matrix is singular
    (solved by :mod:`circuitode.equations.constraints`)."""
    rows, cols, vals = _stamp(layout, conductance)
    return _dense(rows, cols, vals, layout.size), _right_hand_sides(circuit, layout)


def solve_companion(circuit: Circuit, layout: Layout, conductance: np.ndarray, solver: str) -> np.ndarray:
    """Solve the companion network for one column per state and per input.

    conductance : (N, number of conductors), S.  solver : "auto", "dense" or "sparse".
    Returns Z, (N, size + 1, n + m): every node voltage (V per unit state or input)
    and branch current; the last row stands for ground and is 0.
    """
    rhs = _right_hand_sides(circuit, layout)
    N, K = conductance.shape[0], layout.size
    rows, cols, vals = _stamp(layout, conductance)
    if solver == "auto":
        solver = "sparse" if (N == 1 and K > SPARSE_THRESHOLD) else "dense"
    if K == 0:
        Z = np.zeros((N, 0, rhs.shape[1]))
    elif solver == "sparse":
        if N != 1:
            raise StateSpaceRequestError("the sparse solver serves single circuits; use 'dense' for a batch")
        import scipy.sparse as sp  # loads slowly; only large single circuits take this path
        from scipy.sparse.linalg import splu

        matrix = sp.csc_matrix(sp.coo_matrix((vals[0], (rows, cols)), shape=(K, K)))
        Z = splu(matrix).solve(rhs)[None] if rhs.shape[1] else np.zeros((1, K, 0))
    elif solver == "dense":
        matrix = _dense(rows, cols, vals, K)
        Z = _solve_stack(matrix, np.broadcast_to(rhs, (N,) + rhs.shape))
    else:
        raise StateSpaceRequestError(f"unknown MNA solver {solver!r}; choose 'auto', 'dense' or 'sparse'")
    return np.concatenate([Z, np.zeros((N, 1, rhs.shape[1]))], axis=1)


def _solve_stack(matrix: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """Solve (N, K, K) systems; a numerically singular one (values many decades apart,
    such as a 1e28 Ω resistance) is an error for one circuit and NaN for a batch sample."""
    try:
        return np.linalg.solve(matrix, rhs)
    except np.linalg.LinAlgError:
        if matrix.shape[0] == 1:
            raise SingularSystemError(
                "the circuit's equations are numerically singular: element values span too many decades "
                "for double precision (look for an extreme resistance, e.g. an on-resistance written in the "
                "wrong unit)") from None
    out = np.full(rhs.shape, np.nan)
    for i in range(matrix.shape[0]):  # only after the stacked solve failed: find the singular samples
        try:
            out[i] = np.linalg.solve(matrix[i], rhs[i])
        except np.linalg.LinAlgError:
            pass
    return out


# --------------------------------------------------------------------------
# Probes
# --------------------------------------------------------------------------


def probe_rows(circuit: Circuit, layout: Layout, probes, conductance: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Each probe as weights over the solved unknowns plus a direct part over (x, u).

    Returns W, (N, p, size + 1), and direct, (p, n + m), so that the outputs are
    ``y = W @ Z + direct`` with Z from :func:`solve_companion`.
    """
    N, K = conductance.shape[0], layout.size
    m = len(circuit.inputs)
    W = np.zeros((N, len(probes), K + 1))
    direct = np.zeros((len(probes), n + m))
    ground = circuit.ground
    node = dict(layout.node, **{ground: K})  # ground → the zero row
    g_of = {c[0]: i for i, c in enumerate(layout.conductors)}
    first_inductor = len(circuit.capacitors)
    state_of = {l.name: first_inductor + i for i, l in enumerate(circuit.inductors)}
    input_of = {s.name: n + i for i, s in enumerate(circuit.sources)}
    drop_of = {d.name: n + len(circuit.sources) + i for i, d in enumerate(circuit.diodes)}

    def node_index(name: str) -> int:
        if name not in node:
            raise StateSpaceRequestError(
                f"no node named {name!r} in the circuit; known nodes: {', '.join(circuit.nodes)}")
        return node[name]

    def element(name: str):
        e = circuit.by_name.get(name)
        if e is None or e in circuit.couplings:
            raise StateSpaceRequestError(
                f"no two-terminal element named {name!r} to probe; known elements: "
                + ", ".join(x.name for x in circuit.elements))
        return e

    for row, probe in enumerate(probes):
        if isinstance(probe, PowerIn):
            raise StateSpaceRequestError(
                f"{probe.label} is not linear in the states and inputs; record voltage across "
                f"{probe.element} and current through {probe.element} and multiply them")
        if isinstance(probe, NodeVoltage):
            W[:, row, node_index(probe.node)] += 1.0
        elif isinstance(probe, (VoltageBetween, VoltageAcross)):
            pair = (probe.first, probe.second) if isinstance(probe, VoltageBetween) else (
                element(probe.element).first, element(probe.element).second)
            W[:, row, node_index(pair[0])] += 1.0
            W[:, row, node_index(pair[1])] -= 1.0
        elif isinstance(probe, CurrentThrough):
            e = element(probe.element)
            if e.name in g_of:  # resistor or resistive switch: (v_a - v_b) g
                g = conductance[:, g_of[e.name]]
                W[:, row, node[e.first]] += g
                W[:, row, node[e.second]] -= g
                if e.name in drop_of and layout.conductors[g_of[e.name]][1] == "on_resistance":
                    direct[row, drop_of[e.name]] = -1.0 / e.on_resistance  # (v - V_d) / R_on
            elif e.name in layout.branch_of:  # capacitor, voltage source, closed ideal switch
                W[:, row, layout.branch_of[e.name]] = 1.0
            elif e.name in state_of:
                direct[row, state_of[e.name]] = 1.0
            elif e.name in input_of:
                direct[row, input_of[e.name]] = 1.0
            # else: open ideal switch (or a closed one in a loop of switches): 0 A
        else:
            raise StateSpaceRequestError(f"cannot record {probe!r}: not a known kind of probe")
    return W, direct

