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
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu

from .circuit import (
    Capacitor,
    Circuit,
    CurrentSource,
    CurrentThrough,
    Inductor,
    NodeVoltage,
    PowerIn,
    Resistor,
    Switch,
    VoltageAcross,
    VoltageBetween,
    VoltageSource,
)
from .errors import (
    BadCouplingError,
    BadValueError,
    CircuitodeError,
    Diagnostic,
    SingularSystemError,
    TopologyError,
)

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


class StateSpaceRequestError(CircuitodeError, ValueError):
    """A request this stage cannot serve: an unknown element or node in a probe, a
    probe that is not linear in (x, u), switch states of the wrong length, an
    unknown initial-state mode or a malformed batch of values."""


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
        )


# --------------------------------------------------------------------------
# The companion network of one configuration
# --------------------------------------------------------------------------


@dataclass
class _Layout:
    """Index bookkeeping of the companion network (independent of element values).

    Node indices: 0 … nn-1 for non-ground nodes, -1 for ground.  Branch unknowns
    (capacitors, voltage sources, closed ideal switches) follow at nn + j.
    """

    node: dict[str, int]
    conductors: list[tuple[str, str, int, int]]  # (element name, value field, a, b)
    branches: list[tuple[str, int, int]]  # (element name, a, b)
    branch_of: dict[str, int]  # element name → unknown index

    @property
    def nn(self) -> int:
        return len(self.node)

    @property
    def size(self) -> int:
        return self.nn + len(self.branches)


def describe_configuration(circuit: Circuit, closed: Sequence[bool]) -> str:
    """Words for a switch configuration, e.g. ``"with K1 closed, K2 open"``."""
    switches = circuit.switches
    if not switches:
        return "(the circuit has no switches)"
    words = [f"{s.name} {'closed' if c else 'open'}" for s, c in zip(switches, closed)]
    return "with " + ", ".join(words)


class _Forest:
    """Union-find over node names that remembers, per joined pair, the path of elements."""

    def __init__(self, nodes: Sequence[str]):
        self.parent = {n: n for n in nodes}

    def find(self, n: str) -> str:
        root = n
        while self.parent[root] != root:
            root = self.parent[root]
        while self.parent[n] != root:
            self.parent[n], n = root, self.parent[n]
        return root

    def join(self, a: str, b: str) -> bool:
        """Join; False when a and b were already joined (the edge closes a loop)."""
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return False
        self.parent[ra] = rb
        return True


def _loop_through(edges: Sequence[tuple[str, str, str]], closing: tuple[str, str, str]) -> list[str]:
    """Names of the elements on the loop that ``closing`` makes with the forest ``edges``."""
    import networkx as nx

    g = nx.MultiGraph()
    for name, a, b in edges:
        g.add_edge(a, b, key=name)
    name, a, b = closing
    if a == b:
        return [name]
    path = nx.shortest_path(g, a, b)
    return [next(iter(g[u][v])) for u, v in zip(path, path[1:])] + [name]


def _structure(circuit: Circuit, closed: Sequence[bool], dc: bool) -> tuple[list, list, list[str]]:
    """Check that a resistive network with positive conductances has a unique solution.

    Voltage-defined branches must form no loop, and every node must reach ground
    through voltage-defined or conducting branches (a standard property of modified
    nodal analysis with positive conductances).  ``dc`` selects the network: False
    → the companion network (capacitors as voltage sources, inductors as current
    sources); True → the DC network (capacitors open, inductors shorts).

    Returns (voltage branches kept, conductors, problems in words); a loop made only
    of closed ideal switches is harmless, and its closing switch is dropped.
    """
    nodes = list(circuit.nodes)
    forest = _Forest(nodes)
    kept: list[tuple[str, str, str]] = []
    conductors: list[tuple[str, str, str, str]] = []
    problems: list[str] = []
    states = dict(zip((s.name for s in circuit.switches), closed))
    for e in circuit.elements:
        edge = (e.name, e.first, e.second)
        if isinstance(e, Resistor):
            conductors.append((e.name, "resistance", e.first, e.second))
            continue
        if isinstance(e, Switch):
            on = states[e.name]
            field_ = "on_resistance" if on else "off_resistance"
            if getattr(e, field_) is not None:
                conductors.append((e.name, field_, e.first, e.second))
                continue
            if not on:
                continue
        elif isinstance(e, CurrentSource) or (isinstance(e, Capacitor) and dc):
            continue
        elif isinstance(e, Inductor) and not dc:
            continue
        if forest.join(e.first, e.second):
            kept.append(edge)
            continue
        loop = _loop_through(kept, edge)
        kinds = {type(circuit.element(n)) for n in loop}
        if kinds <= {Switch}:
            continue  # only ideal switches: voltages are fine, this one's current is taken as 0
        problems.append(_loop_words(circuit, loop, kinds, dc))
    for name, _, a, b in conductors:
        forest.join(a, b)
    ground = circuit.ground
    floating = [n for n in nodes if ground is None or forest.find(n) != forest.find(ground)]
    if ground is None:
        problems.append("the circuit has no ground node; declare one so node voltages have a reference")
    elif floating:
        problems.append(_floating_words(floating, dc))
    return kept, conductors, problems


def _loop_words(circuit: Circuit, loop: list[str], kinds: set, dc: bool) -> str:
    names = ", ".join(loop)
    if dc and Inductor in kinds:
        return (
            f"in DC steady state the loop {names} is made only of inductors, voltage sources "
            "and closed switches, so its DC current is undetermined (or infinite); "
            "add a series resistance to one of them, or start from rest or given values"
        )
    if Capacitor in kinds:
        return (
            f"the loop {names} is made only of capacitors, voltage sources and closed ideal "
            "switches, so the capacitor voltages are not independent; add a series "
            "resistance in the loop (for a switch: an on-resistance)"
        )
    return (
        f"the loop {names} is made only of voltage sources and closed ideal switches "
        "(a shorted or paralleled source); add a series resistance (for a switch: an on-resistance)"
    )


def _floating_words(floating: list[str], dc: bool) -> str:
    nodes = ", ".join(floating)
    if dc:
        return (
            f"in DC steady state node(s) {nodes} have no path to ground except through "
            "capacitors, current sources or open switches, so their DC voltages are "
            "undetermined; add a resistor from them to ground, or start from rest or given values"
        )
    return (
        f"node(s) {nodes} have no path to ground except through inductors, current sources "
        "or open ideal switches (a floating part or an inductor/current-source cut set); "
        "add a resistor from them to ground (for a switch: an off-resistance)"
    )


def _topology_words(circuit: Circuit, closed: tuple[bool, ...]) -> str:
    """The topology module's error diagnostics, when that module offers ``diagnose``."""
    try:
        from . import topology
    except ImportError:
        return ""
    diagnose = getattr(topology, "diagnose", None)
    if diagnose is None:
        return ""
    try:
        found = diagnose(circuit)
    except TopologyError as exc:
        found = exc.diagnostics
    except Exception:  # diagnostics are only extra words; never mask the real error
        return ""
    errors = [d for d in (found or ()) if getattr(d, "severity", "error") == "error"]
    return "\n".join(str(d) for d in errors)


def _layout(circuit: Circuit, closed: tuple[bool, ...]) -> _Layout:
    kept, conductors, problems = _structure(circuit, closed, dc=False)
    if problems:
        words = _topology_words(circuit, closed)
        message = (
            f"the circuit {describe_configuration(circuit, closed)} has no unique solution: "
            + "; ".join(problems)
        )
        if words:
            message += "\nthe topology checks found:\n" + words
        raise SingularSystemError(message)
    ground = circuit.ground
    node = {n: i for i, n in enumerate(n for n in circuit.nodes if n != ground)}
    index = dict(node, **{ground: -1})
    branches = [(name, index[a], index[b]) for name, a, b in kept]
    return _Layout(
        node=node,
        conductors=[(name, f, index[a], index[b]) for name, f, a, b in conductors],
        branches=branches,
        branch_of={name: len(node) + j for j, (name, _, _) in enumerate(branches)},
    )


# --------------------------------------------------------------------------
# Element values, one per sample
# --------------------------------------------------------------------------


class _Samples:
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
            allowed = _COUPLING_FIELDS if name in {c.name for c in circuit.couplings} else VARIABLE_FIELDS.get(type(element), ())
            if field_ not in allowed:
                raise StateSpaceRequestError(
                    f"batch values for {name!r} give field {field_!r}; a {type(element).__name__.lower()} "
                    f"can vary only in {', '.join(allowed) or 'nothing'}"
                )
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


def _inductance_matrix(circuit: Circuit, samples: _Samples) -> np.ndarray:
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
        names = ", ".join(f"{c.name} (k = {c.k:g})" for c in circuit.couplings)
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


def _stamp(layout: _Layout, conductance: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
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


def _right_hand_sides(circuit: Circuit, layout: _Layout) -> np.ndarray:
    """(size, n + m): one column per state (capacitors, inductors) and per input."""
    caps, inds, sources = circuit.capacitors, circuit.inductors, circuit.sources
    n = len(caps) + len(inds)
    index = dict(layout.node, **{circuit.ground: -1})
    rhs = np.zeros((layout.size + 1, n + len(sources)))  # last row: ground, dropped
    for col, c in enumerate(caps):
        rhs[layout.branch_of[c.name], col] = 1.0
    current_like = [(len(caps) + i, l) for i, l in enumerate(inds)]
    for col, s in enumerate(sources, start=n):
        if isinstance(s, VoltageSource):
            rhs[layout.branch_of[s.name], col] = 1.0
        else:
            current_like.append((col, s))
    for col, e in current_like:  # current from first through the element to second
        rhs[index[e.first], col] -= 1.0
        rhs[index[e.second], col] += 1.0
    return rhs[:-1]


def _solve(circuit, layout, conductance, solver: str) -> np.ndarray:
    """(N, size + 1, n + m): every unknown for every state and input column; last row ground (0)."""
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
        matrix = sp.csc_matrix(sp.coo_matrix((vals[0], (rows, cols)), shape=(K, K)))
        Z = splu(matrix).solve(rhs)[None] if rhs.shape[1] else np.zeros((1, K, 0))
    elif solver == "dense":
        matrix = _dense(rows, cols, vals, K)
        Z = np.linalg.solve(matrix, np.broadcast_to(rhs, (N,) + rhs.shape))
    else:
        raise StateSpaceRequestError(f"unknown MNA solver {solver!r}; choose 'auto', 'dense' or 'sparse'")
    return np.concatenate([Z, np.zeros((N, 1, rhs.shape[1]))], axis=1)


# --------------------------------------------------------------------------
# Probes
# --------------------------------------------------------------------------


def _probe_rows(circuit, layout, probes, conductance, closed, n) -> tuple[np.ndarray, np.ndarray]:
    """Weights (N, p, size + 1) over the unknowns and direct part (p, n + m) over (x, u)."""
    N, K = conductance.shape[0], layout.size
    m = len(circuit.sources)
    W = np.zeros((N, len(probes), K + 1))
    direct = np.zeros((len(probes), n + m))
    ground = circuit.ground
    node = dict(layout.node, **{ground: K})  # ground → the zero row
    g_of = {c[0]: i for i, c in enumerate(layout.conductors)}
    state_of = {l.name: len(circuit.capacitors) + i for i, l in enumerate(circuit.inductors)}
    input_of = {s.name: n + i for i, s in enumerate(circuit.sources)}

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


# --------------------------------------------------------------------------
# Public entry points
# --------------------------------------------------------------------------


def _check_closed(circuit: Circuit, closed: Sequence[bool]) -> tuple[bool, ...]:
    closed = tuple(bool(c) for c in closed)
    if len(closed) != len(circuit.switches):
        raise StateSpaceRequestError(
            f"{len(closed)} switch states given for {len(circuit.switches)} switches "
            f"({', '.join(s.name for s in circuit.switches) or 'none'}); give one per switch, in order")
    return closed


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
    """
    closed = _check_closed(circuit, closed)
    layout = _layout(circuit, closed)
    samples = _Samples(circuit, values)
    conductance = np.stack(
        [1.0 / samples.positive(name, f, "ohms") for name, f, _, _ in layout.conductors], axis=1
    ) if layout.conductors else np.zeros((samples.size, 0))
    capacitance = np.stack(
        [samples.positive(c.name, "capacitance", "farads") for c in circuit.capacitors], axis=1
    ) if circuit.capacitors else np.zeros((samples.size, 0))
    inductance = _inductance_matrix(circuit, samples)
    W, direct = _probe_rows(circuit, layout, tuple(probes), conductance, closed,
                            len(circuit.state_names))
    Z = _solve(circuit, layout, conductance, solver)

    caps, inds = circuit.capacitors, circuit.inductors
    n = len(caps) + len(inds)
    index = dict(layout.node, **{circuit.ground: layout.size})
    cap_rows = Z[:, [layout.branch_of[c.name] for c in caps], :] / capacitance[:, :, None]
    a = [index[l.first] for l in inds]
    b = [index[l.second] for l in inds]
    ind_rows = np.linalg.solve(inductance, Z[:, a, :] - Z[:, b, :]) if inds else Z[:, :0, :]
    rates = np.concatenate([cap_rows, ind_rows], axis=1)
    outputs = np.einsum("npk,nkc->npc", W, Z) + direct
    A, B = rates[..., :n], rates[..., n:]
    C, D = outputs[..., :n], outputs[..., n:]
    sources = circuit.sources
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
        input_units=tuple("V" if isinstance(s, VoltageSource) else "A" for s in sources),
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
        key = _check_closed(self.circuit, closed)
        if key not in self._cache:
            self._cache[key] = assemble(self.circuit, key, self.probes, self.values, solver=self.solver)
        return self._cache[key]

    def __len__(self) -> int:
        return len(self._cache)


def _dc_words(circuit: Circuit, closed: tuple[bool, ...]) -> str:
    """Why the DC steady state is undetermined: topology's words if it has them, else ours."""
    try:
        from . import topology

        explain = getattr(topology, "explain_singular_dc", None)
        if explain is not None:
            words = explain(circuit, closed)
            if words:
                return str(words)
    except Exception:  # extra words only; fall back to our own
        pass
    _, _, problems = _structure(circuit, closed, dc=True)
    return "; ".join(problems) or "the state matrix A is singular"


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
    _, _, problems = _structure(circuit, ss_at_start.closed, dc=True)
    if problems:
        raise SingularSystemError(
            f"no unique DC steady state {describe_configuration(circuit, ss_at_start.closed)}: "
            + _dc_words(circuit, ss_at_start.closed))
    m = ss_at_start.n_inputs
    u = np.zeros(m) if u0 is None else np.asarray(u0, dtype=float)
    if u.shape[-1:] != (m,):
        raise StateSpaceRequestError(f"u0 must have {m} entries (one per source), got shape {u.shape}")
    if n == 0:
        return np.zeros(shape)
    drive = -np.einsum("...ij,...j->...i", ss_at_start.B, u)
    drive = np.broadcast_to(drive, shape)
    ok = np.ones(() if N is None else N, dtype=bool) if ss_at_start.sample_ok is None else ss_at_start.sample_ok
    A = ss_at_start.A if N is None else np.where(ok[:, None, None], ss_at_start.A, np.eye(n))
    x = np.linalg.solve(A, drive[..., None])[..., 0]
    if N is not None:
        x[~ok] = np.nan
    return x
