"""What a netlist asks of a run besides its parts: the transient window, requirements, component spreads.

:class:`Analysis` is the time window and method (s, names as written);
:class:`Requirement` a limit on one of the :data:`FIGURES` of a probed
quantity; :class:`Spread` a component tolerance (a relative fraction, never
called rtol/atol) and :class:`Recipe` the expression that recomputes an
element value from sampled parameters.  Plain data: the analysis, limits and
tolerance stages give them meaning.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping, Protocol

from ..errors import Where
from .probes import Probe

__all__ = ["INITIAL_STATES", "FIGURES", "Analysis", "Requirement", "Spread", "Recipe"]

INITIAL_STATES = ("rest", "given", "steady")

#: Canonical figure names a requirement may limit (see measure.py).
FIGURES = (
    "peak",
    "minimum",
    "final",
    "overshoot",
    "undershoot",
    "rise_time",
    "settling_time",
    "rms",
    "mean",
    "i2t",
    "energy",
    "max_slope",
    "damping_ratio",
    "damped_frequency",
)


@dataclass(frozen=True)
class Analysis:
    """The transient window.

    until : end time, s.  step : output (and fixed-step) step, s, or None.
    points : number of output points when no step is given.
    method : integrator name ("auto", "rk4", "rk45", "dop853", "radau", "bdf", "exact").
    initial : "rest" (all states zero), "given" (stated initial values, zero elsewhere),
    "steady" (DC steady state of the configuration at t = 0⁻).
    """

    until: float
    step: float | None = None
    points: int | None = None
    method: str = "auto"
    initial: str = "given"
    where: Where | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class Requirement:
    """A limit a figure of a probed quantity must meet, e.g. peak current through R1 < 2 A.

    figure : one of FIGURES.  comparison : "<", "<=", ">", ">=".  limit : SI value
    in the figure's unit (% for overshoot/undershoot, s for times, A²s for i2t, J for energy).
    """

    figure: str
    probe: Probe
    comparison: str
    limit: float
    where: Where | None = field(default=None, compare=False, repr=False)

    @property
    def label(self) -> str:
        return f"{self.figure.replace('_', ' ')} of {self.probe.label} {self.comparison} {self.limit:g}"


@dataclass(frozen=True)
class Spread:
    """A component tolerance (never called rtol/atol here).

    name : the parameter it belongs to (a `param` name, or the element name for an
    inline tolerance).  nominal : SI value.  relative : fraction (0.05 for ± 5 %).
    distribution : "normal" (σ = relative/3, truncated at ±relative) or "uniform".
    """

    name: str
    nominal: float
    relative: float
    distribution: str = "normal"
    where: Where | None = field(default=None, compare=False, repr=False)


class Recipe(Protocol):
    """An expression over parameter names; evaluates on floats or numpy arrays alike."""

    names: frozenset[str]

    def evaluate(self, env: Mapping[str, Any]) -> Any: ...

