"""The worst point of a study for each limited figure, and its refinement on one axis.

For every ``require`` of the netlist the worst point is the one with the smallest
margin (the largest peak under a ``<`` limit, the smallest value over a ``>``
limit).  On a one-name sweep (a closing angle, a switching instant, a part's
value) it can be refined: the interval between the worst point's neighbours is
cut into :data:`REFINE_POINTS` points run as one batch, the best of them becomes
the centre of the next, smaller interval, and so on until the interval is below
``tol`` of the axis' span.  Each round is one batch through the engine, never a
loop of single runs.  A margin with several equal maxima within one grid cell
is refined towards one of them.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from ..analysis.limits import requirement_margins_batch
from .grid import evaluate_points

__all__ = ["Worst", "worst_points", "refine_worst", "REFINE_POINTS"]

#: Points per refinement round (one batch each); the interval shrinks by (REFINE_POINTS − 1) / 2.
REFINE_POINTS = 9


@dataclass(frozen=True)
class Worst:
    """The worst point of one requirement.

    requirement : the netlist's.  index : its row in the study's points (−1 when refined off
    the grid).  point : (k,) SI values of the varied names there.  value : the figure, in its
    unit.  margin : in the figure's unit (negative: the limit fails).  refined : True when
    found by refinement between grid points.  step : half the final interval on the axis
    (SI), the resolution of ``point`` (the grid step when not refined).
    """

    requirement: Any
    index: int
    point: np.ndarray
    value: float
    margin: float
    refined: bool = False
    step: float = float("nan")


def worst_points(requirements: Sequence, points: np.ndarray, results) -> list[Worst]:
    """The worst point of each requirement among the points that ran (none for a requirement
    no point measured)."""
    out = []
    for i, req in enumerate(requirements):
        m = np.where(results.ok & np.isfinite(results.margins[:, i]), results.margins[:, i], np.inf)
        if not np.isfinite(m).any():
            continue
        k = int(np.argmin(m))
        j = results.figure_keys.index((req.figure, req.probe.label))
        step = _grid_step(points[:, 0], k) if points.shape[1] == 1 else float("nan")
        out.append(Worst(req, k, points[k].copy(), float(results.figures[k, j]), float(m[k]), False, step))
    return out


def _grid_step(values: np.ndarray, k: int) -> float:
    """Half the distance to the farther neighbour of grid point k (the resolution there)."""
    near = [abs(values[k] - values[j]) for j in (k - 1, k + 1) if 0 <= j < values.size]
    return 0.5 * max(near) if near else float("nan")


def refine_worst(circuit, name: str, grid: np.ndarray, worst: Worst, margins=None, figures=None, *,
                 method: str = "exact", tol: float = 1e-9, rounds: int = 40, candidates: int = 3) -> Worst:
    """Refine ``worst`` (found on the 1-D ``grid`` of ``name``) between grid neighbours.

    With the grid's ``margins`` and ``figures`` of this requirement ((N,) each, NaN where a
    point failed), each of the ``candidates`` lowest local minima of the margin along the
    sorted grid is refined and the worst kept: the worst point may lie beside a grid point
    other than the grid's worst (nearly equal margins, or an angle axis whose two ends are
    the same point of the wave).  Stops when the interval is below ``tol`` × the span.
    """
    if margins is None:
        return _refine_one(circuit, name, grid, worst, method, tol, rounds)
    grid = np.asarray(grid, dtype=float)
    order = np.argsort(grid, kind="stable")
    m = np.where(np.isfinite(margins), margins, np.inf)[order]
    padded = np.concatenate([[np.inf], m, [np.inf]])
    local = np.flatnonzero((m <= padded[:-2]) & (m <= padded[2:]) & np.isfinite(m))
    best = None
    for k in local[np.argsort(m[local], kind="stable")][:candidates]:
        j = int(order[k])
        start = Worst(worst.requirement, j, grid[j:j + 1].copy(), float(figures[j]), float(m[k]))
        found = _refine_one(circuit, name, grid, start, method, tol, rounds)
        if best is None or found.margin < best.margin:
            best = found
    return worst if best is None else best


def _refine_one(circuit, name: str, grid: np.ndarray, worst: Worst, method: str, tol: float,
                rounds: int) -> Worst:
    """Refine one grid point between its neighbours (one batch per round)."""
    order = np.sort(np.asarray(grid, dtype=float))
    x = float(worst.point[0])
    k = int(np.searchsorted(order, x))
    lo, hi = order[max(k - 1, 0)], order[min(k + 1, order.size - 1)]
    span = float(order[-1] - order[0]) or abs(x) or 1.0
    req = worst.requirement
    key = (req.figure, req.probe.label)
    best = worst
    for _ in range(rounds):
        if hi - lo <= tol * span:
            break
        xs = np.linspace(lo, hi, REFINE_POINTS)
        r = evaluate_points(circuit, [name], xs[:, None], method=method)
        j = r.figure_keys.index(key)
        margins = requirement_margins_batch((req,), {key: r.figures[:, j]})[:, 0]
        m = np.where(r.ok & np.isfinite(margins), margins, np.inf)
        if not np.isfinite(m).any():
            break
        i = int(np.argmin(m))
        if m[i] <= best.margin:
            best = Worst(req, -1, np.array([xs[i]]), float(r.figures[i, j]), float(m[i]), True)
        c = float(best.point[0])
        h = xs[1] - xs[0]
        lo, hi = max(c - h, lo), min(c + h, hi)
    return Worst(req, best.index, best.point, best.value, best.margin, True, 0.5 * float(hi - lo))
