"""Bounds on the work a circuit asks for, checked before any of it starts.

A few words in a netlist can ask for terabytes (``points 1e12``), millions of
switching events (a switch toggling every nanosecond) or a dense matrix of
tens of gigabytes (a 20,000-section ladder).  :func:`check_run_bounds` and
:func:`check_batch_bounds` estimate the work from the circuit alone and
refuse it with the number, the limit and how to raise it.  ``--allow-large``
lifts the fixed limits; the checks against the machine's free memory and disk
stay, since no flag makes memory appear.

Every estimate here is arithmetic on counts: nothing is allocated or stepped.
"""
from __future__ import annotations

import math
import os
import shutil
from dataclasses import dataclass
from pathlib import Path

from ..errors import CircuitodeError
from .. import model as src
from ..model import Circuit, PeriodicSchedule, TimedSchedule
from ..netlist.limits import LARGE_FACTOR, large_allowed

__all__ = ["WorkLimits", "LIMITS", "check_run_bounds", "check_batch_bounds", "expected_events",
           "output_points", "free_memory", "free_disk", "check_event_spacing", "BoundError"]

#: Bytes one CSV number takes with its separator (``%.12g`` and a comma), on average at most.
CSV_BYTES_PER_NUMBER = 20
#: Copies of the output arrays a run holds at once (solver output, probes, figures).
WORKING_COPIES = 4
#: Shares of the free memory and of the free disk a job may plan to use.
MEMORY_SHARE = 0.8
DISK_SHARE = 0.9


@dataclass(frozen=True)
class WorkLimits:
    """Fixed limits (multiplied by :data:`LARGE_FACTOR` under ``--allow-large``).

    output_points : points on the output grid of one run.
    events : switching events and source corners in one window.
    periods : sine periods in the window for a stepping integrator (each needs several steps).
    states : states of one circuit (the state matrix is dense, states² × 8 bytes).
    samples : samples in one batch.
    chunk_bytes : memory of one batch chunk's state matrices (samples × states² × 8 bytes × 4).
    """

    output_points: int = 10_000_000
    events: int = 100_000
    periods: int = 1_000_000
    states: int = 4_000
    samples: int = 10_000_000
    chunk_bytes: int = 2 * 2**30


LIMITS = WorkLimits()


class BoundError(CircuitodeError):
    """The work asked for exceeds a limit (exit 2: the input asks too much)."""


def _limit(value: int) -> int:
    return value * LARGE_FACTOR if large_allowed() else value


def _refuse(what: str, number: float, limit: float, advice: str, raisable: bool = True) -> BoundError:
    raise_words = (f"; if you really mean it, rerun with --allow-large (multiplies the limit by {LARGE_FACTOR})"
                   if raisable and not large_allowed() else "")
    return BoundError(f"error: {what.format(n=f'{number:,.0f}')}; the limit is {limit:,.0f}\n"
                      f"  hint: {advice}{raise_words}")


def free_memory() -> int | None:
    """Bytes of memory available to a new allocation (MemAvailable on Linux), or None."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        return os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (ValueError, OSError, AttributeError):
        return None


def free_disk(folder: str | os.PathLike) -> int | None:
    """Free bytes on the file system that holds ``folder`` (or its nearest existing parent)."""
    p = Path(folder).absolute()
    while not p.exists() and p != p.parent:
        p = p.parent
    try:
        return shutil.disk_usage(p).free
    except OSError:
        return None


def output_points(circuit: Circuit, step: float | None = None, until: float | None = None,
                  points: float | None = None) -> float:
    """Points on the output grid (a float, so 1e12 does not overflow anything)."""
    a = circuit.analysis
    until = until if until is not None else (a.until if a is not None else None)
    step = step if step is not None else (a.step if a is not None else None)
    points = points if points is not None else (a.points if a is not None else None)
    if until is None or not until > 0:
        return 0.0
    if step is not None and step > 0:
        return math.floor(until / step) + 2.0
    return float(points) if points is not None else 2000.0


def _waveform_events(waveform, until: float) -> float:
    if isinstance(waveform, src.PulseTrain):
        if not waveform.period > 0 or until <= waveform.delay:
            return 0.0
        periods = (until - waveform.delay) / waveform.period + 1
        if waveform.count is not None:
            periods = min(periods, waveform.count)
        return 4.0 * periods
    if isinstance(waveform, src.PiecewiseLinear):
        return float(len(waveform.times))
    return 2.0


def expected_events(circuit: Circuit, until: float) -> float:
    """Switch moves and source corners in [0, until] (each starts a new segment)."""
    total = 0.0
    for sw in circuit.switches:
        c = sw.control
        if isinstance(c, TimedSchedule):
            total += len(c.changes)
        elif isinstance(c, PeriodicSchedule):
            total += 2.0 * max(until - c.start, 0.0) / c.period + 2 if c.period > 0 else 0.0
        else:
            total += 1
    for source in circuit.sources:
        total += _waveform_events(source.waveform, until)
    return total


def _window(circuit: Circuit, until: float | None) -> float | None:
    if until is not None:
        return float(until)
    return circuit.analysis.until if circuit.analysis is not None else None


#: Integrators that step through every period of a sine (all but the exact one).
STEPPING_METHODS = ("rk4", "rk45", "dop853", "radau", "bdf")


def sine_periods(circuit: Circuit, until: float) -> float:
    """Periods of every sine source within [0, until], summed."""
    total = 0.0
    for source in circuit.sources:
        w = source.waveform
        if isinstance(w, src.Sine) and w.amplitude != 0:
            total += abs(w.frequency) * max(until - w.delay, 0.0)
    return total


def check_run_bounds(circuit: Circuit, *, step: float | None = None, until: float | None = None,
                     out_dir: str | os.PathLike | None = None, method: str | None = None) -> None:
    """Refuse a single run whose output, events or matrices would exceed a limit or the machine.

    Raises
    ------
    BoundError : with the number, the limit and how to raise it.
    """
    window = _window(circuit, until)
    if window is None or not window > 0:
        return  # the driver reports a missing or wrong window in its own words
    a = circuit.analysis
    if step is None and a is not None and a.step is not None and not 0 < a.step <= window:
        from ..errors import NetlistError

        raise NetlistError(f"the step ({a.step:g} s) must be positive and no longer than the window "
                           f"({window:g} s)", a.where, "write a shorter step, e.g. step "
                           f"{window / 1000:g} s, or a longer 'until'")
    points = output_points(circuit, step, until)
    columns = 1 + len(circuit.records) + len(circuit.state_names)
    if points > _limit(LIMITS.output_points):
        raise _refuse("the output grid would have {n} points", points, _limit(LIMITS.output_points),
                      "use a larger step or fewer points")
    memory = points * columns * 8 * WORKING_COPIES
    available = free_memory()
    if available is not None and memory > MEMORY_SHARE * available:
        raise _refuse("the run would hold about {n} bytes of waveforms", memory, MEMORY_SHARE * available,
                      "use a larger step, fewer points or record fewer quantities (the limit is 80 % of "
                      "the free memory)", raisable=False)
    if out_dir is not None:
        csv_bytes = points * (1 + len(circuit.records)) * CSV_BYTES_PER_NUMBER
        disk = free_disk(out_dir)
        if disk is not None and csv_bytes > DISK_SHARE * disk:
            raise _refuse(f"waveforms.csv would take about {{n}} bytes in {out_dir}", csv_bytes,
                          DISK_SHARE * disk, "free disk space, choose another --out folder, use a larger step or "
                          "record fewer quantities (the limit is 90 % of the free disk)", raisable=False)
    events = expected_events(circuit, window)
    if events > _limit(LIMITS.events):
        raise _refuse("the window would hold {n} switching events and source corners", events,
                      _limit(LIMITS.events), "shorten the window (--until) or slow the switching")
    method = (method or (circuit.analysis.method if circuit.analysis is not None else "auto") or "").lower()
    periods = sine_periods(circuit, window)
    if method in STEPPING_METHODS and periods > _limit(LIMITS.periods):
        raise _refuse(f"the sine sources pass {{n}} periods in the window, each stepped by {method}", periods,
                      _limit(LIMITS.periods), "use method exact (it needs no steps per period) or a shorter window")
    _check_states(circuit)
    check_event_spacing(circuit, window)


def _check_states(circuit: Circuit) -> int:
    n = len(circuit.state_names)
    if n > _limit(LIMITS.states):
        raise _refuse(f"the circuit has {{n}} states (a dense {n:,}×{n:,} matrix of "
                      f"{n * n * 8 / 2**30:.1f} GiB)", n, _limit(LIMITS.states),
                      "model the ladder or cable with fewer sections")
    return n


def check_batch_bounds(circuit: Circuit, samples: int, chunk_size: int | None, parameters: int,
                       figures: int, out_dir: str | os.PathLike | None = None, keep_waveforms: int = 0,
                       waveform_points: int = 2000) -> None:
    """Refuse a batch whose sample table, chunk matrices or files would exceed a limit or the machine.

    samples : N.  chunk_size : samples per chunk (None: chosen later, at most 4096).
    parameters, figures : columns of the sample table and of the figure table.
    out_dir, keep_waveforms, waveform_points : where samples.csv and the kept waveform
    CSVs (about ``waveform_points`` rows each) go, for the disk check.
    """
    if out_dir is not None:
        kept = min(int(keep_waveforms), int(samples))
        csv_bytes = (samples * (3 + parameters + figures) * 25
                     + kept * waveform_points * (1 + len(circuit.records)) * CSV_BYTES_PER_NUMBER)
        disk = free_disk(out_dir)
        if disk is not None and csv_bytes > DISK_SHARE * disk:
            raise _refuse(f"samples.csv and the kept waveforms would take about {{n}} bytes in {out_dir}",
                          csv_bytes, DISK_SHARE * disk, "free disk space, choose another --out folder, or use "
                          "fewer samples or a smaller --keep-waveforms (the limit is 90 % of the free disk)",
                          raisable=False)
    if samples > _limit(LIMITS.samples):
        raise _refuse("the batch asks for {n} samples", samples, _limit(LIMITS.samples),
                      "use fewer samples (the yield's interval shrinks only as 1/√N)")
    table = samples * (parameters + figures + 2) * 8 * 3
    available = free_memory()
    if available is not None and table > MEMORY_SHARE * available:
        raise _refuse("the sample and figure tables would take about {n} bytes", table, MEMORY_SHARE * available,
                      "use fewer samples (the limit is 80 % of the free memory)", raisable=False)
    n = _check_states(circuit)
    chunk = min(samples, chunk_size or 4096)
    per_chunk = chunk * n * n * 8 * 4
    if per_chunk > _limit(LIMITS.chunk_bytes):
        raise _refuse(f"{chunk:,} samples × {n:,}² states per chunk would take {{n}} bytes", per_chunk,
                      _limit(LIMITS.chunk_bytes), "give a smaller --chunk")


#: Events closer than this fraction of the window cannot be told apart by the driver.
EVENT_SEPARATION = 1e-12


def check_event_spacing(circuit: Circuit, until: float | None = None) -> None:
    """Refuse switch moves and source corners that lie within 10⁻¹² of the window of each
    other or of t = 0 (the driver could not split the window between them).

    Call after :func:`check_run_bounds`, which bounds how many there are.

    Raises
    ------
    BoundError : naming the element, located at its line.
    """
    import numpy as np

    window = _window(circuit, until)
    if window is None or not window > 0:
        return
    times, owners = [0.0], [None]
    for sw in circuit.switches:
        for t, _ in sw.scheduled_changes(-np.finfo(float).tiny, window):
            times.append(float(t))
            owners.append(sw)
    for source in circuit.sources:
        try:
            corners = source.waveform.breakpoints(0.0, window)
        except (ValueError, ArithmeticError):
            continue
        times.extend(float(t) for t in corners)
        owners.extend([source] * len(corners))
    t = np.asarray(times)
    order = np.argsort(t, kind="stable")
    gaps = np.diff(t[order])
    slack = EVENT_SEPARATION * window
    close = np.flatnonzero((gaps > 0) & (gaps <= slack))
    if close.size:
        k = int(close[0])
        a, b = order[k], order[k + 1]
        owner = owners[b] if owners[b] is not None else owners[a]
        other = "t = 0" if owners[a] is None else f"{t[a]:.17g} s"
        from ..errors import NetlistError

        raise NetlistError(
            f"{owner.name} acts at {t[b]:.17g} s, only {gaps[k]:.3g} s after {other}; events closer than "
            f"{EVENT_SEPARATION:g} of the window ({slack:.3g} s) cannot be told apart",
            owner.where, "put the two moments at the same instant, or further apart")
