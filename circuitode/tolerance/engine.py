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
shared), except a switch whose instant varies per sample (a spread on its time, a
varied closing angle): it acts at each sample's own instant, as a threshold
switch on a clock (see :mod:`.timed_switches`).  Threshold switches give each sample its own configuration and
instant (see :mod:`.thresholds`), located to :data:`EVENT_TOL_FRACTION` of
the window like the single run; every switching instant is recorded twice
(value just before and just after), as in the single run.  The output grid,
the breakpoints and the initial state follow :mod:`circuitode.transient`, so
each sample's figures equal a single run's.

Runs of equal grid steps are taken in blocks of up to
:data:`.block_stepper.MAX_BLOCK` steps
(``w_j = Φ^j w_0`` with the powers of Φ tabulated once per stretch and
configuration), so the Python work is per block, not per step; crossings are
found from a whole block's outputs at once and located for all the samples
that cross in it together.

Diodes (:mod:`.diodes`) are watched like threshold switches with hysteresis
(on: voltage through the drop; off: current through zero) and settled per
sample at each event, scheduled change and stretch start, with the single
run's rule; a diode's bits follow the threshold switches' in the code.

Samples whose values are unusable, or whose run goes non-finite, or whose
diodes cannot be settled, are marked failed with a message; the others carry on.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..checks.dc import explain_singular_dc
from ..model import Circuit, CurrentThrough, Diode, PowerIn, ThresholdRule, VoltageAcross
from ..errors import CircuitodeError, NoSteadyStateError
from ..model.source_batch import SourceBatch
from ..model import SourceBank
from ..equations.statespace import VARIABLE_FIELDS
from ..equations.statespace import StateSpaceCache, initial_state
from ..equations.entry import batch_entry
from ..transient import DEFAULT_POINTS, EVENT_TOL_FRACTION
from ..transient.window_integrals import window_marks
from ..transient.commutation import DIODE_BAND, DIODE_TIE, diode_probes
from .batch_extrema import ChunkExtrema
from .batch_integrals import ChunkIntegrals, integral_pairs
from .block_stepper import BlockStepper
from .diodes import BatchDiodes, diode_rules
from .stepping import Record, Stretch, matvec
from .thresholds import Watch, fire_at_start
from .timed_switches import Clocks

__all__ = ["BATCH_METHODS", "EVENT_TOL_FRACTION", "ChunkWaves", "output_grid", "linear_probes",
           "simulate_chunk"]

#: Extra rows first set aside per diode and sample (two per event); more are made
#: by doubling, which copies the record (a bridge: about 20 events per diode pair in
#: 100 ms, so its 80-odd extra rows fit without one).
EXTRA_ROWS_PER_DIODE = 32

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
    integrals : per probe asked for, (∫ y dt (N,), ∫ y² dt (N,)) over the window, exact
        (method "exact"; a power probe has (∫ p dt, NaN)); None with rk4.
    cumulative_integrals : end of a requirement's window (s) → the same integrals from 0 to
        that instant (a stretch bound, so exact as well); None with rk4.
    extrema : per probe asked for, (maximum, its instant, minimum, its instant) (N,) each,
        located between rows on the solution (NaN where none was), None for a power probe
        (see :mod:`.batch_extrema`).
    """

    t: np.ndarray
    signals: list
    ok: np.ndarray
    problems: dict[int, str] = field(default_factory=dict)
    event_times: np.ndarray | None = None
    integrals: list | None = None
    cumulative_integrals: dict | None = None
    extrema: list | None = None

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


def simulate_chunk(circuit: Circuit, values: dict, probes, *, method: str = "exact",
                   batch: int = 0) -> ChunkWaves:
    """Run one chunk of samples through the circuit's transient window.

    Parameters
    ----------
    circuit : the built circuit (its analysis gives window, step, initial state).
    values : {(element, field): (N,) array} per-sample element values; a source's
        level fields are given as (source, "waveform.<field>") (see source_batch).
    probes : what to record (PowerIn allowed).
    method : "exact" (batched matrix exponential) or "rk4" (batched classic RK4).
    batch : samples of the whole batch this chunk belongs to (0: the chunk alone); it
        chooses the block kernel (:func:`.kernel.block_steps`), not the results.
    """
    if method not in BATCH_METHODS:
        raise CircuitodeError(f"batch method {method!r} is not available; use one of {', '.join(BATCH_METHODS)}")
    N = _batch_size(values)
    t_grid = output_grid(circuit)
    until = float(t_grid[-1])
    slack = 1e-12 * until
    switches = circuit.switches
    clocks = Clocks(circuit, {k: v for k, v in values.items() if k[1].startswith("control.")}, N, slack)
    thr = [i for i, s in enumerate(switches) if isinstance(s.control, ThresholdRule)]
    rules = [switches[i].control for i in thr]
    dio = [i for i, s in enumerate(switches) if isinstance(s, Diode)]
    rows, recipe = linear_probes(tuple(probes))
    all_rows = list(rows)
    for p in [r.probe for r in rules] + diode_probes(circuit):  # watched quantities, sharing
        if p not in all_rows:                                    # a recorded row where they can
            all_rows.append(p)
    watched_rows = [all_rows.index(r.probe) for r in rules]
    # switches with per-sample instants: thresholds on the clock rows after every probe's row
    thr += clocks.switches
    watched_rows += [len(all_rows) + j for j in range(clocks.k)]
    rules += clocks.rules
    p_all = len(all_rows) + clocks.k
    element_values = {k: v for k, v in values.items() if not k[1].startswith(("waveform.", "control."))}
    source_values = {k: v for k, v in values.items() if k[1].startswith("waveform.")}
    cache = StateSpaceCache(circuit, all_rows, _with_batch_axis(circuit, element_values, N))
    nominal_bank = SourceBank.of(circuit)
    bank = SourceBatch(nominal_bank, source_values, size=N) if source_values else nominal_bank
    m = nominal_bank.m
    k_thr = len(rules)
    watched = rules + diode_rules(circuit)  # a diode is watched as a switch with hysteresis
    ok = np.ones(N, dtype=bool)
    watch = Watch(watched, watched_rows
                  + [all_rows.index(VoltageAcross(switches[i].name)) for i in dio],
                  EVENT_TOL_FRACTION * until, np.full((N, len(watched)), np.nan),
                  back_rows=watched_rows
                  + [all_rows.index(CurrentThrough(switches[i].name)) for i in dio],
                  settled=np.arange(len(watched)) >= k_thr,
                  margin=np.zeros((N, len(watched))) if dio else None, ok=ok)
    problems: dict[int, str] = {}
    # (squares of the recorded rows only: a watched diode's voltage and current, and a clock, need none)
    tally = ChunkIntegrals(N, p_all, integral_pairs(recipe, len(rows))) \
        if method == "exact" else None
    diodes = BatchDiodes(circuit, cache, None, k_thr, until, N)
    located = ChunkExtrema(N, [r[1] for r in recipe if r[0] == "row"])

    def settle(idx, w_rows, t, H, F) -> np.ndarray:
        """Settle the diodes of samples idx at instants t (their inputs from the stretch's
        generator H, F); returns the bool of samples whose diodes changed."""
        if not diodes.active:
            return np.zeros(np.size(idx), dtype=bool)
        z = w_rows[:, n:]
        u = z @ H.T if H.size else np.zeros((z.shape[0], 0))
        udot = z @ (H @ F).T if H.size else u
        changed = diodes.settle(idx, w_rows[:, :n], u, udot, t, code, ok, problems)
        watch.margin[idx, k_thr:] = diodes.band[idx, None]
        return changed

    def enter_at(idx, w_rows, t):  # a threshold switch acted or a diode crossed, samples idx
        settle(idx, w_rows, t, stretch.H, stretch.F)
        return _enter_batch(circuit, cache, key_for(tuple(timed)), code, w_rows[:, :n], t, ok, problems,
                            "a switch or diode acts", idx, atol=_tie(diodes))
    watch.enter = enter_at

    def note(ss) -> None:
        _collect(ss, ok, problems)

    def key_for(timed: tuple):
        def key(code: int) -> tuple:
            closed = list(timed)
            for j, i in enumerate(thr):
                closed[i] = rules[j].closes if (code >> j) & 1 else not rules[j].closes
            for j, i in enumerate(dio):  # a diode's bit: conducting
                closed[i] = bool((code >> (k_thr + j)) & 1)
            return tuple(closed)
        return key
    diodes.key = lambda c: key_for(tuple(timed))(c)

    # stretches shared by every sample (as the single run: source corners, scheduled
    # switch changes, the end)
    changes = sorted(
        ((max(float(t), 0.0), i, bool(st)) for i, s in enumerate(switches) if i not in clocks.switches
         for t, st in s.scheduled_changes(-np.finfo(float).tiny, until)),
        key=lambda c: (c[0], c[1]))
    corners = bank.breakpoints(0.0, until) if m else np.zeros(0)
    marks = window_marks(circuit.requirements, until)  # requirement windows end at stretch bounds
    bounds = np.unique(np.concatenate([[0.0], corners, [c[0] for c in changes if c[0] > 0], marks, [until]]))
    cumulative = {}

    timed = [bool(s.initially_closed) for s in switches]
    code = np.zeros(N, dtype=np.int64)  # bit j: threshold switch j has acted (then diodes: conducting)
    for j, i in enumerate(dio):
        if switches[i].initially_closed:
            code |= 1 << (k_thr + j)
    ss0 = cache.get(key_for(tuple(timed))(0))
    note(ss0)
    mode = circuit.analysis.initial if circuit.analysis is not None else "given"
    u_before = bank.values(-np.finfo(float).tiny) if m else np.zeros(0)  # (m,) or (N, m)
    try:
        x = np.asarray(initial_state(circuit, mode, ss0, np.broadcast_to(u_before, (N, m))), dtype=float)
    except NoSteadyStateError as exc:  # worded by the checks: the loops and cut sets at fault
        raise exc.explained(explain_singular_dc(circuit, exc.closed)) from None
    x = np.where(ok[:, None], x, 0.0)
    n = x.shape[1]
    x = _enter_batch(circuit, cache, key_for(tuple(timed)), code, x, 0.0, ok, problems,
                     f"the {mode} initial state")

    # each switching instant and source corner adds two rows (and stands for a grid
    # instant it falls on)
    # (room for a few commutations of each diode: the record grows by doubling beyond it)
    record = Record(N, t_grid.size + 2 * len(changes) + 2 * corners.size + marks.size,
                    2 * len(rules) + EXTRA_ROWS_PER_DIODE * len(dio), p_all, batch)
    y_end_before = None
    queue = list(changes)
    for seg, (a, b) in enumerate(zip(bounds[:-1], bounds[1:])):
        a, b = float(a), float(b)
        last = seg == bounds.size - 2
        if m:
            gen = bank.generators(a, b)
            F = np.atleast_2d(np.asarray(gen.F, dtype=float))
            z0 = np.asarray(gen.z0, dtype=float)  # (q,), or (N, q) when source levels vary
            H = np.asarray(gen.H, dtype=float).reshape(m, z0.shape[-1])
        else:
            F, z0, H = np.zeros((0, 0)), np.zeros(0), np.zeros((0, 0))
        F, z0, H, clock_rows = clocks.extend(F, z0, H, a, N)
        w = np.concatenate([x, np.broadcast_to(z0, (N, z0.shape[-1]))], axis=1)
        # scheduled changes due now: rows just before (old configuration) and after
        due = []
        while queue and queue[0][0] <= a + slack:
            due.append(queue.pop(0))
        due = [(i, st) for _, i, st in due if timed[i] != st]
        if due:
            if y_end_before is None:  # a change at t = 0: the old configuration at the start
                old = Stretch(method, cache, H, F, key_for(tuple(timed)), note, clock_rows)
                y_end_before = matvec(old.G(code), w)
            record.all(a, y_end_before)
            for i, st in due:
                timed[i] = st
            settle(np.arange(N), w, a, H, F)  # the diodes settle with the scheduled changes
            w[:, :n] = _enter_batch(circuit, cache, key_for(tuple(timed)), code, w[:, :n], a, ok, problems,
                                    " and ".join(f"{switches[i].name} {'closes' if st else 'opens'}"
                                                 for i, st in due) + " on schedule", atol=_tie(diodes))
        # as the single run at each segment start, the diodes settle (rows before and after
        # for the samples whose diodes change)
        moved = np.zeros(N, dtype=bool)
        if diodes.active and not due:
            code_before, w_before = code.copy(), w.copy()
            moved = settle(np.arange(N), w, a, H, F)
            if moved.any():
                idx = np.flatnonzero(moved)
                w[idx, :n] = _enter_batch(circuit, cache, key_for(tuple(timed)), code, w[idx, :n], a, ok,
                                          problems, "the diodes settle", idx, atol=_tie(diodes))
        stretch = Stretch(method, cache, H, F, key_for(tuple(timed)), note, clock_rows)
        G_cur = stretch.G(code)
        y_now = matvec(G_cur, w)
        if due:
            record.all(a, y_now)
        if moved.any():
            idx = np.flatnonzero(moved)
            record.some(idx, np.full(idx.size, a), matvec(stretch.G(code_before, idx), w_before[idx]))
            record.some(idx, np.full(idx.size, a), y_now[idx])
        corner = not due and a > 0 and corners.size and np.min(np.abs(corners - a)) <= slack
        if corner:  # a source breakpoint: the rows just before and after, as the single run
            record.all(a, y_end_before)
            record.all(a, y_now)
        fire_at_start(watch, stretch, a, w, y_now, code, ok, G_cur, record)
        mark = marks.size and np.min(np.abs(marks - a)) <= slack
        if mark and tally is not None:
            cumulative[float(marks[np.argmin(np.abs(marks - a))])] = tally.snapshot(recipe)
        if not due and not corner and (mark or np.any(np.abs(t_grid - a) <= slack)):
            # (a sample that switched just now repeats its "after" row here: an interval
            # of zero length that changes no figure)
            record.all(a, y_now)
        g_prev = watch.values(y_now, code)

        upper = (t_grid <= b + slack) if last else (t_grid < b - slack)
        slots = np.flatnonzero((t_grid > a + slack) & upper)
        stops = t_grid[slots]
        if not last or stops.size == 0 or stops[-1] < b - slack:
            stops, slots = np.append(stops, b), np.append(slots, -1)
        lengths = np.diff(np.concatenate([[a], stops]))
        stepper = BlockStepper(stretch, watch, code, ok, G_cur, record, tally, located, batch)
        located.begin(stretch)
        w, y_now, g_prev = stepper.run(w, g_prev, a, stops, lengths, slots >= 0)
        located.finish()
        x = w[:, :n]
        y_end_before = y_now
    t_all, y_all = record.finish()
    bad = ~np.all(np.isfinite(y_all), axis=(1, 2))  # (N,)
    for i in np.flatnonzero(bad & ok):
        problems[int(i)] = "the run produced non-finite values"
    ok &= ~bad
    peaks = located.located()
    return ChunkWaves(t_all, _recipe_rows(y_all, recipe), ok, problems, watch.event_times[:, :k_thr],
                      None if tally is None else tally.by_recipe(recipe),
                      cumulative_integrals=None if tally is None else cumulative,
                      extrema=[peaks.get(r[1]) if r[0] == "row" else None for r in recipe])


# --------------------------------------------------------------------------
# helpers
# --------------------------------------------------------------------------


def _with_batch_axis(circuit: Circuit, values: dict, N: int) -> dict:
    """Element values for assembly, always with the batch axis N: when only source
    levels vary, one element value is given per sample at its nominal value."""
    if values:
        return values
    for e in circuit.elements:
        for field_ in VARIABLE_FIELDS.get(type(e), ()):
            if getattr(e, field_) is not None:
                return {(e.name, field_): np.full(N, float(getattr(e, field_)))}
    raise CircuitodeError("a batch needs at least one resistor, capacitor, inductor or switch resistance")


def _batch_size(values: dict) -> int:
    sizes = {np.asarray(v).shape[0] for v in values.values()}
    if len(sizes) != 1:
        raise CircuitodeError("a chunk needs per-sample values of one common length")
    return sizes.pop()


def _enter_batch(circuit, cache, key, code, x, time, ok, problems, cause, samples=None,
                 atol=None) -> np.ndarray:
    """States x entering their configurations at ``time`` (s, scalar or one per row), each
    sample in the configuration of its code, put on the constraint; a sample whose state
    would need an impulse (see equations.entry) is marked failed with the single run's
    words.  samples : the sample index of each row of x (all samples when None).
    atol : (N,) V or A per chunk sample, the diodes' tie band (see equations.entry), or None."""
    x = np.array(x, dtype=float)
    samples = np.arange(code.size) if samples is None else np.asarray(samples)
    times = np.broadcast_to(np.asarray(time, dtype=float), (samples.size,))
    sub = code[samples]
    for c in np.unique(sub):
        ss = cache.get(key(int(c)))
        if ss.basis is None:
            continue
        rows = np.flatnonzero(sub == c)
        projected, bad, messages = batch_entry(circuit, ss, x[rows], times[rows], cause,
                                               0.0 if atol is None else atol[samples[rows]])
        x[rows] = projected
        for j, message in messages.items():
            i = int(samples[rows[j]])
            if ok[i]:
                problems[i] = message
        ok[samples[rows[bad]]] = False
    return x


def _tie(diodes: BatchDiodes):
    """(N,) the band within which a diode's entry counts as on its constraint, or None."""
    return diodes.band * (DIODE_TIE / DIODE_BAND) if diodes.active else None


def _collect(ss, ok: np.ndarray, problems: dict) -> None:
    """Note the samples a StateSpace found unusable (their message, ok → False)."""
    if ss.sample_ok is None:
        return
    for i, msg in (ss.sample_problems or {}).items():
        if ok[i]:
            problems[int(i)] = msg
    ok &= ss.sample_ok


def _recipe_rows(y: np.ndarray, recipe) -> list:
    """(N, p_all, L) assembled rows → one contiguous (N, L) array per recorded probe: its
    row (a view when the record holds it whole, see :class:`.stepping.Record`, else a
    copy), or the product v·i for a power probe.  (Every figure reads each sample's row
    whole; numpy's argmax, argmin and reductions copy a strided row on every call, about
    8× the time of reading a contiguous one.)"""
    return [np.ascontiguousarray(y[:, r[1]]) if r[0] == "row" else y[:, r[1]] * y[:, r[2]] for r in recipe]
