"""The batched engine: one chunk of samples stepped together as stacked arrays.

For a chunk of N samples, each switch configuration's matrices are assembled
once for all N (``statespace.assemble`` with per-sample values, no Python loop
over samples).  On each stretch between shared breakpoints (timed switch
instants, source corners) the inputs are written as their own linear
generator, ``u = H z``, ``z' = F z``, and appended to the state:

    w = [x; z],   w' = M w,   M = [[A, B H], [0, F]]   (N, s, s)

so one step of length h is ``w ← Φ(h) w`` with ``Φ = expm(M h)`` (exact) or
the RK4 polynomial of ``M h`` (batched RK4), one stacked matrix per distinct
step length and configuration.  Recorded signals are ``y = [C, D H] w``.

Time-scheduled switches switch every sample at once (segment boundaries are
shared).  Threshold switches give each sample its own configuration: after
each grid step the samples whose watched quantity turned from "not met" to
"met" are found, the instant is located for those samples together
(safeguarded Newton iterations on the exact partial-step propagation, to
:data:`EVENT_TOL_FRACTION` of the window), those samples switch, and the rest
of the step is completed in their new configuration.  The event instant is
recorded twice (value just before and just after), as in the single run.

Samples whose values are unusable, or whose run goes non-finite, are marked
failed with a message; the others carry on.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..circuit import Circuit, CurrentThrough, PowerIn, Switch, ThresholdRule, VoltageAcross
from ..errors import CircuitodeError
from ..sources import SourceBank
from ..statespace import StateSpaceCache, initial_state
from ..transient import DEFAULT_POINTS, EVENT_TOL_FRACTION
from .batchexpm import expm_stack, rk4_stack

__all__ = ["BATCH_METHODS", "EVENT_TOL_FRACTION", "ChunkWaves", "output_grid", "linear_probes", "simulate_chunk"]

#: Stepping methods of the batched engine.
BATCH_METHODS = ("exact", "rk4")


@dataclass
class ChunkWaves:
    """What a chunk's run produced.

    t : (N, nt) s, each sample's time axis (a switching instant appears twice).
    signals : one (N, nt) array per probe asked for, in that order.
    ok : (N,) bool, False where the sample failed.
    problems : sample index (within the chunk) → message, for failed samples.
    event_times : (N, k) s, instant each threshold switch acted, NaN if it never did.
    """

    t: np.ndarray
    signals: list
    ok: np.ndarray
    problems: dict[int, str] = field(default_factory=dict)
    event_times: np.ndarray | None = None

    @property
    def y(self) -> np.ndarray:
        """(N, p, nt): the signals stacked (a copy)."""
        return np.stack(self.signals, axis=1)


def output_grid(circuit: Circuit) -> np.ndarray:
    """(nt,) output instants of the circuit's transient window, s.

    The same rule as the single run (circuitode.transient): every ``step`` from 0
    plus ``until`` when it is not on the step grid, else ``points`` evenly spaced.
    """
    a = circuit.analysis
    if a is None:
        raise CircuitodeError("the netlist has no transient statement; add e.g. 'transient until 10 ms step 1 us'")
    until = float(a.until)
    if a.step is None:
        return np.linspace(0.0, until, int(a.points or DEFAULT_POINTS))
    step = float(a.step)
    count = int(np.floor(until / step * (1 + 1e-12)))
    grid = step * np.arange(count + 1)
    if until - grid[-1] > 1e-9 * step:
        grid = np.append(grid, until)
    return grid


def linear_probes(probes) -> tuple[list, list]:
    """Split probes into linear output rows: PowerIn(e) becomes v across e times i through e.

    Returns (linear probes, recipe) where recipe[i] is ("row", r) or ("product", r1, r2).
    """
    rows: list = []
    recipe: list = []

    def row(p):
        if p not in rows:
            rows.append(p)
        return rows.index(p)

    for p in probes:
        if isinstance(p, PowerIn):
            recipe.append(("product", row(VoltageAcross(p.element)), row(CurrentThrough(p.element))))
        else:
            recipe.append(("row", row(p)))
    return rows, recipe


class _Stepper:
    """Per-configuration augmented matrices and step matrices of one segment."""

    def __init__(self, method: str, cache: StateSpaceCache, H: np.ndarray, F: np.ndarray):
        self.method, self.cache, self.H, self.F = method, cache, H, F
        self._M: dict = {}
        self._G: dict = {}
        self._phi: dict = {}

    def matrices(self, key):
        if key not in self._M:
            ss = self.cache.get(key)
            A, B, C, D = ss.A, ss.B, ss.C, ss.D
            N, n = A.shape[0], A.shape[1]
            q = self.F.shape[0]
            M = np.zeros((N, n + q, n + q))
            M[:, :n, :n] = A
            G = np.zeros((N, C.shape[1], n + q))
            G[:, :, :n] = C
            if q:
                M[:, :n, n:] = B @ self.H
                M[:, n:, n:] = self.F
                G[:, :, n:] = D @ self.H
            self._M[key], self._G[key] = M, G
        return self._M[key], self._G[key]

    def step(self, key, h: float) -> np.ndarray:
        k = (key, h)
        if k not in self._phi:
            M, _ = self.matrices(key)
            self._phi[k] = self.propagate(M, h)
        return self._phi[k]

    def propagate(self, M: np.ndarray, h) -> np.ndarray:
        """Φ for matrices M (K, s, s) and step lengths h (scalar or (K,))."""
        Mh = M * np.reshape(h, (-1, 1, 1))
        return expm_stack(Mh) if self.method == "exact" else rk4_stack(Mh)


def _matvec(P: np.ndarray, w: np.ndarray) -> np.ndarray:
    return np.einsum("nij,nj->ni", P, w)


def simulate_chunk(circuit: Circuit, values: dict, probes, *, method: str = "exact") -> ChunkWaves:
    """Run one chunk of samples through the circuit's transient window.

    Parameters
    ----------
    circuit : the built circuit (its analysis gives window, step, initial state).
    values : {(element, field): (N,) array} per-sample element values.
    probes : what to record (PowerIn allowed).
    method : "exact" (batched matrix exponential) or "rk4" (batched classic RK4).
    """
    if method not in BATCH_METHODS:
        raise CircuitodeError(f"batch method {method!r} is not available; use one of {', '.join(BATCH_METHODS)}")
    N = _batch_size(values)
    t_grid = output_grid(circuit)
    window = float(t_grid[-1] - t_grid[0])
    switches = circuit.switches
    thr = [i for i, s in enumerate(switches) if isinstance(s.control, ThresholdRule)]
    rules = [switches[i].control for i in thr]
    rows, recipe = linear_probes(tuple(probes))
    all_rows = list(rows)
    for r in rules:  # watched quantities, sharing a recorded row where they can
        if r.probe not in all_rows:
            all_rows.append(r.probe)
    watch = [all_rows.index(r.probe) for r in rules]
    cache = StateSpaceCache(circuit, all_rows, values)
    bank = SourceBank.of(circuit)
    m = bank.m

    def key_of(timed: tuple, code: int) -> tuple:
        closed = list(timed)
        for j, i in enumerate(thr):
            fired = (code >> j) & 1
            closed[i] = rules[j].closes if fired else (not rules[j].closes)
        return tuple(closed)

    # segment boundaries shared by every sample (as the single run: source corners,
    # scheduled switch changes, the end)
    until = float(t_grid[-1])
    slack = 1e-12 * until
    changes = sorted(
        ((max(float(t), 0.0), i, bool(st)) for i, s in enumerate(switches)
         for t, st in s.scheduled_changes(-np.finfo(float).tiny, until)),
        key=lambda c: (c[0], c[1]))
    corners = bank.breakpoints(0.0, until) if m else np.zeros(0)
    bounds = np.unique(np.concatenate([[0.0], corners, [c[0] for c in changes if c[0] > 0], [until]]))

    timed = [bool(s.initially_closed) for s in switches]
    code = np.zeros(N, dtype=np.int64)
    ok = np.ones(N, dtype=bool)
    problems: dict[int, str] = {}

    ss0 = cache.get(key_of(tuple(timed), 0))
    _collect(ss0, ok, problems)
    mode = circuit.analysis.initial if circuit.analysis is not None else "given"
    u_before = bank.values(np.array([-np.finfo(float).tiny]))[0] if m else np.zeros(0)
    x = np.asarray(initial_state(circuit, mode, ss0, np.broadcast_to(u_before, (N, m))), dtype=float)
    x = np.where(ok[:, None], x, 0.0)

    p_all = len(all_rows)
    nt = t_grid.size
    # each switching instant adds two rows (and replaces a grid instant it falls on)
    record = _Record(N, nt + 2 * len(changes), 2 * len(rules), p_all)
    y_end_before = None
    event_times = np.full((N, len(rules)), np.nan)
    tol = EVENT_TOL_FRACTION * until
    levels = np.array([r.level for r in rules])
    signs = np.array([1.0 if r.above else -1.0 for r in rules])
    queue = list(changes)
    n = x.shape[1]

    for seg, (a, b) in enumerate(zip(bounds[:-1], bounds[1:])):
        a, b = float(a), float(b)
        last = seg == bounds.size - 2
        # scheduled changes due now: rows just before (old configuration, old inputs) and after
        due = []
        while queue and queue[0][0] <= a + slack:
            due.append(queue.pop(0))
        due = [(i, st) for _, i, st in due if timed[i] != st]
        if m:
            gen = bank.generators(a, b)
            F = np.atleast_2d(np.asarray(gen.F, dtype=float))
            z0 = np.asarray(gen.z0, dtype=float).reshape(-1)
            H = np.asarray(gen.H, dtype=float).reshape(m, z0.size)
        else:
            F, z0, H = np.zeros((0, 0)), np.zeros(0), np.zeros((0, 0))
        if due:
            if y_end_before is None:  # a change at t = 0: the old configuration at the start
                w0 = np.concatenate([x, np.broadcast_to(z0, (N, z0.size))], axis=1)
                y_end_before = _matvec(_G_for(cache, key_of, tuple(timed), code,
                                              _Stepper(method, cache, H, F), ok, problems), w0)
            record.all(a, y_end_before)
            for i, st in due:
                timed[i] = st
        stepper = _Stepper(method, cache, H, F)
        w = np.concatenate([x, np.broadcast_to(z0, (N, z0.size))], axis=1)
        timed_key = tuple(timed)

        def G_of(codes, stepper=stepper, timed_key=timed_key):
            return _G_for(cache, key_of, timed_key, codes, stepper, ok, problems)

        G_cur = G_of(code)
        y_now = _matvec(G_cur, w)
        if due:
            record.all(a, y_now)  # a grid instant here is stood for by the two rows
        # a threshold already strictly met at the start of a stretch acts at once
        # (as in the single run); those samples' two rows stand for a grid instant here
        _fire_at_start(a, w, y_now, code, ok, rules, watch, G_cur, record, event_times,
                       lambda idx: _rows_G(stepper, timed_key, key_of, code, idx))
        if not due and np.any(np.abs(t_grid - a) <= slack):
            # (a sample that switched just now repeats its "after" row here: an interval
            # of zero length that changes no figure)
            record.all(a, y_now)
        g_prev = _event_values(y_now, watch, rules)

        upper = (t_grid <= b + slack) if last else (t_grid < b - slack)
        inside = np.flatnonzero((t_grid > a + slack) & upper)
        stops = t_grid[inside]
        slots = inside
        if not last or stops.size == 0 or stops[-1] < b - slack:
            stops = np.append(stops, b)
            slots = np.append(slots, -1)
        lengths = np.diff(np.concatenate([[a], stops]))
        phi_cur: dict = {}
        t_prev = a
        for t_next, h, slot in zip(stops, lengths, slots):
            h = float(h)
            if h not in phi_cur:
                phi_cur[h] = _gather(stepper, timed_key, key_of, code, h)
            w_prev = w
            w = _matvec(phi_cur[h], w)
            y_now = _matvec(G_cur, w)
            if rules:
                g_now = (y_now[:, watch] - levels) * signs
                turned = (g_prev < 0.0) & (g_now >= 0.0)
                if turned.any() and (crossed := turned & _pending(code, len(rules)) & ok[:, None]).any():
                    _handle_events(stepper, timed_key, key_of, code, crossed, w_prev, w, y_now,
                                   g_now, t_prev, h, tol, rules, watch, G_cur, phi_cur,
                                   event_times, record)
                g_prev = g_now
            if slot >= 0:
                record.all(t_grid[slot], y_now)
            t_prev = float(t_next)
        x = w[:, :n]
        y_end_before = y_now
    t_all, y_all = record.finish()
    bad = ~np.all(np.isfinite(y_all), axis=(1, 2))  # (N,)
    for i in np.flatnonzero(bad & ok):
        problems[int(i)] = "the run produced non-finite values"
    ok &= ~bad
    signals = _recipe_rows(y_all, recipe)
    return ChunkWaves(t_all, signals, ok, problems, event_times)


# --------------------------------------------------------------------------
# helpers
# --------------------------------------------------------------------------


def _batch_size(values: dict) -> int:
    sizes = {np.asarray(v).shape[0] for v in values.values()}
    if len(sizes) != 1:
        raise CircuitodeError("a chunk needs per-sample values of one common length")
    return sizes.pop()


def _collect(ss, ok: np.ndarray, problems: dict) -> None:
    if ss.sample_ok is None:
        return
    for i, msg in (ss.sample_problems or {}).items():
        if ok[i]:
            problems[int(i)] = msg
    ok &= ss.sample_ok


def _G_for(cache, key_of, timed_key, codes, stepper, ok, problems):
    out = None
    for c in np.unique(codes):
        key = key_of(timed_key, int(c))
        _, G = stepper.matrices(key)
        _collect(cache.get(key), ok, problems)
        out = np.empty_like(G) if out is None else out
        sel = codes == c
        out[sel] = G[sel]
    return out


def _gather(stepper, timed_key, key_of, code, h):
    out = None
    for c in np.unique(code):
        phi = stepper.step(key_of(timed_key, int(c)), h)
        out = np.empty_like(phi) if out is None else out
        sel = code == c
        out[sel] = phi[sel]
    return out


def _event_values(y: np.ndarray, watch, rules) -> np.ndarray:
    """(N, k) signed distance to each threshold: (watched − level) for "above",
    (level − watched) for "below", so the condition is met where it is ≥ 0."""
    if not rules:
        return np.zeros((y.shape[0], 0))
    sign = np.array([1.0 if r.above else -1.0 for r in rules])
    return (y[:, watch] - np.array([r.level for r in rules])[None, :]) * sign


def _fire_at_start(a, w, y_now, code, ok, rules, watch, G_cur, record, event_times, rows_G):
    """Switch, at instant a, every sample whose pending threshold is already strictly met
    (repeatedly, for a cascade).  Updates code, G_cur and y_now in place; records the rows
    just before and after.  Returns (N,) bool: the samples that switched."""
    fired = np.zeros(code.size, dtype=bool)
    if not rules:
        return fired
    while True:
        g = _event_values(y_now, watch, rules)
        met = _pending(code, len(rules)) & (g > 0.0) & ok[:, None]
        idx = np.flatnonzero(met.any(axis=1))
        if idx.size == 0:
            return fired
        which = np.argmax(met[idx], axis=1)  # the first switch in file order acts first
        record.some(idx, np.full(idx.size, a), y_now[idx])
        code[idx] |= (1 << which)
        event_times[idx, which] = a
        G_cur[idx] = rows_G(idx)
        y_now[idx] = _matvec(G_cur[idx], w[idx])
        record.some(idx, np.full(idx.size, a), y_now[idx])
        fired[idx] = True


def _pending(code: np.ndarray, k: int) -> np.ndarray:
    """(N, k) True where threshold switch j has not acted yet."""
    return ((code[:, None] >> np.arange(k)[None, :]) & 1) == 0


def _crossings(g_prev, g_now, rules, code) -> np.ndarray:
    """(N, k) True where threshold j turned from unmet to met and has not acted yet."""
    pending = ((code[:, None] >> np.arange(len(rules))[None, :]) & 1) == 0
    return pending & (g_prev < 0.0) & (g_now >= 0.0)


def _handle_events(stepper, timed_key, key_of, code, crossed, w_prev, w, y_now, g_now, t_prev, h,
                   tol, rules, watch, G_cur, phi_cur, event_times, record):
    """Locate, switch and finish the step for every sample with a crossing (vectorised).

    Updates ``w``, ``y_now``, ``g_now``, ``code``, ``G_cur`` and the per-sample step
    matrices ``phi_cur`` in place, touching only the rows of the samples that switch.
    """
    idx = np.flatnonzero(crossed.any(axis=1))
    start = np.zeros(idx.size)  # offset of the sub-interval start from t_prev
    w_start = w_prev[idx]
    remaining_cross = crossed[idx]
    while idx.size:
        M = _rows_M(stepper, timed_key, key_of, code, idx)
        G = G_cur[idx]
        # locate each crossing sample's earliest crossing in (start, h]
        tau, which = _locate(stepper, M, G, w_start, start, h, remaining_cross, rules, watch, tol,
                             g_end=g_now[idx])
        w_e = _matvec(stepper.propagate(M, tau - start), w_start)
        y_before = _matvec(G, w_e)
        code[idx] |= (1 << which)
        event_times[idx, which] = t_prev + tau
        G_new = _rows_G(stepper, timed_key, key_of, code, idx)
        y_after = _matvec(G_new, w_e)
        record.some(idx, t_prev + tau, y_before)
        record.some(idx, t_prev + tau, y_after)
        while True:  # another threshold already strictly met at this instant acts at once
            imm = _pending(code[idx], len(rules)) & (_event_values(y_after, watch, rules) > 0.0)
            r = np.flatnonzero(imm.any(axis=1))
            if r.size == 0:
                break
            sub, wh = idx[r], np.argmax(imm[r], axis=1)
            code[sub] |= (1 << wh)
            event_times[sub, wh] = t_prev + tau[r]
            G_new[r] = _rows_G(stepper, timed_key, key_of, code, sub)
            record.some(sub, t_prev + tau[r], y_after[r])
            y_after[r] = _matvec(G_new[r], w_e[r])
            record.some(sub, t_prev + tau[r], y_after[r])
        G_cur[idx] = G_new
        for length, phi in phi_cur.items():
            phi[idx] = _rows_phi(stepper, timed_key, key_of, code, idx, length)
        M_new = _rows_M(stepper, timed_key, key_of, code, idx)
        w_end = _matvec(stepper.propagate(M_new, h - tau), w_e)
        y_end = _matvec(G_new, w_end)
        w[idx], y_now[idx] = w_end, y_end
        g_after = _event_values(y_after, watch, rules)
        g_end = _event_values(y_end, watch, rules)
        g_now[idx] = g_end
        again = _crossings(g_after, g_end, rules, code[idx])
        more = again.any(axis=1) & (tau < h)
        idx, start, w_start, remaining_cross = idx[more], tau[more], w_e[more], again[more]


def _rows_G(stepper, timed_key, key_of, code, idx):
    out = None
    sub = code[idx]
    for c in np.unique(sub):
        _, G = stepper.matrices(key_of(timed_key, int(c)))
        out = np.empty((idx.size,) + G.shape[1:]) if out is None else out
        sel = sub == c
        out[sel] = G[idx[sel]]
    return out


def _rows_phi(stepper, timed_key, key_of, code, idx, length):
    out = None
    sub = code[idx]
    for c in np.unique(sub):
        phi = stepper.step(key_of(timed_key, int(c)), length)
        out = np.empty((idx.size,) + phi.shape[1:]) if out is None else out
        sel = sub == c
        out[sel] = phi[idx[sel]]
    return out


def _rows_M(stepper, timed_key, key_of, code, idx):
    out = None
    sub = code[idx]
    for c in np.unique(sub):
        M, _ = stepper.matrices(key_of(timed_key, int(c)))
        out = np.empty((idx.size,) + M.shape[1:]) if out is None else out
        sel = sub == c
        out[sel] = M[idx[sel]]
    return out


def _locate(stepper, M, G, w_start, start, h, crossed, rules, watch, tol, g_end=None):
    """Earliest crossing offset τ in (start, h] per row, and which rule crossed.

    Bracketed Newton iterations on g(τ) = c·Φ(τ − start) w_start − level from the
    secant guess (g_end: signed values at the end of the step, when known), falling
    back to bisection whenever a Newton step leaves the bracket.
    """
    K, k = crossed.shape
    levels = np.array([r.level for r in rules])
    best_tau = np.full(K, np.inf)
    best_j = np.zeros(K, dtype=np.int64)
    for j in range(k):
        rows = np.flatnonzero(crossed[:, j])
        if rows.size == 0:
            continue
        c = G[rows][:, watch[j], :]
        Mr, wr = M[rows], w_start[rows]
        base = start[rows]
        lo, hi = base.copy(), np.full(rows.size, h)
        g_lo = np.einsum("ni,ni->n", c, wr) - levels[j]
        sign = np.sign(g_lo)
        tau = lo + 0.5 * (hi - lo)
        if g_end is not None:
            g_hi = g_end[rows, j] * (1.0 if rules[j].above else -1.0)  # back to watched − level
            with np.errstate(divide="ignore", invalid="ignore"):
                secant = lo + (hi - lo) * g_lo / (g_lo - g_hi)
            tau = np.where(np.isfinite(secant) & (secant > lo) & (secant < hi), secant, tau)
        active = np.ones(rows.size, dtype=bool)
        for _ in range(200):
            if not active.any():
                break
            a_idx = np.flatnonzero(active)
            ws = _matvec(stepper.propagate(Mr[a_idx], tau[a_idx] - base[a_idx]), wr[a_idx])
            g = np.einsum("ni,ni->n", c[a_idx], ws) - levels[j]
            dg = np.einsum("ni,ni->n", c[a_idx], _matvec(Mr[a_idx], ws))
            same = np.sign(g) == sign[a_idx]
            lo[a_idx] = np.where(same, tau[a_idx], lo[a_idx])
            hi[a_idx] = np.where(same, hi[a_idx], tau[a_idx])
            with np.errstate(divide="ignore", invalid="ignore"):
                newton = tau[a_idx] - g / dg
            inside = np.isfinite(newton) & (newton > lo[a_idx]) & (newton < hi[a_idx])
            nxt = np.where(inside, newton, 0.5 * (lo[a_idx] + hi[a_idx]))
            done = (np.abs(nxt - tau[a_idx]) <= tol) | (hi[a_idx] - lo[a_idx] <= tol) | (g == 0)
            tau[a_idx] = np.where(done & (g == 0), tau[a_idx], nxt)
            active[a_idx[done]] = False
        tau = np.clip(tau, start[rows], h)
        better = tau < best_tau[rows]
        best_tau[rows[better]] = tau[better]
        best_j[rows[better]] = j
    return best_tau, best_j


class _Record:
    """Each sample's recorded rows, assembled in time order at the end.

    Rows every sample records at the same instant (grid instants, timed switching)
    go to shared columns; the few rows a sample records at its own instants (a
    threshold switch acting: just before and just after) go to a side buffer with
    the shared column they precede.  ``finish`` interleaves them with one masked
    copy per possible number of preceding extra rows.
    """

    def __init__(self, N: int, capacity: int, extra_capacity: int, p: int):
        self.t_common = np.empty(capacity)
        self.y = np.empty((N, p, capacity))
        self.common = 0
        self.ext_t = np.empty((N, extra_capacity))
        self.ext_y = np.empty((N, p, extra_capacity))
        self.ext_pos = np.empty((N, extra_capacity), dtype=np.int64)
        self.ext_count = np.zeros(N, dtype=np.int64)

    def all(self, t: float, y: np.ndarray) -> None:
        """One row y (N, p) at instant t for every sample."""
        self.t_common[self.common] = t
        self.y[:, :, self.common] = y
        self.common += 1

    def some(self, idx: np.ndarray, t: np.ndarray, y: np.ndarray) -> None:
        """Rows y (len(idx), p) at instants t (len(idx),) for samples idx only."""
        k = self.ext_count[idx]
        self.ext_t[idx, k] = t
        self.ext_y[idx, :, k] = y
        self.ext_pos[idx, k] = self.common
        self.ext_count[idx] += 1

    def finish(self) -> tuple[np.ndarray, np.ndarray]:
        """t (N, L) s and y (N, p, L).  A sample with fewer extra rows than another is
        padded at the end with copies of its last row (zero-length, changes no figure)."""
        C = self.common
        N, p = self.y.shape[:2]
        E = int(self.ext_count.max(initial=0))
        y_common = self.y[:, :, :C]
        if E == 0:
            return np.broadcast_to(self.t_common[:C], (N, C)), y_common
        rows = np.arange(N)
        unused = np.arange(E)[None, :] >= self.ext_count[:, None]
        pos = np.where(unused, C, self.ext_pos[:, :E])
        ext_t = np.where(unused, self.t_common[C - 1], self.ext_t[:, :E])
        ext_y = np.where(unused[:, None, :], y_common[:, :, C - 1:C], self.ext_y[:, :, :E])
        L = C + E
        dest = pos + np.arange(E)[None, :]  # final column of each extra row
        q = np.arange(L)
        before = np.zeros((N, L), dtype=np.int64)  # extra rows placed before column q
        is_extra = np.zeros((N, L), dtype=bool)
        for k in range(E):  # E is small: two per threshold switch
            before += dest[:, k:k + 1] < q[None, :]
            is_extra[rows, dest[:, k]] = True
        t = np.empty((N, L))
        y = np.empty((N, p, L))
        for r in range(E + 1):
            mask = (before[:, r:C + r] == r) & ~is_extra[:, r:C + r]
            np.copyto(t[:, r:C + r], np.broadcast_to(self.t_common[:C], (N, C)), where=mask)
            np.copyto(y[:, :, r:C + r], y_common, where=mask[:, None, :])
        for k in range(E):
            t[rows, dest[:, k]] = ext_t[:, k]
            y[rows, :, dest[:, k]] = ext_y[:, :, k]
        return t, y


def _recipe_rows(y: np.ndarray, recipe) -> list:
    """(N, p_all, L) assembled rows → one (N, L) array per recorded probe: a view of
    its row, or the product v·i for a power probe."""
    return [y[:, r[1]] if r[0] == "row" else y[:, r[1]] * y[:, r[2]] for r in recipe]
