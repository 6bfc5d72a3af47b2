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

from ..errors import NetlistError, Where
from ..quantities import format_si
from .probes import Probe

__all__ = ["INITIAL_STATES", "FIGURES", "Analysis", "Requirement", "Spread", "Recipe", "window_words",
           "check_windows"]

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
    start, stop : s, the part of the run the figure is taken over (``from … to …``,
    ``after …``); None for the start or the end of the run.  A window's figure sees the
    waveform just after an event at ``start`` and just before one at ``stop``.
    """

    figure: str
    probe: Probe
    comparison: str
    limit: float
    where: Where | None = field(default=None, compare=False, repr=False)
    start: float | None = None
    stop: float | None = None

    @property
    def windowed(self) -> bool:
        """True when the figure is taken over part of the run only."""
        return self.start is not None or self.stop is not None

    @property
    def quantity(self) -> str:
        """What the figure is taken of: the probe's label, and the window when there is one
        ("current through F1, 0 s – 10 ms")."""
        window = window_words(self.start, self.stop)
        return f"{self.probe.label}, {window}" if window else self.probe.label

    @property
    def label(self) -> str:
        return f"{self.figure.replace('_', ' ')} of {self.quantity} {self.comparison} {self.limit:g}"


def window_words(start: float | None, stop: float | None) -> str:
    """"0 s – 10 ms", "after 2 ms", "before 5 ms", or "" for the whole run (times in s)."""
    if start is None and stop is None:
        return ""
    if stop is None:
        return f"after {format_si(start, 's', 9)}"
    if start is None:
        return f"before {format_si(stop, 's', 9)}"
    return f"{format_si(start, 's', 9)} – {format_si(stop, 's', 9)}"


def check_windows(requirements, until: float) -> None:
    """Refuse a requirement whose window is empty or reaches outside the run [0, until] (s).

    Raises NetlistError at the requirement's place, saying what to change.
    """
    for r in requirements:
        start, stop = getattr(r, "start", None), getattr(r, "stop", None)
        where = getattr(r, "where", None)
        if start is not None and stop is not None and not start < stop:
            raise NetlistError(
                f"the window of this requirement is empty: it starts at {format_si(start, 's')} and "
                f"stops at {format_si(stop, 's')}", where, "write the earlier instant after 'from' and the later "
                "after 'to'")
        for instant, word in ((start, "starts"), (stop, "stops")):
            if instant is not None and not 0.0 <= instant <= until * (1 + 1e-12):
                raise NetlistError(
                    f"the window of this requirement {word} at {format_si(instant, 's')}, outside the run "
                    f"(0 s to {format_si(until, 's')})", where,
                    f"choose instants between 0 s and {format_si(until, 's')}, or run longer ('until')")
        if start is not None and stop is None and start >= until * (1 - 1e-12):
            raise NetlistError(f"the window of this requirement starts at the end of the run "
                               f"({format_si(until, 's')}) and holds nothing", where,
                               "choose an earlier instant after 'after', or run longer ('until')")
        if stop is not None and start is None and stop <= 0.0:
            raise NetlistError("the window of this requirement stops at 0 s and holds nothing", where,
                               "choose a later instant after 'before'")


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

