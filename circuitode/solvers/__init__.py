"""Integrators for one linear segment ``x' = A x + B u(t)``; they know nothing of circuits.

``get_integrator(name, step=..., rtol=..., atol=...)`` looks a method up in
:data:`METHODS`; the driver asks an integrator's capability attributes
(``adaptive``, ``stiff``, ``fixed_step``, ``exact``, ``uses_jacobian``) and
never tests its class.
"""
from __future__ import annotations

from ..errors import CircuitodeError
from .auto import EXACT_MAX_STATES, STIFF_RATIO, choose_method, stiffness_ratio
from .base import Integrator, LinearEvent, LinearSegment, SegmentResult
from .exact import Exact
from .rk4 import RK4, check_rk4_step, rk4_stability_limit
from .scipy_ivp import BDF, DOP853, RK45, Radau

__all__ = [
    "METHODS",
    "MethodRequestError",
    "get_integrator",
    "Integrator",
    "LinearSegment",
    "LinearEvent",
    "SegmentResult",
    "RK4",
    "RK45",
    "DOP853",
    "Radau",
    "BDF",
    "Exact",
    "rk4_stability_limit",
    "check_rk4_step",
    "choose_method",
    "stiffness_ratio",
    "EXACT_MAX_STATES",
    "STIFF_RATIO",
]

class MethodRequestError(CircuitodeError, ValueError):
    """An integrator request that cannot be served: an unknown name, or a fixed-step
    method without a step.  Exit code 2 (bad input)."""


#: Integrator classes by the name a user writes ("auto" is resolved by the driver).
METHODS: dict[str, type[Integrator]] = {
    cls.name: cls for cls in (RK4, RK45, DOP853, Radau, BDF, Exact)
}


def get_integrator(name: str, *, step: float | None = None, rtol: float = 1e-6,
                   atol: float = 1e-9, event_tol: float = 1e-12) -> Integrator:
    """An integrator by name.

    Raises
    ------
    MethodRequestError (a CircuitodeError and a ValueError)
        for an unknown name (listing the valid ones) or a fixed-step method without a step.

    Examples
    --------
    >>> get_integrator("radau").stiff
    True
    >>> get_integrator("euler")
    Traceback (most recent call last):
    ...
    circuitode.solvers.MethodRequestError: unknown method 'euler'; choose one of: bdf, dop853, exact, radau, rk4, rk45 (or auto)
    """
    key = str(name).strip().lower()
    if key not in METHODS:
        valid = ", ".join(sorted(METHODS))
        raise MethodRequestError(f"unknown method {name!r}; choose one of: {valid} (or auto)")
    cls = METHODS[key]
    if cls.fixed_step and step is None:
        raise MethodRequestError(
            f"method {key} takes fixed steps and needs a step; add `step …` to the "
            "transient statement (or pass --step), or use method exact"
        )
    return cls(step=step, rtol=rtol, atol=atol, event_tol=event_tol)
