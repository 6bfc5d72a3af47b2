"""The settings of a transient run: end time, output step or points, method, initial state.

``_settings`` merges keyword arguments with the netlist's ``transient`` statement
and checks them, with our own error words; ``_output_grid`` gives the requested
output instants.  (Split out of :mod:`circuitode.transient`, unchanged.)
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import CircuitodeError
from ..model import INITIAL_STATES, Circuit

__all__ = ["DEFAULT_POINTS"]

#: Output points when neither a step nor a number of points is given.
DEFAULT_POINTS = 2001


@dataclass(frozen=True)
class _Settings:
    until: float
    step: float | None
    points: int
    method: str
    initial: str


def _number(value, what: str) -> float | None:
    """``value`` as a float (None stays None), or our error naming the setting."""
    if value is None:
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise CircuitodeError(f"{what} must be a number, got {value!r}") from None
    if not np.isfinite(number):
        raise CircuitodeError(f"{what} must be a finite number, got {value!r}")
    return number


def _settings(circuit: Circuit, method, step, until, points, initial) -> _Settings:
    if not isinstance(circuit, Circuit):
        raise CircuitodeError(
            f"simulate needs a Circuit (from circuitode.load), got {type(circuit).__name__}")
    a = circuit.analysis
    until = until if until is not None else (a.until if a is not None else None)
    if until is None:
        raise CircuitodeError(
            "no end time for the transient: add `transient until …` to the netlist or pass --until")
    step = step if step is not None else (a.step if a is not None else None)
    points = points if points is not None else (a.points if a is not None else None)
    method = method if method is not None else (a.method if a is not None else "auto")
    initial = initial if initial is not None else (a.initial if a is not None else "given")
    until, step, points = (_number(until, "the end time (until)"), _number(step, "the step"),
                           _number(points, "points"))
    if not until > 0:
        raise CircuitodeError(f"the transient end time must be a positive number of seconds, got {until!r}")
    if step is not None and not (0 < step <= until):
        raise CircuitodeError(
            f"the step must be a positive time no longer than the window ({until:g} s), got {step!r}")
    if points is None:
        points = DEFAULT_POINTS
    if int(points) != points or points < 2:
        raise CircuitodeError(f"points must be a whole number of at least 2, got {points!r}")
    if step is not None and until / step > 5e7:
        raise CircuitodeError(
            f"step {step:g} s over {until:g} s would record {until / step:.3g} points; use a larger step")
    if initial not in INITIAL_STATES:
        raise CircuitodeError(
            f"unknown initial state {initial!r}; choose one of: {', '.join(INITIAL_STATES)}")
    return _Settings(float(until), None if step is None else float(step), int(points),
                     str(method).strip().lower(), initial)


def _output_grid(s: _Settings) -> np.ndarray:
    """Requested output times (s): every step from 0 (and ``until``), else ``points`` evenly."""
    if s.step is None:
        return np.linspace(0.0, s.until, s.points)
    count = int(np.floor(s.until / s.step * (1 + 1e-12)))
    grid = s.step * np.arange(count + 1)
    grid = grid[grid <= s.until]
    if s.until - grid[-1] > 1e-9 * s.step:
        grid = np.append(grid, s.until)
    else:
        grid[-1] = s.until
    return grid
