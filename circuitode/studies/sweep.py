"""Sweeps: a grid over one to three parameters or parts, every point through the batch engine.

>>> import circuitode as co                                   # doctest: +SKIP
>>> s = co.sweep("netlists/precharge.cnet", vary={"R_pre": "4.7Ω..100Ω/20/log",
...                                                "C_link": "1mF,1.5mF,2.2mF"})
>>> s.to_frame()          # one row per point: parameters, figures, verdicts, margins

The table (``sweep.csv``) holds one row per point: the varied values, every
figure measured (the standard figures of each recorded probe and each
requirement's figure), then for each requirement its verdict (``pass`` column,
1/0) and margin (in the figure's unit; positive is inside the limit).
"""
from __future__ import annotations

import csv
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping, Sequence

import numpy as np

from ..errors import CircuitodeError
from ..notebook import pandas_module
from ..analysis.limits import figure_key
from ..tolerance.progress import counter
from .worst import refine_worst, worst_points
from .grid import MAX_POINTS, Axis, PointResults, axis_from, evaluate_points, grid_points, parse_axis, study_circuit

__all__ = ["SweepResult", "sweep", "column_names"]

_HTML_ROWS = 12  # rows a notebook shows before eliding


@dataclass
class SweepResult:
    """A finished sweep.

    axes : the k varied axes, first varying slowest.  points : (N, k) SI values, N = prod of
    the axes' lengths (reshape a column to ``shape`` for a grid).  results : figures and
    verdicts per point.  requirements : the netlist's.  title : the circuit's.
    files : name → path written (empty when no folder was given).
    worst : per requirement, the :class:`~circuitode.studies.worst.Worst` point (the
    smallest margin), refined between grid points when the sweep was asked to.
    """

    axes: list
    points: np.ndarray
    results: PointResults
    requirements: tuple
    title: str = ""
    files: dict = field(default_factory=dict)
    worst: list = field(default_factory=list)

    @property
    def shape(self) -> tuple[int, ...]:
        return tuple(a.values.size for a in self.axes)

    @property
    def all_pass(self) -> np.ndarray:
        """(N,) every requirement met at that point."""
        return self.results.all_pass

    @property
    def exit_code(self) -> int:
        """0 when at least one point meets every requirement, else 1."""
        return 0 if self.all_pass.any() else 1

    def columns(self) -> dict[str, np.ndarray]:
        """Column name → (N,) values, in table order (see :func:`column_names`)."""
        names = column_names(self)
        r = self.results
        data = [self.points[:, j] for j in range(len(self.axes))]
        data += [r.figures[:, j] for j in range(len(r.figure_keys))]
        for i in range(len(self.requirements)):
            data += [r.passes[:, i] & r.ok, r.margins[:, i]]
        data += [r.ok, r.messages]
        return dict(zip(names, data))

    def to_frame(self):
        """A pandas DataFrame, one row per point; units in ``attrs["units"]`` (column → unit).

        Needs pandas (``pip install circuitode[frames]``).
        """
        pd = pandas_module()
        frame = pd.DataFrame(self.columns())
        frame.attrs["units"] = dict(zip(frame.columns, _column_units(self)))
        frame.attrs["title"] = self.title
        return frame

    def plot(self, path=None):
        """The sweep's plot as a matplotlib Figure; written as PNG only when ``path`` is given."""
        from .plots import sweep_figure

        figure = sweep_figure(self)
        if path is not None:
            figure.savefig(path, dpi=110)
        return figure

    def __repr__(self) -> str:
        axes = ", ".join(f"{a.name} ({a.values.size})" for a in self.axes)
        return (f"<SweepResult {self.title!r}: {self.points.shape[0]} points over {axes}; "
                f"{int(self.all_pass.sum())} meet every requirement>")

    def _repr_html_(self) -> str:
        from html import escape

        cols = self.columns()
        names = list(cols)
        n = self.points.shape[0]
        shown = list(range(min(n, _HTML_ROWS // 2))) + list(range(max(n - _HTML_ROWS // 2, _HTML_ROWS // 2), n))
        head = "".join(f"<th>{escape(c)}</th>" for c in names)
        rows = []
        for i in shown:
            if rows and i != shown[shown.index(i) - 1] + 1:
                rows.append(f"<tr><td colspan='{len(names)}'>… {i - shown[shown.index(i) - 1] - 1} rows …</td></tr>")
            rows.append("<tr>" + "".join(f"<td>{escape(_cell(cols[c][i]))}</td>" for c in names) + "</tr>")
        return (f"<p>{escape(repr(self))}</p><table><thead><tr>{head}</tr></thead>"
                f"<tbody>{''.join(rows)}</tbody></table>")


def _cell(value: Any) -> str:
    if isinstance(value, (bool, np.bool_)):
        return "1" if value else "0"
    if isinstance(value, (float, np.floating)):
        return f"{float(value):.5g}"
    return str(value)


def column_names(result: SweepResult) -> list[str]:
    """Table columns: axes, '<figure> of <probe>' per figure, 'pass: <limit>' and
    'margin: <limit>' per requirement, then 'ok' and 'message'."""
    names = [a.name for a in result.axes]
    names += [f"{f.replace('_', ' ')} of {label}" for f, label in result.results.figure_keys]
    from .report import limit_words

    for req in result.requirements:
        words = limit_words(req)
        names += [f"pass: {words}", f"margin: {words}"]
    return names + ["ok", "message"]


def _column_units(result: SweepResult) -> list[str]:
    units = [a.unit for a in result.axes] + list(result.results.figure_units)
    unit_of = dict(zip(result.results.figure_keys, result.results.figure_units))
    for req in result.requirements:
        units += ["", unit_of.get(figure_key(req), "")]
    return units + ["", ""]


def _as_specs(vary: Any) -> list[tuple[str, Any]]:
    if isinstance(vary, Mapping):
        return list(vary.items())
    out = []
    for item in vary:
        if isinstance(item, str):
            name, sep, spec = item.partition("=")
            if not sep:
                raise CircuitodeError(f"cannot read --vary {item!r}; write NAME=SPEC, e.g. R_pre=4.7Ω..100Ω/20/log")
            out.append((name.strip(), spec.strip()))
        else:
            out.append(tuple(item))
    return out


def sweep(netlist: Any, vary: Mapping[str, Any] | Sequence[Any], *, overrides: Mapping[str, Any] | None = None,
          method: str = "exact", out_dir: str | Path | None = None, plots: bool = True,
          progress: Any = True, refine: bool = False) -> SweepResult:
    """Evaluate a grid over one to three parameters or parts.

    Parameters
    ----------
    netlist : a ``.cnet`` path (or a Circuit already carrying recipes for the names).
    vary : {name: spec} or ["NAME=SPEC", …]; a spec is text (``"4.7Ω..100Ω/20/log"``,
        ``"1mF,1.5mF"``; see :mod:`.grid`) or a sequence of SI values.
    overrides : parameter or part name → value set before sweeping (``--set``).
    method : "exact" or "rk4" (the batch engine's integrators).
    out_dir : folder for ``sweep.csv`` and ``sweep.png``; None writes nothing.
    plots : write the PNG when a folder is given.
    progress : True shows a tqdm bar with an ETA (on a terminal's stderr or in a notebook), False
        none; a callable(count) is called instead as chunks of points finish.
    refine : on a one-name sweep, refine the worst point of each requirement between its grid
        neighbours (see :mod:`.worst`; one batch per round).
    """
    specs = _as_specs(vary)
    if not 1 <= len(specs) <= 3:
        raise CircuitodeError(f"a sweep varies one to three names; got {len(specs)}")
    names = [name for name, _ in specs]
    circuit = study_circuit(netlist, names, overrides)
    axes = [parse_axis(f"{n}={s}", circuit) if isinstance(s, str) else axis_from(n, s, circuit) for n, s in specs]
    count = int(np.prod([a.values.size for a in axes]))
    if count > MAX_POINTS:
        raise CircuitodeError(f"this sweep has {count:,} points; the limit is {MAX_POINTS:,} — use fewer values")
    points = grid_points(axes)
    with counter(progress, points.shape[0], "sweep", "point") as bar:
        results = evaluate_points(circuit, names, points, method=method, progress=bar.advance)
    if not results.ok.any():
        raise CircuitodeError(f"no point of the sweep could be simulated: {results.messages[0]}")
    result = SweepResult(axes, points, results, tuple(circuit.requirements), circuit.title)
    result.worst = worst_points(result.requirements, points, results)
    if refine:
        if len(axes) != 1:
            raise CircuitodeError("refining the worst point needs a sweep of one name; vary one name, or "
                                  "leave out the refinement")
        reqs = list(result.requirements)
        result.worst = [refine_worst(circuit, names[0], axes[0].values, w, *_of(results, reqs, w.requirement),
                                     method=method) for w in result.worst]
    if out_dir is not None:
        result.files = write_sweep(result, Path(out_dir), plots)
    return result


def _of(results: PointResults, requirements: list, req) -> tuple[np.ndarray, np.ndarray]:
    """(margins, figures) of requirement ``req`` at every point, NaN where a point failed."""
    margins = np.where(results.ok, results.margins[:, requirements.index(req)], np.nan)
    return margins, results.figures[:, results.figure_keys.index((req.figure, req.probe.label))]


def write_sweep(result: SweepResult, folder: Path, plots: bool = True) -> dict:
    """Write ``sweep.csv`` (and ``sweep.png``) into ``folder``; returns name → path."""
    folder.mkdir(parents=True, exist_ok=True)
    cols = result.columns()
    units = _column_units(result)
    header = [f"{name} [{unit}]" if unit else name for name, unit in zip(cols, units)]
    path = folder / "sweep.csv"
    tmp = path.with_name(".sweep.csv.tmp")
    data = list(cols.values())
    with open(tmp, "w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(header)
        for i in range(result.points.shape[0]):  # writing text rows; the numerics are done
            writer.writerow([_cell(column[i]) if column.dtype.kind in "bO" else repr(float(column[i]))
                             for column in data[:-1]] + [str(data[-1][i])])
    os.replace(tmp, path)
    files = {"table": path}
    png = folder / "sweep.png"
    if plots:
        result.plot(png)
        files["plot"] = png
    elif png.exists():
        png.unlink()  # never leave a plot of an earlier sweep beside a new table
    return files
