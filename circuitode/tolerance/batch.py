"""A whole tolerance batch: sample, run chunks (anywhere), store, reduce, report.

:func:`run_batch` is the public entry (the text the command line prints is in
:mod:`.summary`).  Each chunk is an independent task (:func:`run_chunk`,
picklable) returning figures per sample; a chunk whose run raises records the
message for each of its samples instead of stopping the batch.
"""
from __future__ import annotations

import io
import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ..model import Circuit, PowerIn
from ..model.run_settings import check_windows
from ..errors import CircuitodeError, environment_fault
from ..checks.bounds import check_batch_bounds, check_run_bounds
from ..netlist.parts import expose_parts
from ..output.atomic import check_out_folder, write_atomic
from ..analysis.limits import check_requirements_batch, figure_key, requirement_margins_batch
from ..analysis.measure import figure_unit, measure, trusted_clocks
from ..analysis.window_integrals import figure_from_integrals
from .batch_windows import label_units, windowed_figure
from ..output.report import SAFETY_TEXT, requirement_words, unit_of_parameter
from .batch_extrema import extremum_figures
from .engine import BATCH_METHODS, simulate_chunk
from .executors import make_executor
from .sample_values import check_supported, element_values
from .sampling import SampleTable, draw_samples, spreads_with_overrides
from .summary import DRIVER_WORDS
from .statistics import YieldEstimate, estimate_yield, sensitivity_ranking, summarise_figure
from .lock import FolderLock
from .progress import Counter
from .store import ChunkStore, fingerprint_text

__all__ = ["BatchResult", "run_batch", "run_chunk", "batch_figure_keys", "plan_chunks"]

_BYTES_PER_CHUNK = 400e6  # waveform memory a chunk may hold (bytes)
_WAVEFORM_POINTS = 2000  # kept waveforms are decimated to at most about this many points


@dataclass
class BatchResult:
    """Everything a batch produced.

    samples : the parameter table.  figure_keys : [(figure, probe label)], f of them.
    figure_units : f units.  figures : (N, f).  ok : (N,) bool.  messages : (N,) str
    ("" where the run succeeded).  summaries : key → FigureSummary.  yield_estimate :
    against the netlist's requirements.  sensitivity : key → [Driver] strongest first.
    files : name → path written.  min_yield : the threshold asked for, or None.
    parameter_units : parameter name → unit of the values it feeds ("" if unknown).
    """

    samples: SampleTable
    figure_keys: list
    figure_units: list
    figures: np.ndarray
    ok: np.ndarray
    messages: np.ndarray
    summaries: dict
    yield_estimate: YieldEstimate
    sensitivity: dict
    requirements: tuple = ()
    files: dict = field(default_factory=dict)
    min_yield: float | None = None
    chunks_resumed: int = 0
    executor: str = ""
    out_dir: Path | None = None
    worst: dict = field(default_factory=dict)
    parameter_units: dict = field(default_factory=dict)

    def to_frame(self):
        """One row per sample: parameters, figures, ok, message; units in ``attrs`` (needs pandas)."""
        from .frames import batch_frame

        return batch_frame(self)

    def drivers_frame(self):
        """The sensitivity ranking: figure, part, eta2, spearman_rho, largest η² first (needs pandas)."""
        from .frames import drivers_frame

        return drivers_frame(self)

    def __repr__(self) -> str:
        from .frames import batch_repr

        return batch_repr(self)

    def _repr_html_(self) -> str:
        from .frames import batch_html

        return batch_html(self)

    @property
    def exit_code(self) -> int:
        """0, or 1 when a minimum yield was given and the yield is below it."""
        if self.min_yield is not None and not self.yield_estimate.fraction >= self.min_yield:
            return 1
        return 0


def batch_figure_keys(circuit: Circuit) -> tuple[list, list]:
    """(probes to record, [(figure, probe label)]): the standard figures of each recorded
    probe, then each requirement's figure."""
    probes, keys = [], []

    def add(p, figs):
        if p.label not in [q.label for q in probes]:
            probes.append(p)
        for f in figs:
            if (f, p.label) not in keys:
                keys.append((f, p.label))

    for p in circuit.records:
        if isinstance(p, PowerIn):
            add(p, ("peak", "energy"))
        elif p.unit == "A":
            add(p, ("peak", "time_of_peak", "minimum", "final", "i2t"))
        else:
            add(p, ("peak", "time_of_peak", "minimum", "final", "overshoot", "settling_time"))
    for r in circuit.requirements:
        add(r.probe, ())
        if figure_key(r) not in keys:  # over part of the run: keyed by the probe and the window
            keys.append(figure_key(r))
    return probes, keys


def _override_names(overrides) -> list[str]:
    """The names ``--tol`` overrides refer to (parameters or parts such as ``K_main.on``)."""
    if isinstance(overrides, dict):
        return list(overrides)
    return [str(text).partition("=")[0].strip() for text in overrides or ()]


def run_chunk(task: dict) -> dict:
    """Run one chunk (picklable task) and reduce it to figures; never raises for a sample."""
    circuit = task["circuit"]
    names, block = task["names"], task["values"]
    start = task["start"]
    size = block.shape[0]
    keys = task["keys"]
    figures = np.full((size, len(keys)), np.nan)
    extra: dict = {}
    messages = np.full(size, "", dtype=object)
    ok = np.zeros(size, dtype=bool)
    try:
        values = element_values(circuit, names, block)
        if not values:
            raise CircuitodeError("no element value depends on the sampled parameters")
        waves = simulate_chunk(circuit, values, task["probes"], method=task["method"],
                               batch=task.get("batch", 0))
        labels = [p.label for p in task["probes"]]
        units = [p.unit for p in task["probes"]]
        windows = {r.quantity: r for r in circuit.requirements if r.windowed}
        # each sample has its own clock (its own switching instants): t is (N, L), checked
        # once here for all the figures of the chunk
        with trusted_clocks(waves.t):
            for j, (fig, label) in enumerate(keys):
                if label in windows:  # a requirement's figure over part of the run
                    r = windows[label]
                    row = labels.index(r.probe.label)
                    figures[:, j] = windowed_figure(fig, r, waves, row, units[row])
                    continue
                row = labels.index(label)
                carried = None
                if waves.integrals is not None:  # exact integrals of the run itself
                    first, square = waves.integrals[row]
                    carried = figure_from_integrals(fig, first, square, waves.t[:, -1] - waves.t[:, 0],
                                                    units[row])
                if carried is None and waves.extrema is not None:  # peaks located between rows
                    carried = extremum_figures(fig, waves.t, waves.signals[row], waves.extrema[row])
                figures[:, j] = carried if carried is not None else measure(
                    fig, waves.t, waves.signals[row], signal_unit=units[row])
        ok = waves.ok.copy()
        for i, msg in waves.problems.items():
            messages[i] = msg
        figures[~ok] = np.nan
        kept = np.flatnonzero(np.arange(start, start + size) < task.get("keep_waveforms", 0))
        if kept.size:
            stride = max(1, -(-waves.t.shape[1] // _WAVEFORM_POINTS))
            extra = {"wave_index": kept + start, "wave_t": waves.t[kept, ::stride],
                     "wave_y": np.stack([sig[kept, ::stride] for sig in waves.signals], axis=1)}
    except CircuitodeError as exc:
        messages[:] = str(exc).splitlines()[0]
    except (ArithmeticError, ValueError, np.linalg.LinAlgError) as exc:
        messages[:] = f"numerical failure: {exc}"
    out = {"index": np.arange(start, start + size), "figures": figures, "ok": ok,
           "message": messages.astype(str)}
    out.update(extra)
    return out


def _preflight(circuit: Circuit, table: SampleTable, probes, keys, method: str) -> None:
    """Faults of the circuit itself are bad input, reported once before any chunk runs
    (a batch records per-sample failures, but a circuit that fails at its nominal
    values would fail every sample for the same reason)."""
    from ..checks.topology import verify
    from .engine import output_grid

    output_grid(circuit)
    verify(circuit, circuit.analysis.until)
    check_windows(circuit.requirements, circuit.analysis.until)
    nominal = run_chunk({"circuit": circuit, "names": table.names, "values": table.nominal[None, :],
                         "start": 0, "keys": keys, "probes": probes, "method": method})
    if not nominal["ok"][0]:
        raise CircuitodeError(f"the circuit cannot be simulated at its nominal values: {nominal['message'][0]}")


def run_batch(circuit_or_path, *, samples: int, sampler: str = "lhs", seed: int = 0,
              workers: int | None = None, scheduler: Any = None, out_dir, chunk_size: int | None = None,
              tol_overrides=None, min_yield: float | None = None, progress: bool = True,
              method: str = "exact", plots: bool = True, keep_waveforms: int = 0) -> BatchResult:
    """Run a tolerance batch and write its results.

    Parameters
    ----------
    circuit_or_path : a Circuit or the path of a netlist file.
    samples : N (corners use 2^k whatever N).  sampler : "mc", "lhs", "sobol", "corners".
    seed : integer seed.  workers : local processes (None/1 = in process).
    scheduler : Dask scheduler address (or a distributed.Client).
    out_dir : output folder; finished chunks there are reused (resume).
    chunk_size : samples per chunk (default from a memory budget).
    tol_overrides : ["NAME=5%", …].  min_yield : fraction in [0, 1] for the exit code.
    progress : show a tqdm bar with an ETA (on stderr when it is a terminal, or in a notebook).
    method : "exact" or "rk4".  plots : write histogram and scatter PNGs.
    keep_waveforms : keep the recorded waveforms of the first this-many samples,
        decimated to about 2,000 points, as ``waveforms/sample_<i>.csv``.
    """
    if isinstance(circuit_or_path, Circuit):
        circuit = circuit_or_path
        identity = repr((circuit.elements, circuit.couplings, circuit.analysis, circuit.records,
                         circuit.requirements, sorted(circuit.parameters.items()),
                         sorted((k, repr(v)) for k, v in circuit.spreads.items())))
    else:
        from ..netlist import load

        path = Path(circuit_or_path)
        try:
            text = path.read_bytes()
        except OSError as exc:
            raise CircuitodeError(f"cannot read netlist {path}: {exc.strerror}") from None
        circuit = load(path, varied=_override_names(tol_overrides))
        identity = text
    check_out_folder(out_dir)
    # corners runs every ± extreme whatever the count, so it needs none
    _check_counts(**({} if sampler == "corners" else {"samples": samples}), seed=seed, keep_waveforms=keep_waveforms)
    if method not in BATCH_METHODS:
        raise CircuitodeError(f"batch method {method!r} is not available; use one of {', '.join(BATCH_METHODS)}")
    if min_yield is not None and not 0.0 <= float(min_yield) <= 1.0:
        raise CircuitodeError(f"--min-yield must be a fraction between 0 and 1, got {min_yield!r}")
    if isinstance(tol_overrides, dict):
        overrides = [f"{k}={v}" for k, v in tol_overrides.items()]
    else:
        overrides = list(tol_overrides or [])
    circuit = expose_parts(circuit, _override_names(overrides), "--tol")  # R1=5%, K_main.on=10%
    spreads = spreads_with_overrides(circuit, overrides)
    check_run_bounds(circuit)  # events, states: before any sample is drawn
    check_batch_bounds(circuit, int(samples) if sampler != "corners" else 2 ** len(spreads), chunk_size,
                       len(spreads), len(batch_figure_keys(circuit)[1]), out_dir, int(keep_waveforms),
                       _WAVEFORM_POINTS)
    table = draw_samples(spreads, int(samples), sampler, int(seed))
    check_supported(circuit, table.names)
    probes, keys = batch_figure_keys(circuit)
    if not keys:
        raise CircuitodeError("nothing to measure: add a 'record' or 'require' statement to the netlist")
    _preflight(circuit, table, probes, keys, method)
    N = table.count
    chunk_size, n_chunks = plan_chunks(circuit, N, len(probes), chunk_size)
    with _locked(out_dir):
        store = ChunkStore(out_dir, {
            "netlist_sha256": fingerprint_text(identity), "seed": int(seed), "sampler": sampler,
            "samples": N, "chunk_size": chunk_size, "overrides": overrides, "method": method,
            "keep_waveforms": int(keep_waveforms),
        }, {c: (c * chunk_size, min(N, (c + 1) * chunk_size)) for c in range(n_chunks)})
        return _run_chunks(circuit, table, store, n_chunks, chunk_size, keys, probes, method, keep_waveforms,
                           workers, scheduler, progress, min_yield, plots)


def plan_chunks(circuit: Circuit, samples: int, probes: int, chunk_size: int | None = None) -> tuple[int, int]:
    """(samples per chunk, number of chunks) of a batch of ``samples``.

    Without ``chunk_size`` a chunk holds as many samples as keep its waveforms (each
    sample's clock and ``probes`` recorded rows, with the engine's working copies: about
    ``rows · (2·probes + 8)`` doubles a sample) within :data:`_BYTES_PER_CHUNK`, between
    16 and 4,096: what one worker holds at a time, whatever the number of samples.
    """
    if chunk_size is None:
        from .engine import output_grid

        per_sample = output_grid(circuit).size * (2 * probes + 8) * 8
        chunk_size = int(max(16, min(4096, _BYTES_PER_CHUNK // max(per_sample, 1))))
    chunk_size = int(chunk_size)
    if chunk_size < 1:
        raise CircuitodeError(f"chunk size must be at least 1, got {chunk_size}")
    return chunk_size, -(-int(samples) // chunk_size)


def _check_counts(**counts) -> None:
    """Counts given on the command line are whole numbers ≥ 0 (samples ≥ 1), seeds < 2³²."""
    for name, value in counts.items():
        flag = "--" + name.replace("_", "-")
        lowest = 1 if name == "samples" else 0
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < lowest:
            raise CircuitodeError(f"error: {flag} must be a whole number of at least {lowest}, got {value!r}\n"
                                  f"  hint: e.g. {flag} {max(lowest, 1) if name != 'seed' else 7}")
        if name == "seed" and value >= 2**32:
            raise CircuitodeError(f"error: --seed must be below 2^32 = {2**32}, got {value}")


def _locked(out_dir) -> FolderLock:
    try:
        Path(out_dir).mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise environment_fault(exc, f"create the output folder {out_dir}") from None
    return FolderLock(out_dir)


def _run_chunks(circuit, table, store, n_chunks, chunk_size, keys, probes, method, keep_waveforms,
                workers, scheduler, progress, min_yield, plots) -> BatchResult:
    N = table.count
    done = store.finished()
    todo = [c for c in range(n_chunks) if c not in done]
    bar = Counter(N, "samples", unit="sample", enabled=progress)
    bar.advance(sum(min(chunk_size, N - c * chunk_size) for c in done if c < n_chunks))  # resumed chunks
    executor = make_executor(workers, scheduler)
    values = table.values
    tasks = [(c, {"circuit": circuit, "names": table.names, "start": c * chunk_size,
                  "values": values[c * chunk_size:(c + 1) * chunk_size], "keys": keys,
                  "probes": probes, "method": method, "keep_waveforms": int(keep_waveforms), "batch": N})
             for c in todo]
    try:
        for c, result in executor.map_unordered(run_chunk, tasks):
            store.write(c, result)
            bar.advance(result["index"].size)
    finally:
        executor.close()
        bar.close()
    return _reduce(circuit, table, store, n_chunks, keys, probes, min_yield, len(done), executor.name, plots)


def _reduce(circuit, table, store, n_chunks, keys, probes, min_yield, resumed, executor_name, plots):
    parts = [store.read(c) for c in range(n_chunks)]
    figures = np.concatenate([p["figures"] for p in parts])
    ok = np.concatenate([p["ok"] for p in parts])
    messages = np.concatenate([p["message"] for p in parts])
    unit_of = label_units(circuit, probes)
    units = [figure_unit(f, unit_of[label]) for f, label in keys]
    fig_map = {k: figures[:, j] for j, k in enumerate(keys)}
    summaries = {k: summarise_figure(f"{k[0]} of {k[1]}", figures[:, j]) for j, k in enumerate(keys)}
    reqs = tuple(circuit.requirements)
    passes = check_requirements_batch(reqs, fig_map) if reqs else np.zeros((ok.size, 0), dtype=bool)
    limit_passes = {r.label: passes[:, i] for i, r in enumerate(reqs)}
    worst = {}
    if reqs:
        margins = requirement_margins_batch(reqs, fig_map)
        for i, r in enumerate(reqs):
            m = np.where(np.isfinite(margins[:, i]), margins[:, i], np.inf)
            if np.isfinite(m).any():
                k = int(np.argmin(m))
                worst[r.label] = (k, float(fig_map[figure_key(r)][k]))
    yld = estimate_yield(limit_passes, ok)
    params = table.values
    sens = {k: sensitivity_ranking(table.names, params, figures[:, j]) for j, k in enumerate(keys)}
    result = BatchResult(table, list(keys), units, figures, ok, messages, summaries, yld, sens, reqs,
                         {}, min_yield, resumed, executor_name, Path(store.folder), worst,
                         {name: unit_of_parameter(circuit, name) for name in table.names})
    result.files = _write_outputs(result, Path(store.folder), plots)
    result.files.update(_write_waveforms(parts, probes, Path(store.folder)))
    return result


def _write_waveforms(parts, probes, folder: Path) -> dict:
    """CSV of each kept (decimated) waveform: time and every recorded signal."""
    import csv

    files = {}
    for part in parts:
        if "wave_index" not in part:
            continue
        (folder / "waveforms").mkdir(exist_ok=True)
        for k, index in enumerate(part["wave_index"]):
            path = folder / "waveforms" / f"sample_{int(index)}.csv"
            lines = [["time [s]"] + [f"{p.label} [{p.unit}]" for p in probes]]
            lines += np.column_stack([part["wave_t"][k], part["wave_y"][k].T]).tolist()
            text = io.StringIO(newline="")
            csv.writer(text).writerows(lines)
            write_atomic(path, text.getvalue().encode("utf-8"))
            files[f"waveform {int(index)}"] = path
    return files


def _limit_words(result: BatchResult) -> list[str]:
    """Each limit worded with its unit, as the printed table has it ("peak of current through R1 < 6 A")."""
    units = dict(zip(result.figure_keys, result.figure_units))
    return [requirement_words(r, units.get(figure_key(r), "")) for r in result.requirements]


def _limit_passes(result: BatchResult) -> np.ndarray:
    """(N, number of limits) bools: does each sample meet each limit (False when it failed to run)."""
    if not result.requirements:
        return np.zeros((result.samples.count, 0), dtype=bool)
    fig_map = {k: result.figures[:, j] for j, k in enumerate(result.figure_keys)}
    return check_requirements_batch(tuple(result.requirements), fig_map) & result.ok[:, None]


def _write_outputs(result: BatchResult, folder: Path, plots: bool) -> dict:
    import csv

    files = {}
    table = result.samples
    path = folder / "samples.csv"
    limit_words = _limit_words(result)
    passes = _limit_passes(result)
    header = ["sample", "ok", "message"] + [f"{n}" for n in table.names] + [
        f"{f} of {label} [{u}]" for (f, label), u in zip(result.figure_keys, result.figure_units)] + [
        f"pass: {words}" for words in limit_words]
    rows = np.concatenate([table.values, result.figures], axis=1)

    def write_rows(binary):
        fh = io.TextIOWrapper(binary, encoding="utf-8", newline="")
        w = csv.writer(fh)
        w.writerow(header)
        for i in range(table.count):  # writing text rows; the numerics are done
            w.writerow([i, int(result.ok[i]), result.messages[i]] + [repr(float(v)) for v in rows[i]]
                       + [int(p) for p in passes[i]])
        fh.flush()
        fh.detach()  # the binary handle stays open for write_atomic to sync and rename

    write_atomic(path, write_rows)  # unique temp name, renamed into place
    files["samples"] = path
    summary = {
        "samples": table.count, "sampler": table.sampler, "seed": table.seed, "note": table.note,
        "failed": int((~result.ok).sum()),
        "yield": {"passed": result.yield_estimate.passed, "total": result.yield_estimate.total,
                  "fraction": result.yield_estimate.fraction, "wilson95": [result.yield_estimate.low,
                                                                          result.yield_estimate.high],
                  "per_limit": {words: result.yield_estimate.per_limit.get(r.label, 0)
                                for words, r in zip(limit_words, result.requirements)}},
        "figures": {f"{k[0]} of {k[1]}": {
            "unit": u, "mean": s.mean, "std": s.std, "percentiles": dict(zip(["p1", "p5", "p50", "p95", "p99"], s.percentiles)),
            "min": s.minimum, "min_sample": s.argmin, "max": s.maximum, "max_sample": s.argmax,
            "drivers": [{"part": d.parameter, "eta2": d.eta2, "spearman_rho": d.rho}
                        for d in result.sensitivity[k]]}
            for k, u, s in zip(result.figure_keys, result.figure_units, result.summaries.values())},
        "drivers_meaning": DRIVER_WORDS.replace("\n", " ") + "; strongest (largest η²) first",
        "safety": SAFETY_TEXT,
    }
    path = folder / "batch_summary.json"
    write_atomic(path, json.dumps(summary, indent=2, default=float).replace("NaN", "null").encode("utf-8"))
    files["summary"] = path
    if plots:
        from .plots import write_plots

        files.update(write_plots(result, folder))
    return files
