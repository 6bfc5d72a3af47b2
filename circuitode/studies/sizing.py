"""Sizing: the values of one part (or parameter) over which every ``require`` of the netlist holds.

Method
------
1. Sweep the range (``points`` values, evenly spaced in logarithm for positive
   ranges) through the batch engine in one vectorised run, recording every
   requirement's margin.
2. For each requirement, every sign change of its margin between neighbouring
   points is refined by bracketing root-finding (:func:`scipy.optimize.brentq`,
   one single-point run per evaluation) to a relative 1e-12 in the part's value.
   Margins need not be monotone: each sign change is refined on its own.
3. The roots cut the range into pieces; the midpoint of each piece is run (again
   one vectorised run) to tell which pieces meet every requirement; neighbouring
   passing pieces merge into intervals.  Each end of an interval is either the end
   of the range searched or the root of the requirement that limits it there.

A margin that dips below zero and comes back between two neighbouring sweep
points is missed: raise ``points`` when a figure can change quickly with the
part (resonances).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np
from scipy.optimize import brentq

from ..errors import CircuitodeError
from ..tolerance.progress import counter
from .grid import evaluate_points, parse_axis, study_circuit, unit_of
from .preferred import preferred_inside

__all__ = ["Interval", "SizingResult", "size", "parse_range"]

_RTOL = 1e-12  # relative precision of each root in the part's value


@dataclass(frozen=True)
class Interval:
    """A stretch [low, high] of the part's value (SI) over which every requirement holds.

    low_limit, high_limit : the Requirement that ends the interval there, or None where
    the interval reaches the end of the range searched.
    """

    low: float
    high: float
    low_limit: Any
    high_limit: Any


@dataclass
class SizingResult:
    """The outcome of :func:`size`.

    part : the name sized.  unit : its SI unit.  searched : (low, high) SI.
    intervals : passing intervals, ascending.  tolerance : the part's relative
    tolerance from the netlist (0 if none).  preferred : series → one array per
    interval of the E12 or E24 values (IEC 60063) whose tolerance band lies inside it.  grid : (n,) values
    swept; grid_margins : (n, r) margins there.  evaluations : simulated points in all.
    """

    part: str
    unit: str
    searched: tuple[float, float]
    intervals: list
    requirements: tuple
    tolerance: float = 0.0
    preferred: dict = field(default_factory=dict)
    grid: np.ndarray = field(default_factory=lambda: np.zeros(0))
    grid_margins: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    evaluations: int = 0
    title: str = ""
    yield_target: float | None = None
    yield_details: dict | None = None

    @property
    def exit_code(self) -> int:
        """0 when some value meets every requirement, else 1."""
        return 0 if self.intervals else 1

    def __repr__(self) -> str:
        from ..quantities import format_si

        spans = "; ".join(f"{format_si(iv.low, self.unit)} to {format_si(iv.high, self.unit)}"
                          for iv in self.intervals) or "no value meets every requirement"
        return f"<SizingResult {self.part}: {spans}>"

    def _repr_html_(self) -> str:
        from html import escape

        from .report import size_text

        return f"<pre>{escape(size_text(self))}</pre>"


def parse_range(text: Any, circuit, part: str) -> tuple[float, float]:
    """``"1Ω..1kΩ"`` (or a pair of SI values) → (low, high), unit-checked against the part."""
    if not isinstance(text, str):
        low, high = (float(v) for v in text)
    else:
        if ".." not in text:
            raise CircuitodeError(f"cannot read --range {text!r}; write LOW..HIGH, e.g. 1Ω..1kΩ")
        axis = parse_axis(f"{part}={text.replace(' ', '')}/2", circuit)
        low, high = (float(v) for v in axis.values)
    if not (math.isfinite(low) and math.isfinite(high) and high > low):
        raise CircuitodeError(f"--range needs LOW < HIGH, got {low:g} and {high:g}")
    return low, high


def size(netlist: Any, part: str, within: Any, *, overrides: Mapping[str, Any] | None = None, points: int = 33,
         method: str = "exact", yield_target: float | None = None, yield_samples: int = 500, seed: int = 0,
         progress: Any = True) -> SizingResult:
    """Find the values of ``part`` within ``within`` for which every requirement holds.

    Parameters
    ----------
    netlist : a ``.cnet`` path (or a Circuit carrying a recipe for ``part``).
    part : a parameter name or a part name (``R1``, ``K_main.on``).
    within : ``"1Ω..1kΩ"`` or (low, high) in SI units.
    overrides : names → values set first (``--set``).
    points : values swept before refining (at least 3).
    method : "exact" or "rk4".
    yield_target : a fraction (0.99): the intervals where at least this share of the
        tolerance samples meets every requirement (see :mod:`.yield_sizing`).
    yield_samples, seed : size and seed of the Latin-hypercube sample table for the yield.
    progress : True shows a tqdm bar of the simulated points (on a terminal's stderr or in a
        notebook; its total grows as the refinement finds work), False none; a callable(count)
        is told instead how many points each run held.
    """
    if int(points) < 3:
        raise CircuitodeError(f"--points must be at least 3, got {points}")
    circuit = study_circuit(netlist, [part], overrides, "--part")
    requirements = tuple(circuit.requirements)
    if not requirements:
        raise CircuitodeError("nothing to size against: the netlist has no 'require' statement")
    low, high = parse_range(within, circuit, part)
    unit = unit_of(circuit, part) or ""
    grid = np.geomspace(low, high, int(points)) if low > 0 else np.linspace(low, high, int(points))
    with counter(progress, grid.size, f"sizing {part}", "point") as bar:
        swept = evaluate_points(circuit, [part], grid[:, None], method=method, progress=bar.advance)
        margins = np.where(swept.ok[:, None], swept.margins, np.nan)
        evaluations = grid.size

        def margin(x: float, r: int) -> float:
            nonlocal evaluations
            evaluations += 1
            bar.expect(1)
            one = evaluate_points(circuit, [part], np.array([[x]]), method=method, progress=bar.advance)
            value = float(one.margins[0, r]) if one.ok[0] else math.nan
            return value if math.isfinite(value) else -math.inf  # an unmeasurable figure fails

        roots: list[tuple[float, int]] = []
        for r in range(len(requirements)):
            m = margins[:, r]
            cells = np.flatnonzero(np.isfinite(m[:-1]) & np.isfinite(m[1:]) & ((m[:-1] > 0) != (m[1:] > 0)))
            for i in cells:
                x = brentq(margin, grid[i], grid[i + 1], args=(r,), xtol=_RTOL * abs(grid[i + 1]), rtol=_RTOL)
                roots.append((float(x), r))
        intervals = _intervals(circuit, part, low, high, roots, requirements, method, bar)
        evaluations += len(roots) + 1
        spread = circuit.spreads.get(part)
        tolerance = float(spread.relative) if spread is not None else 0.0
        details = None
        if yield_target is not None:
            from .yield_sizing import yield_intervals

            found, details = yield_intervals(circuit, part, intervals, float(yield_target), samples=yield_samples,
                                             seed=seed, method=method, progress=bar)
            intervals = [Interval(a, b, la, lb) for a, b, la, lb, _ai, _bi in found]
            details["inside_ends"] = [(ai, bi) for *_rest, ai, bi in found]
            tolerance = 0.0  # the yield already holds the part's tolerance
    preferred = {}
    if intervals and unit in ("Ω", "F", "H") and low > 0:
        for series in ("E12", "E24"):
            preferred[series] = [preferred_inside(series, iv.low, iv.high, tolerance) for iv in intervals]
    return SizingResult(part, unit, (low, high), intervals, requirements, tolerance, preferred, grid, margins,
                        evaluations, circuit.title, yield_target, details)


def _intervals(circuit, part: str, low: float, high: float, roots, requirements, method: str, bar) -> list:
    """Cut [low, high] at the roots, test the middle of each piece, merge passing pieces."""
    cuts = sorted(roots)
    edges = [low] + [x for x, _ in cuts] + [high]
    owners = [None] + [requirements[r] for _, r in cuts] + [None]
    a, b = np.array(edges[:-1]), np.array(edges[1:])
    middles = np.sqrt(a * b) if low > 0 else 0.5 * (a + b)
    bar.expect(middles.size)
    verdict = evaluate_points(circuit, [part], middles[:, None], method=method, progress=bar.advance).all_pass
    out: list[Interval] = []
    for j, ok in enumerate(verdict):
        if not ok or edges[j + 1] <= edges[j]:
            continue
        if out and out[-1].high == edges[j]:
            out[-1] = Interval(out[-1].low, edges[j + 1], out[-1].low_limit, owners[j + 1])
        else:
            out.append(Interval(edges[j], edges[j + 1], owners[j], owners[j + 1]))
    return out
