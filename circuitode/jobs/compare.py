"""The ``compare`` command end to end: run the model, read the capture, align, measure, draw.

Files are written as they become available (comparison CSV first, then the
plot), so a failing plot never loses the numbers.
"""
from __future__ import annotations

import csv
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from ..errors import CircuitodeError
from .run import load_any

__all__ = ["CompareResult", "compare_job", "closed_at"]


@dataclass
class CompareResult:
    """Everything ``compare`` produced.

    comparison : :class:`circuitode.measured.compare.Comparison`.
    ringing : estimator name → its result (LogDecrement, SineFit, list of PencilMode).
    ringing_problems : estimator name → why it gave nothing.
    modes : the model's ConfigurationModes for the configuration in force at ``ringing_start``.
    """

    circuit: Any
    quantity: str
    unit: str
    channel: str
    capture: Any
    comparison: Any
    ringing_start: float
    ringing: dict = field(default_factory=dict)
    ringing_problems: dict = field(default_factory=dict)
    modes: Any = None
    files: dict[str, Path] = field(default_factory=dict)
    problems: list[str] = field(default_factory=list)


def closed_at(circuit, events, time: float) -> tuple[bool, ...]:
    """Switch states in force at ``time`` (s), from the initial states and the run's events."""
    names = [s.name for s in circuit.switches]
    closed = [s.initially_closed for s in circuit.switches]
    for ev in events:
        if ev.time <= time:
            closed[names.index(ev.switch)] = ev.closed
    return tuple(closed)


def _ringing_figures(t, y, start):
    from ..measured.ringing import RingingError, fit_damped_sine, log_decrement, matrix_pencil

    found, problems = {}, {}
    for name, estimate in (("log decrement", log_decrement), ("damped-sine fit", fit_damped_sine),
                           ("matrix pencil", matrix_pencil)):
        try:
            found[name] = estimate(t, y, start=start)
        except (RingingError, np.linalg.LinAlgError) as exc:
            problems[name] = str(exc)
    return found, problems


def compare_job(
    source: Any,
    *,
    measured: str | Path,
    channel: str | int,
    quantity: str,
    overrides: Mapping[str, Any] | None = None,
    shift: float | None = None,
    level: float | None = None,
    out_dir: str | Path | None = None,
    plots: bool = True,
) -> CompareResult:
    """Compare a capture's channel with the model's ``quantity`` ("voltage at link").

    shift : s added to the capture's clock (default: from a level crossing at ``level``,
    by default halfway through the model's step).  Writes comparison.csv and comparison.png.
    """
    from ..analysis.modes import circuit_modes
    from ..measured.capture import read_capture
    from ..measured.compare import compare_waveforms
    from ..measured.ringing import ringing_start
    from ..netlist.probe_words import probe_from_words
    from ..transient import simulate

    circuit = load_any(source, overrides)
    probe = probe_from_words(quantity, circuit, "--as")
    capture = read_capture(measured)
    name = capture.channel(channel)
    unit = capture.units.get(name, "")
    if unit and unit != probe.unit:
        raise CircuitodeError(f"{capture.source}: channel {name!r} is in {unit}, but {probe.label!r} is in "
                              f"{probe.unit}; choose the matching channel or quantity")
    waveforms = simulate(circuit, probes=[probe])
    y_model = waveforms[probe.label]
    comparison = compare_waveforms(waveforms.t, y_model, capture.t, capture.channels[name],
                                   shift=shift, level=level, unit=probe.unit)
    crossing = comparison.crossing if np.isfinite(comparison.crossing) else None
    start = ringing_start(comparison.t, comparison.measured, after=crossing)
    result = CompareResult(circuit, probe.label, probe.unit, name, capture, comparison, start)
    result.ringing, result.ringing_problems = _ringing_figures(comparison.t, comparison.measured, start)
    closed = closed_at(circuit, waveforms.events, start)
    try:
        result.modes = next((c for c in circuit_modes(circuit, until=float(waveforms.t[-1]))
                             if c.closed == closed), None)
    except CircuitodeError as exc:
        result.problems.append(f"modes not computed: {exc}")
    if out_dir is not None:
        out = Path(out_dir)
        out.mkdir(parents=True, exist_ok=True)
        path = out / "comparison.csv"
        with open(path, "w", newline="", encoding="utf-8") as fh:
            writer = csv.writer(fh)
            writer.writerow(["time_s", f"measured_{probe.unit}", f"model_{probe.unit}", f"residual_{probe.unit}"])
            writer.writerows(np.column_stack([comparison.t, comparison.measured, comparison.model,
                                              comparison.residual]).tolist())
        result.files["csv"] = path
        if plots:
            try:
                from ..output.compare_plots import plot_comparison

                result.files["plot"] = plot_comparison(result, out / "comparison.png")
            except Exception as exc:  # noqa: BLE001 - the CSV is already safe; say what failed
                result.problems.append(f"plot not drawn: {type(exc).__name__}: {exc}")
    return result
