"""The transient driver for large circuits: sparse descriptor equations, fixed-step implicit stepping.

Above :data:`SPARSE_STATES` states (or when the user names ``trapezoidal`` or
``trbdf2``) :func:`circuitode.transient.simulate` hands the run here.  Nothing
n × n is formed: each switch configuration is assembled once as a sparse
descriptor system (:mod:`circuitode.equations.sparse_statespace`), and each
segment between switchings and source corners is stepped with one sparse LU
per step length (:mod:`circuitode.solvers.trapezoidal`,
:mod:`circuitode.solvers.trbdf2`).  Only the recorded probes are kept per
output row (and the states, when they fit in :data:`STATE_ROWS_LIMIT` numbers).

Not handled here (the run says so and names the dense methods): switches that
act on a threshold, since these integrators do not locate events.
"""
from __future__ import annotations

import numpy as np

from ..errors import CircuitodeError
from ..model import CurrentThrough, DiodeRule, PowerIn, ThresholdRule, VoltageAcross
from ..model import SourceBank
from ..model.run_settings import check_windows
from .window_integrals import window_marks

__all__ = ["SPARSE_STATES", "SPARSE_METHODS", "REDUCED_METHODS", "STATE_ROWS_LIMIT", "sparse_choice", "simulate_sparse"]

#: ``auto`` takes the sparse path above this many states (the dense exact method's cost
#: grows as n³; at 1,000 states it already takes seconds, see bench/ladder_scaling.py).
SPARSE_STATES = 500
#: The sparse path's own integrators by name (any size).
SPARSE_METHODS = ("trapezoidal", "trbdf2")
#: Methods that also run on the sparse path above SPARSE_STATES, on the reduced sparse matrix
#: (exact by expm_multiply; scipy's steppers, BDF and Radau with it as sparse Jacobian).
REDUCED_METHODS = ("exact", "rk45", "dop853", "bdf", "radau")
#: States are kept in the Waveforms only when rows × states stays below this (8 bytes each).
STATE_ROWS_LIMIT = 20_000_000


def sparse_choice(circuit, method: str) -> tuple[str, str] | None:
    """(method, reason) when the run belongs to the sparse path, else None.

    ``method`` is the requested name ("auto", "trbdf2", …).  Raises CircuitodeError
    when a sparse method is named for a circuit with threshold switches.
    """
    n = len(circuit.state_names)
    thresholds = [s.name for s in circuit.switches if isinstance(s.control, (ThresholdRule, DiodeRule))]
    wanted = method in SPARSE_METHODS or (method in ("auto",) + REDUCED_METHODS and n > SPARSE_STATES
                                          and not thresholds)
    if not wanted:  # the common case: no configuration is enumerated for a dense run
        return None
    held = _held_states(circuit)
    if method in SPARSE_METHODS and held:
        raise CircuitodeError(
            f"method {method} keeps every capacitor voltage and inductor current free, and {held} ties or "
            "holds some of them (an ideal switch in series with an inductor, or closing across capacitors); "
            "use method exact, radau or bdf")
    if held:  # states per configuration are solved on the dense path only
        return None
    if method in SPARSE_METHODS:
        if thresholds:
            raise CircuitodeError(
                f"method {method} does not locate threshold instants, and switch(es) "
                f"{', '.join(thresholds)} act on a threshold; use method exact, radau or bdf")
        return method, f"{method}: chosen by the user (sparse descriptor equations, {n} states)"
    if method in REDUCED_METHODS:
        return method, (f"{method}: chosen by the user; {n} states is above {SPARSE_STATES}, so on the "
                        "reduced sparse equations (no dense matrix)")
    return "auto", (f"{n} states is above {SPARSE_STATES}, so the equations stay sparse "
                    "(descriptor form) and no dense eigenvalues are computed")


def _held_states(circuit) -> str:
    """Words for the configurations whose states an ideal switch ties or holds ("" if none).

    The sparse descriptor equations treat every capacitor voltage and inductor current
    as free; the constrained configurations of :mod:`circuitode.equations.constraints`
    exist on the dense path only, so such circuits stay there.
    """
    from ..equations.companion import build_layout
    from ..model.configurations import reachable_configurations

    for cfg in reachable_configurations(circuit):
        if build_layout(circuit, cfg.closed).n_constraints:
            return f"the configuration that occurs {cfg.when()}"
    return ""


def _auto_method(fastest: float | None, until: float, rows: int, size: int, n: int,
                 reducible: bool) -> tuple[str, str]:
    """The sparse method by estimated cost, and the sentence that says why.

    rk45's step is held by stability to about 3/|λ|max (Dormand–Prince reaches about
    −3.3 on the negative real axis, from memory): about until·|λ|max/3 steps of 6
    products with the reduced sparse matrix.  TR-BDF2 takes at least one step per output
    row, 2 triangular solves of all ``size`` unknowns each (counted as 4 products).  A
    stiff system goes to BDF with the reduced matrix as sparse Jacobian (adaptive, to
    rtol) and, when that matrix cannot be formed (``reducible`` False: a connected
    resistive block too large), to TR-BDF2 at the output step.
    """
    if fastest is None:
        return "trbdf2", "trbdf2: the fastest rate could not be estimated, so an L-stable method"
    if not reducible:
        return "trbdf2", ("trbdf2: the reduced sparse matrix an explicit or BDF method needs is too "
                          "large to form (a large connected block of resistive unknowns); L-stable, "
                          f"order 2, fixed step = the output step (fastest |λ| ≈ {fastest:.3g} 1/s, "
                          "sparse Arnoldi estimate, ~1 %)")
    explicit = 2.0 * until * fastest * n
    implicit = 8.0 * rows * size
    figures = (f"fastest |λ| ≈ {fastest:.3g} 1/s (sparse Arnoldi estimate, ~1 %), "
               f"rk45 about {explicit:.3g} and trbdf2 about {implicit:.3g} unknowns touched")
    if explicit <= implicit:
        return "rk45", f"rk45: not stiff enough to need an implicit method over {until:g} s ({figures})"
    return "bdf", (f"bdf: stiff (the stability of an explicit method would cost more; {figures}); "
                   "scipy's BDF with the reduced sparse matrix as Jacobian, to rtol")


def simulate_sparse(circuit, settings, name: str, reason: str, probes=None, rtol: float = 1e-6,
                    atol: float = 1e-9):
    """The run of :func:`circuitode.transient.simulate` on the sparse path; returns Waveforms.

    ``settings`` are the checked settings of ``transient._settings``; ``name`` is
    "trapezoidal", "trbdf2" or "auto" (rk45 or trbdf2 by estimated cost, see
    :func:`_auto_method`); rtol, atol are rk45's.
    """
    import scipy.sparse as sp  # loads slowly: only large circuits take this path

    from ..equations.sparse_statespace import SparseDescriptorCache
    from ..solvers.descriptor import DescriptorSegment
    from ..solvers.schur import block_cost
    from ..solvers.sparse_exact import SparseExact
    from ..solvers.sparse_explicit import SPARSE_IVP, SparseIVP
    from ..solvers.sparse_spectrum import largest_rate
    from ..solvers.trapezoidal import Trapezoidal
    from ..solvers.trbdf2 import TRBDF2
    from .driver import Event, Waveforms, _linear_probes, _schedule, _schedule_reason, _verify, recorded_probes
    from .settings import _output_grid

    s = settings
    warnings = _verify(circuit, s.until)
    wanted = recorded_probes(circuit, probes)
    linear = _linear_probes(wanted)
    cache = SparseDescriptorCache(circuit, linear)
    bank = SourceBank.of(circuit)
    check_windows(circuit.requirements, s.until)
    grid = np.union1d(_output_grid(s), window_marks(circuit.requirements, s.until))  # window ends are rows
    step = s.step if s.step is not None else s.until / (s.points - 1)
    closed = tuple(sw.initially_closed for sw in circuit.switches)
    desc = cache.get(closed)
    n, slack = desc.n_states, 1e-12 * s.until
    fastest = largest_rate(desc.E, desc.A, n, tol=1e-2, maxiter=50) if n else 0.0
    if name == "auto":
        reducible = block_cost(desc.A[n:, n:], desc.A[n:, :n]) <= SparseIVP.budget
        name, why = _auto_method(fastest, s.until, grid.size, desc.size, n, reducible)
        reason = f"{why}; {reason} (rate estimated in the configuration at the start)"
    elif fastest is not None:
        reason += f"; fastest |λ| ≈ {fastest:.3g} 1/s at the start (sparse Arnoldi estimate, ~1 %)"
    if name in ("trapezoidal", "trbdf2"):
        integrator = {"trapezoidal": Trapezoidal, "trbdf2": TRBDF2}[name](step=step)
        reason += f", h·|λ| = {step * (fastest or 0.0):.3g}"
    elif name == "exact":
        integrator = SparseExact(rtol=rtol, atol=atol)
    else:
        integrator = SPARSE_IVP[name](rtol=rtol, atol=atol)
    keep_states = n * grid.size <= STATE_ROWS_LIMIT
    if not keep_states:
        warnings += (f"note: the {n} states are not kept per output row ({grid.size} rows would need "
                     f"{8 * n * grid.size / 2**30:.1f} GiB); only the recorded probes are",)
    tiny = np.finfo(float).tiny

    def inputs(t):
        return bank.values(np.atleast_1d(np.asarray(t, dtype=float))) if bank.m else np.zeros((np.size(t), 0))

    x = _start(circuit, s.initial, desc, inputs(-tiny)[0])
    schedule = _schedule(circuit, s.until)
    stops = np.unique(np.concatenate([
        bank.breakpoints(0.0, s.until) if bank.m else np.zeros(0),
        np.array([c[0] for c in schedule if c[0] > 0], dtype=float), [s.until]]))
    rows_t, rows_y, rows_x, events, used = [], [], [], [], {closed: None}
    counters = {"segments": 0, "steps": 0, "lu_decompositions": 0}
    eps = 64 * np.finfo(float).eps * s.until

    def record_point(t, x, u, d):
        w = d.consistent(x, u)
        rows_t.append(np.array([t]))
        rows_y.append(d.outputs(w, u))
        rows_x.append(x[None, :] if keep_states else np.zeros((1, 0)))

    t, next_grid = 0.0, 0
    queue = list(schedule)
    while True:
        while queue and queue[0][0] <= t + slack:
            _, k, state = queue.pop(0)
            if closed[k] != state:
                u_b, u_a = inputs(max(t - eps, -tiny))[0], inputs(t + eps)[0]
                after = tuple(state if j == k else c for j, c in enumerate(closed))
                record_point(t, x, u_b, cache.get(closed))
                record_point(t, x, u_a, cache.get(after))
                events.append(Event(float(t), circuit.switches[k].name, state,
                                    _schedule_reason(circuit.switches[k])))
                closed = after
                used.setdefault(closed, None)
                while next_grid < grid.size and grid[next_grid] <= t + slack:
                    next_grid += 1
        if t >= s.until - slack:
            break
        t_next = float(stops[np.searchsorted(stops, t + slack, side="right")])
        desc = cache.get(closed)
        last = t_next >= s.until - slack
        upto = np.searchsorted(grid, t_next + (slack if last else -slack), side="right" if last else "left")
        t_out = grid[next_grid:upto]
        probe = DescriptorSegment(desc.E, desc.A, desc.B, bank if bank.m else None, t, t_next,
                                  np.zeros(desc.size), desc.algebraic)
        w0 = desc.consistent(x, probe.input_values(np.array([t]))[0])
        segment = DescriptorSegment(desc.E, desc.A, desc.B, bank if bank.m else None, t, t_next, w0,
                                    desc.algebraic)
        selector = sp.csr_matrix((np.ones(n), (np.arange(n), np.arange(n))), shape=(n, desc.size))
        observe = sp.vstack([desc.C, selector], format="csr") if keep_states else desc.C
        result = integrator.solve(segment, t_out, observe)
        counters["segments"] += 1
        for key, value in result.counters.items():
            counters[key] = counters.get(key, 0) + int(value)
        u_out = segment.input_values(t_out)
        p = desc.C.shape[0]
        y = result.x[:, :p] + (u_out @ desc.D.T if desc.n_inputs else 0.0)
        rows_t.append(t_out)
        rows_y.append(y)
        rows_x.append(result.x[:, p:] if keep_states else np.zeros((t_out.size, 0)))
        next_grid = upto
        x = result.x_end[:n]
        t = t_next
    return _waveforms(circuit, wanted, linear, rows_t, rows_y, rows_x, keep_states, events, name,
                      reason, counters, tuple(used), warnings, Waveforms)


def _start(circuit, initial: str, desc, u0: np.ndarray) -> np.ndarray:
    """x at t = 0: rest, given, or the DC steady state solved sparsely."""
    from ..equations.sparse_statespace import dc_steady_state

    n = desc.n_states
    if initial == "rest":
        return np.zeros(n)
    if initial == "given":
        given = [c.initial_voltage for c in circuit.capacitors] + [l.initial_current for l in circuit.inductors]
        return np.array([0.0 if g is None else float(g) for g in given])
    return dc_steady_state(circuit, desc, u0)


def _waveforms(circuit, wanted, linear, rows_t, rows_y, rows_x, keep_states, events, name, reason,
               counters, used, warnings, Waveforms):
    t = np.concatenate(rows_t) if rows_t else np.zeros(0)
    p = len(linear)
    outputs = np.concatenate(rows_y) if rows_y else np.zeros((0, p))
    n = len(circuit.state_names) if keep_states else 0
    states = np.concatenate(rows_x).reshape(t.size, n) if rows_x else np.zeros((0, n))
    row_of = {q.label: j for j, q in enumerate(linear)}
    signals, units, probes = {}, {}, {}
    for q in wanted:
        if isinstance(q, PowerIn):
            signals[q.label] = (outputs[:, row_of[VoltageAcross(q.element).label]]
                                * outputs[:, row_of[CurrentThrough(q.element).label]])
        else:
            signals[q.label] = outputs[:, row_of[q.label]].copy()
        units[q.label], probes[q.label] = q.unit, q
    names = tuple(circuit.state_names) if keep_states else ()
    state_units = tuple(circuit.state_units) if keep_states else ()
    return Waveforms(t=t, signals=signals, units=units, probes=probes, states=states,
                     state_names=names, state_units=state_units, events=tuple(events), method=name,
                     method_reason=reason, counters=counters, configurations=used, warnings=warnings)
