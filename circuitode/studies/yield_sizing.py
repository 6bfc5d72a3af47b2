"""Sizing for a yield target: the values of a part for which at least a fraction of the
tolerance samples meets every requirement.

Method
------
One seeded sample table of the netlist's tolerances (Latin hypercube, as the
``tolerance`` command draws it) is used for every candidate value x — common
random numbers, so the yield Y(x) is a deterministic function of x and two
values are compared on the same samples.  When the sized part has a tolerance
itself, its samples are x·(1 + d); otherwise it is x in every sample.

1. The nominal intervals (every requirement met at nominal values) bound the
   search: a value whose nominal point fails cannot be part of a robust design.
2. Inside each, Y(x) is evaluated on ``points`` values, each as one batch of
   all samples (stacked, never a loop of runs).
3. Each place where Y − target changes sign is refined with
   :func:`scipy.optimize.brentq` to a relative ``1e-5`` in x.  Y is a step function
   of x (it changes when one sample crosses a limit); brentq's bisection steps
   converge on the step, which is where the count of passing samples reaches
   the target.

The yield is an estimate from N samples: the report gives its 95 % Wilson
interval at each end.
"""
from __future__ import annotations

import math

import numpy as np
from scipy.optimize import brentq

from ..errors import CircuitodeError
from ..tolerance.sample_values import check_supported
from ..tolerance.sampling import draw_samples, spreads_with_overrides
from ..tolerance.statistics import wilson_interval
from .grid import evaluate_points

__all__ = ["YieldSetting", "yield_intervals"]

_RTOL = 1e-5  # the yield is a step function known to ~1/N: finer roots buy nothing


class YieldSetting:
    """The sample table and the way a candidate value enters it.

    names : (k,) columns handed to the engine (the netlist's toleranced parameters, plus the
    part when it has no tolerance).  base : (N, k) sampled values.  part_factor : (N,) the
    part's 1 + d (ones when it has no tolerance).  column : the part's column.
    """

    def __init__(self, circuit, part: str, samples: int, seed: int):
        spreads = spreads_with_overrides(circuit)
        if not spreads:
            raise CircuitodeError("--yield needs tolerances in the netlist ('± 5 %' on a value or a param), "
                                  "or size at the nominal values without --yield")
        orphans = [n for n in spreads if not any(n in r.names for r in circuit.recipes.values())]
        if orphans:
            raise CircuitodeError(
                f"the tolerance of {', '.join(orphans)} reaches no element once {part} is sized directly, so "
                f"the yield would leave it out; size {orphans[0]} instead, or put the tolerance on {part}")
        table = draw_samples(spreads, int(samples), "lhs", int(seed))
        names = list(table.names)
        base = table.values
        if part in names:
            column = names.index(part)
            factor = 1.0 + table.deviations[:, column]
        else:
            names.append(part)
            base = np.column_stack([base, np.full(table.count, math.nan)])
            column = len(names) - 1
            factor = np.ones(table.count)
        check_supported(circuit, names)
        self.names, self.base, self.part_factor, self.column = names, base, factor, column
        self.table = table
        self.count = table.count

    def points(self, xs: np.ndarray) -> np.ndarray:
        """(m·N, k) the sample table repeated for each candidate value, the part set to x·(1 + d)."""
        xs = np.atleast_1d(np.asarray(xs, dtype=float))
        block = np.tile(self.base, (xs.size, 1))
        block[:, self.column] = (xs[:, None] * self.part_factor[None, :]).ravel()
        return block


def _passing(circuit, setting: YieldSetting, xs, method: str, progress=None):
    """(m, N) every requirement met, and (m, N, r) each requirement met, per candidate and sample.

    progress : a :class:`~circuitode.tolerance.progress.Counter` told of the m·N runs, or None."""
    if progress is not None:
        progress.expect(np.atleast_1d(xs).size * setting.count)
    res = evaluate_points(circuit, setting.names, setting.points(xs), method=method,
                          progress=None if progress is None else progress.advance)
    m = np.atleast_1d(xs).size
    return res.all_pass.reshape(m, setting.count), (res.passes & res.ok[:, None]).reshape(m, setting.count, -1)


def yield_intervals(circuit, part: str, nominal_intervals, target: float, *, samples: int = 500, seed: int = 0,
                    points: int = 9, method: str = "exact", progress=None):
    """Intervals of x (inside the nominal ones) with yield ≥ target.

    progress : a Counter (:mod:`circuitode.tolerance.progress`) told of every simulated point, or None.

    Returns (intervals, details): intervals as (low, high, low_limit, high_limit) with the
    requirement failing most samples just outside each refined end (None at a nominal end
    that was kept); details : dict with the sample count, names, and (yield, Wilson low,
    Wilson high) at every end.
    """
    if not 0.0 < target < 1.0:
        raise CircuitodeError(f"--yield must lie between 0 % and 100 % (exclusive), got {100 * target:g} %")
    setting = YieldSetting(circuit, part, samples, seed)
    need = math.ceil(target * setting.count - 1e-9)  # passing samples needed
    requirements = tuple(circuit.requirements)
    runs = [0]

    def _passing_counted(circuit_, setting_, xs, method_):
        runs[0] += np.atleast_1d(xs).size * setting_.count
        return _passing(circuit_, setting_, xs, method_, progress)

    def surplus(x: float) -> float:
        ok, _ = _passing_counted(circuit, setting, [x], method)
        return float(ok.sum()) - need + 0.5  # > 0 exactly when the count reaches the target

    def limiting(x: float):
        _, each = _passing_counted(circuit, setting, [x], method)
        failures = (~each[0]).sum(axis=0)
        return requirements[int(np.argmax(failures))] if failures.any() else None

    out, ends = [], {}
    for iv in nominal_intervals:
        grid = np.geomspace(iv.low, iv.high, int(points)) if iv.low > 0 else np.linspace(iv.low, iv.high, points)
        ok, _ = _passing_counted(circuit, setting, grid, method)
        good = ok.sum(axis=1) >= need
        flips = np.flatnonzero(good[:-1] != good[1:])
        cuts = []
        for i in flips:
            x = brentq(surplus, grid[i], grid[i + 1], xtol=_RTOL * abs(grid[i + 1]), rtol=_RTOL)
            outside = x * (1 - 2 * _RTOL) if good[i + 1] else x * (1 + 2 * _RTOL)
            inside = x * (1 + 2 * _RTOL) if good[i + 1] else x * (1 - 2 * _RTOL)
            cuts.append((x, bool(good[i + 1]), limiting(outside), inside))
        edges = [(iv.low, True, iv.low_limit, iv.low)] + cuts + [(iv.high, False, iv.high_limit, iv.high)]
        state = bool(good[0])
        start = edges[0] if state else None
        for edge in edges[1:-1]:
            if edge[1] and start is None:
                start = edge
            elif not edge[1] and start is not None:
                out.append((start[0], edge[0], start[2], edge[2], start[3], edge[3]))
                start = None
        if start is not None and good[-1]:
            end = edges[-1]
            out.append((start[0], end[0], start[2], end[2], start[3], end[3]))
    for low, high, _a, _b, low_in, high_in in out:
        for x in (low_in, high_in):
            ok, _ = _passing_counted(circuit, setting, [x], method)
            passed = int(ok.sum())
            ends[x] = (passed / setting.count, *wilson_interval(passed, setting.count))
    details = {"samples": setting.count, "names": tuple(n for n in setting.table.names), "seed": int(seed),
               "target": target, "ends": ends, "runs": runs[0]}
    return out, details
