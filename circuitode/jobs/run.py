"""The main job, end to end: a netlist in, a run folder and a verdict out.

``run_job`` chains the stages (load → simulate → measure → limits → modes →
files) and is what ``circuitode run`` calls; a notebook user gets the same
result object.  Files are written in the order they become available
(waveforms CSV first), so a failure late in the chain never loses what was
already computed.  The folder is built as a fresh sibling and swapped in when
complete (:class:`~circuitode.output.atomic.StagedFolder`): it holds one complete run or the
previous one, never a mix; a run that fails after its waveforms were written
leaves them in ``<out>-incomplete``.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping, Sequence

from ..model import Circuit
from ..errors import CircuitodeError, environment_fault
from ..checks.bounds import check_run_bounds
from ..transient.sparse_driver import SPARSE_STATES
from ..output.atomic import StagedFolder

__all__ = ["JobResult", "RUN_FILES", "default_out_dir", "load_any", "run_job"]

#: What a run folder holds; a folder holding anything else is never replaced.
RUN_FILES = frozenset({"waveforms.csv", "summary.json", "waveforms.png"})


@dataclass
class JobResult:
    """Everything one run produced.

    exit_code : 0 all limits met, 1 a limit failed.
    files : kind → path of every file written.
    problems : what went wrong after the waveforms were safe (e.g. a plot failed).
    replaced : the folder held an earlier run, which this one replaced whole.
    netlist_sha256 : SHA-256 of the netlist text run (None for a Circuit built in Python).
    command : the command line that ran it (None from the API).  method_asked : the method
    requested (``--method`` or the netlist's), before ``auto`` chose one.
    """

    circuit: Circuit
    waveforms: Any
    figures: dict
    limits: list
    modes: list
    files: dict[str, Path] = field(default_factory=dict)
    problems: list[str] = field(default_factory=list)
    replaced: bool = False
    netlist_sha256: str | None = None
    command: tuple[str, ...] | None = None
    method_asked: str | None = None

    @property
    def exit_code(self) -> int:
        return 0 if all(r.passed for r in self.limits) else 1

    def __repr__(self) -> str:
        from ..output.html import job_repr

        return job_repr(self)

    def _repr_html_(self) -> str:
        from ..output.html import job_html

        return job_html(self)


def load_any(source: Any, overrides: Mapping[str, Any] | None = None) -> Circuit:
    """A Circuit from a Circuit, a path to a ``.cnet`` file, or netlist text."""
    from ..netlist import load, loads

    if isinstance(source, Circuit):
        return source
    if isinstance(source, Path) or (isinstance(source, str) and "\n" not in source and source.endswith(".cnet")):
        return load(source, overrides=overrides)
    if isinstance(source, str):
        return loads(source, overrides=overrides)
    raise TypeError(f"expected a Circuit, a .cnet path or netlist text, got {type(source).__name__}")


def default_out_dir(netlist_path: str | Path, suffix: str = "results") -> Path:
    """``<folder of the netlist>/<netlist stem>-<suffix>``."""
    p = Path(netlist_path)
    return p.with_name(f"{p.stem}-{suffix}")


def run_job(
    source: Any,
    *,
    out_dir: str | Path | None = None,
    overrides: Mapping[str, Any] | None = None,
    method: str | None = None,
    step: float | None = None,
    until: float | None = None,
    plots: bool = True,
    with_modes: bool = True,
    running: tuple[str, ...] = (),
    insist: bool = False,
    command: Sequence[str] | None = None,
) -> JobResult:
    """Simulate a netlist, measure it, check its limits and write its run folder.

    Parameters
    ----------
    source : Circuit, ``.cnet`` path or netlist text.
    out_dir : folder for waveforms.csv, summary.json and waveforms.png; None writes nothing.
    overrides : parameter values replacing those of the netlist (name → SI float or text like "47 Ω").
    method, step (s), until (s) : override the netlist's transient statement.
    plots : draw the PNG.
    with_modes : include the modal damping table of every reachable configuration.
    running : recorded currents (powers) whose running I²t (energy) the plot also draws; those with an
        I²t or energy limit are drawn anyway.
    insist : run rk45/dop853 even when the circuit is too stiff for them.
    command : the command line, recorded in summary.json (the CLI passes its argv).

    Raises
    ------
    CircuitodeError subclasses for bad input (exit 2) or numerical failure (exit 3).
    """
    from ..output.report import write_summary_json
    from ..transient import simulate

    circuit = load_any(source, overrides)
    check_run_bounds(circuit, step=step, until=until, out_dir=out_dir, method=method)  # before any work starts
    trace = {"netlist_sha256": _netlist_digest(source, circuit),
             "command": tuple(command) if command is not None else None,
             "method_asked": method or (circuit.analysis.method if circuit.analysis else None)}
    if out_dir is None:
        result = JobResult(circuit, simulate(circuit, method=method, step=step, until=until, insist=insist),
                           {}, [], [], **trace)
        _measure(result, with_modes)
        return result
    out = Path(out_dir)
    # the folder is built beside its place and swapped in whole: a reader finds the
    # previous complete run or this one, never a mix (output/atomic.py); it is made
    # first so a read-only or missing place is reported before the work starts
    with StagedFolder(out, RUN_FILES) as stage:
        waveforms = simulate(circuit, method=method, step=step, until=until, insist=insist)
        result = JobResult(circuit=circuit, waveforms=waveforms, figures={}, limits=[], modes=[], **trace)
        try:
            waveforms.to_csv(stage.path / "waveforms.csv")
        except OSError as exc:
            raise environment_fault(exc, f"write the waveforms into {out}") from None
        stage.keep_on_failure()  # from here on the waveforms are never lost
        result.files["waveforms"] = out / "waveforms.csv"
        _measure(result, with_modes)
        if plots:
            try:
                from ..output.plots import plot_waveforms

                plot_waveforms(waveforms, stage.path / "waveforms.png", title=circuit.title,
                               limits=result.limits, running=running)
                result.files["plot"] = out / "waveforms.png"
            except Exception as exc:  # noqa: BLE001 - the CSV is already safe; say what failed
                result.problems.append(f"plot not drawn: {type(exc).__name__}: {exc}")
        result.files["summary"] = out / "summary.json"
        try:
            write_summary_json(stage.path / "summary.json", summary_of(result))
        except OSError as exc:
            raise environment_fault(exc, f"write the summary into {out}") from None
        result.replaced = _holds_a_run(out)
        stage.publish()
    _remove_stale_incomplete(out, result)
    return result


def _holds_a_run(folder: Path) -> bool:
    """Whether ``folder`` holds files of an earlier run (which the swap replaces whole)."""
    try:
        return folder.is_dir() and any(p.name in RUN_FILES for p in folder.iterdir())
    except OSError:
        return False


def _remove_stale_incomplete(out: Path, result: JobResult) -> None:
    """A complete run supersedes ``<out>-incomplete`` left by an earlier failed one: remove it
    when it holds only run files (a folder with anything else is left alone and named)."""
    import shutil

    kept = out.with_name(out.name + "-incomplete")
    try:
        if not kept.is_dir():
            return
        if all(p.name in RUN_FILES for p in kept.iterdir()):
            shutil.rmtree(kept)
        else:
            result.problems.append(f"{kept} (left by an earlier failed run) holds other files; not removed")
    except OSError as exc:
        result.problems.append(f"{kept} (left by an earlier failed run) could not be removed: {exc.strerror}")


def _netlist_digest(source: Any, circuit: Circuit) -> str | None:
    """SHA-256 (hex) of the netlist text: the file given (or the Circuit's source file), or the text.
    Included files are not part of it.  None for a Circuit built in Python."""
    import hashlib

    if isinstance(source, str) and "\n" in source:
        data = source.encode("utf-8")
    else:
        path = source if not isinstance(source, Circuit) else circuit.source_file
        if path is None or not Path(path).is_file():
            return None
        try:
            data = Path(path).read_bytes()
        except OSError:
            return None
    return hashlib.sha256(data).hexdigest()


def _measure(result: JobResult, with_modes: bool) -> None:
    """Figures, limit verdicts and (optionally) the mode table of a finished run."""
    from ..analysis.limits import check_requirements
    from ..analysis.measure import summarise

    waveforms = result.waveforms
    result.figures = summarise(waveforms)
    result.limits = check_requirements(result.circuit.requirements, waveforms)
    n_states = len(result.circuit.state_names)
    if with_modes:
        try:
            from ..analysis.modes import circuit_modes

            result.modes = circuit_modes(result.circuit, until=float(waveforms.t[-1]))
        except CircuitodeError as exc:  # a mode table is a bonus; never lose the run for it
            result.problems.append(f"modes not computed: {exc}")
        if result.modes and n_states > SPARSE_STATES:  # the dense table is an O(n³) eig
            result.problems.append(
                f"modes: {n_states} states is above {SPARSE_STATES}, so the table lists only the "
                "slowest and the least damped modes (sparse shift-invert), not all of them")


def summary_of(result: JobResult) -> dict[str, Any]:
    """The JSON summary body of a run (numbers in SI, units beside them)."""
    from ..analysis.modes import mode_rows
    from ..analysis.resolution import resolution_warnings
    from ..analysis.idle_switches import idle_switches
    from ..output.report import idle_words, requirement_words

    w, circuit = result.waveforms, result.circuit
    return {
        "circuit": circuit.title,
        "netlist": result.circuit.source_file,
        "netlist_sha256": result.netlist_sha256,
        "command": list(result.command) if result.command is not None else None,
        "parameters": {
            name: {"value": float(value), "unit": circuit.parameter_units.get(name)}
            for name, value in circuit.parameters.items()
        },
        "solver": {"method": w.method, "asked": result.method_asked, "reason": w.method_reason,
                   "counters": dict(w.counters)},
        "window_s": [float(w.t[0]), float(w.t[-1])],
        "events": [
            {"time_s": ev.time, "switch": ev.switch, "closed": ev.closed, "reason": ev.reason} for ev in w.events
        ],
        "never_acted": [
            {"switch": sw.switch, "waited_to": "close" if sw.closes else "open", "quantity": sw.quantity,
             "threshold": sw.level, "extreme": sw.extreme, "unit": sw.unit, "words": idle_words(sw)}
            for sw in idle_switches(circuit, w)
        ],
        "figures": {
            label: {name: {"value": value, "unit": unit} for name, (value, unit) in row.items()}
            for label, row in result.figures.items()
        },
        "limits": [
            {
                "requirement": requirement_words(r.requirement, r.unit),
                "figure": r.requirement.figure,
                "quantity": r.requirement.probe.label,
                "comparison": r.requirement.comparison,
                "limit": r.requirement.limit,
                "value": r.value,
                "unit": r.unit,
                "passed": r.passed,
                "margin": r.margin,
            }
            for r in result.limits
        ],
        "all_limits_met": all(r.passed for r in result.limits),
        "modes": [
            {
                "configuration": cfg.description,
                "first_time_s": cfg.first_time,
                "cause": cfg.cause,
                "modes": mode_rows(cfg.modes),
            }
            for cfg in result.modes
        ],
        "warnings": list(w.warnings) + resolution_warnings(w),
        "files": {k: str(v) for k, v in result.files.items()},
        "problems": list(result.problems),
    }
