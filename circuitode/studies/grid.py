"""Points of a design study: axes written on the command line, a circuit ready to vary, and
the batch engine run over a table of points.

An axis is written ``NAME=SPEC`` (``--vary``) where NAME is a parameter or a
part (``R1``, ``K_main.on``; see :mod:`circuitode.netlist.parts`) and SPEC is

* ``LOW..HIGH/COUNT``       COUNT evenly spaced values from LOW to HIGH,
* ``LOW..HIGH/COUNT/log``   COUNT values evenly spaced in logarithm (LOW, HIGH > 0),
* ``V1,V2,V3``              exactly these values,
* ``V``                     one value.

Every value is a quantity in the unit of what it varies (``4.7Ω``, ``1.5mF``,
``4k7``); a bare number is read in SI units.

The points are evaluated as one sample table by the tolerance engine's
:func:`~circuitode.tolerance.batch.run_chunk` (stacked matrices, every point
stepped together, each with its own switching instants), never one run per point.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable, Mapping, Sequence

import numpy as np

from ..analysis.limits import check_requirements_batch, requirement_margins_batch
from ..analysis.measure import figure_unit
from ..errors import CircuitodeError, NetlistError
from ..model import Circuit
from ..netlist.parts import expose_parts, resolve_part
from ..quantities import parse_quantity
from ..tolerance.batch import batch_figure_keys, label_units, run_chunk
from ..tolerance.sample_values import check_supported
from ..tolerance.engine import BATCH_METHODS, output_grid

__all__ = ["Axis", "PointResults", "parse_axis", "axis_from", "study_circuit", "evaluate_points",
           "grid_points", "unit_of", "MAX_POINTS"]

#: A study larger than this many points is refused (ask for fewer values per axis).
MAX_POINTS = 200_000
_BYTES_PER_CHUNK = 400e6  # waveform memory one chunk may hold, as in tolerance batches
_RANGE = re.compile(r"^(?P<low>.+?)\.\.(?P<high>[^/]+)/(?P<count>[0-9]+)(?:/(?P<scale>[A-Za-z]+))?$")


@dataclass(frozen=True)
class Axis:
    """One varied parameter or part.

    name : as written.  values : (n,) SI values in the order given.  unit : SI unit ("" if none).
    log : True when the values were asked evenly spaced in logarithm (plots use a log axis).
    """

    name: str
    values: np.ndarray
    unit: str = ""
    log: bool = False


def unit_of(circuit: Circuit, name: str) -> str | None:
    """The unit of a parameter or part, from the element fields it feeds; None when unknown."""
    from ..output.report import unit_of_parameter

    if name not in circuit.parameters or "." in name or name in circuit.by_name:
        return resolve_part(circuit, name, "--vary").unit
    unit = unit_of_parameter(circuit, name)
    if unit:
        return unit
    for (element, field), recipe in circuit.recipes.items():
        if name in recipe.names and field in _TIMING_UNITS:
            return _TIMING_UNITS[field]
        if name in recipe.names and "." not in name:
            try:
                return resolve_part(circuit, f"{element}.{field.split('.')[-1]}", "--vary").unit
            except NetlistError:
                continue
    return None


_TIMING_UNITS = {"control.changes.0": "s", "control.angle": "rad"}


def _field_words(field: str) -> str:
    """E.g. "control.changes.0" → "switching time", "waveform.delay" → "delay"."""
    if field.startswith("control.changes."):
        return "switching time"
    if field == "control.angle":
        return "closing angle"
    return {"control.level": "switching level", "control.period": "toggling period", "control.duty": "duty",
            "control.start": "toggling start"}.get(field, field.split(".")[-1].replace("_", " "))


def parse_axis(text: str, circuit: Circuit) -> Axis:
    """Read ``NAME=SPEC`` (see the module text) into an Axis; values unit-checked."""
    name, sep, spec = text.partition("=")
    name, spec = name.strip(), spec.strip().replace(" ", "")
    if not sep or not name or not spec:
        raise CircuitodeError(f"cannot read --vary {text!r}; write NAME=LOW..HIGH/COUNT[/log] or NAME=V1,V2,V3 "
                              "(e.g. R_pre=4.7Ω..100Ω/20/log)")
    return axis_from(name, spec, circuit)


def axis_from(name: str, spec: Any, circuit: Circuit) -> Axis:
    """An Axis from a written SPEC, or from a sequence of SI values (API)."""
    unit = unit_of(circuit, name)
    what = f"a value of {name}"
    if not isinstance(spec, str):
        values = np.atleast_1d(np.asarray(spec, dtype=float))
        log = False
    else:
        m = _RANGE.match(spec)
        if m:
            low = parse_quantity(m.group("low"), unit, what)
            high = parse_quantity(m.group("high"), unit, what)
            count = int(m.group("count"))
            scale = m.group("scale") or "lin"
            if scale not in ("lin", "log"):
                raise CircuitodeError(f"--vary {name}: unknown spacing '/{scale}'; write /lin or /log")
            if count < 2:
                raise CircuitodeError(f"--vary {name}: a range needs at least 2 values, not {count}")
            log = scale == "log"
            if log and not (low > 0 and high > 0):
                raise CircuitodeError(f"--vary {name}: /log needs positive ends, got {spec}")
            values = np.geomspace(low, high, count) if log else np.linspace(low, high, count)
        elif ".." in spec:
            raise CircuitodeError(f"cannot read --vary {name}={spec}; a range is LOW..HIGH/COUNT or "
                                  "LOW..HIGH/COUNT/log, e.g. 4.7Ω..100Ω/20/log")
        else:
            values = np.array([parse_quantity(v, unit, what) for v in spec.split(",") if v])
            log = False
    if values.size == 0 or not np.all(np.isfinite(values)):
        raise CircuitodeError(f"--vary {name}: give finite values")
    return Axis(name, values, unit or "", log)


def study_circuit(source: Any, names: Sequence[str], overrides: Mapping[str, Any] | None = None,
                  option: str = "--vary") -> Circuit:
    """The circuit with every element value that depends on ``names`` kept as a recipe over them.

    source : a ``.cnet`` path or a Circuit (a Circuit must already carry recipes for the
    parameters named; parts are exposed either way).
    """
    from ..netlist import load

    if isinstance(source, Circuit):
        if overrides:
            raise CircuitodeError("overrides need the netlist's path (a built circuit cannot take new param "
                                  "values); pass the path, or load the circuit with co.load(path, overrides=…)")
        circuit = source
    else:
        path = Path(source)
        if not path.is_file():
            raise NetlistError(f"no netlist file at {str(path)!r}", hint="give the path to a .cnet file")
        circuit = load(path, overrides=overrides, varied=names)
    circuit = expose_parts(circuit, names, option)
    for name in names:
        if not any(name in recipe.names for recipe in circuit.recipes.values()):
            raise CircuitodeError(
                f"{name} feeds no element value of this circuit, so varying it changes nothing"
                + ("; pass the netlist's path instead of a built circuit" if isinstance(source, Circuit) else ""))
    if len(set(names)) != len(names):
        raise CircuitodeError(f"each name may be varied once; got {', '.join(names)}")
    for name in names:
        try:
            check_supported(circuit, [name])
        except CircuitodeError as exc:  # reworded: the batch's message speaks of tolerances
            reached = sorted(f"the {_field_words(field)} of {element}"
                             for (element, field), recipe in circuit.recipes.items() if name in recipe.names)
            raise CircuitodeError(
                f"{option} {name}: it reaches {', '.join(reached)}, a value every point of a batch shares "
                "(switching instants and other timing); vary element values or source levels instead, or run "
                f"'circuitode run --set {name}=…' once per value") from exc
    return circuit


@dataclass
class PointResults:
    """The figures and verdicts of a table of points.

    figure_keys : [(figure, probe label)], f of them; figure_units : f units.
    figures : (N, f).  ok : (N,) the run succeeded.  messages : (N,) str.
    passes : (N, r) each requirement met.  margins : (N, r) in each figure's unit.
    """

    figure_keys: list
    figure_units: list
    figures: np.ndarray
    ok: np.ndarray
    messages: np.ndarray
    passes: np.ndarray
    margins: np.ndarray

    @property
    def all_pass(self) -> np.ndarray:
        """(N,) every requirement met (and the run succeeded)."""
        return self.ok & np.all(self.passes, axis=1)


def evaluate_points(circuit: Circuit, names: Sequence[str], values: np.ndarray, *,
                    method: str = "exact", progress=None) -> PointResults:
    """Run the batch engine over points (N, k) of the parameters ``names``; never one run per point.

    progress : optional callable(count) told how many points each finished chunk held.
    """
    if method not in BATCH_METHODS:
        raise CircuitodeError(f"study method {method!r} is not available; use one of {', '.join(BATCH_METHODS)}")
    values = np.atleast_2d(np.asarray(values, dtype=float))
    probes, keys = batch_figure_keys(circuit)
    if not keys:
        raise CircuitodeError("nothing to measure: add a 'record' or 'require' statement to the netlist")
    per_point = output_grid(circuit).size * (2 * len(probes) + 8) * 8
    chunk = int(max(16, min(4096, _BYTES_PER_CHUNK // max(per_point, 1))))
    parts = []
    for start in range(0, values.shape[0], chunk):
        block = values[start:start + chunk]
        parts.append(run_chunk({"circuit": circuit, "names": tuple(names), "values": block, "start": start,
                                "keys": keys, "probes": probes, "method": method}))
        if progress is not None:
            progress(block.shape[0])
    figures = np.concatenate([p["figures"] for p in parts])
    ok = np.concatenate([p["ok"] for p in parts])
    messages = np.concatenate([p["message"] for p in parts])
    unit_of = label_units(circuit, probes)
    units = [figure_unit(f, unit_of[label]) for f, label in keys]
    fig_map = {k: figures[:, j] for j, k in enumerate(keys)}
    reqs = tuple(circuit.requirements)
    if reqs:
        passes = check_requirements_batch(reqs, fig_map)
        margins = requirement_margins_batch(reqs, fig_map)
    else:
        passes = np.zeros((ok.size, 0), dtype=bool)
        margins = np.zeros((ok.size, 0))
    return PointResults(list(keys), units, figures, ok, messages, passes, margins)


def grid_points(axes: Iterable[Axis]) -> np.ndarray:
    """(N, k) every combination of the axes' values, the first axis varying slowest."""
    axes = list(axes)
    mesh = np.meshgrid(*[a.values for a in axes], indexing="ij")
    return np.stack([m.ravel() for m in mesh], axis=1)
