"""Refusing hopeless runs of the explicit adaptive methods (rk45, dop853) on stiff circuits.

An explicit method's step is bounded by its stability region whatever the
tolerance: on a mode λ it needs h·|λ| ≲ r, with r the reach of the region along
the negative real axis — about 3.3 for Dormand–Prince 5(4) and about 6 for
DOP853 (Hairer, Nørsett & Wanner, *Solving ODEs I*, ch. II.4 stability
diagrams, and Hairer & Wanner, *Solving ODEs II*, ch. IV.2; values from memory).
So a window T costs at least T·|λ|max / r steps.  Past
:data:`MAX_EXPLICIT_STEPS` the run would take many minutes to hours for what
radau, bdf or exact do in a handful of steps: it is refused before it starts,
in the style of the rk4 stability guard, unless the caller insists.
"""
from __future__ import annotations

import numpy as np

from ..errors import UnstableStepError

__all__ = ["MAX_EXPLICIT_STEPS", "STABILITY_REACH", "check_explicit_work"]

#: Least number of steps above which an explicit adaptive run is refused.
MAX_EXPLICIT_STEPS = 2e6
#: Reach of each method's stability region on the negative real axis (h·|λ|).
STABILITY_REACH = {"rk45": 3.3, "dop853": 6.0}


def check_explicit_work(name: str, eigenvalues, window: float, where: str = "") -> None:
    """Refuse ``name`` when its least step count on ``window`` (s) exceeds the cap.

    eigenvalues : complex, 1/s, of every configuration the run may reach.
    where : words naming the configuration of the fastest mode.

    Raises
    ------
    UnstableStepError naming the fastest mode, the estimated steps and the methods
    to use instead.
    """
    reach = STABILITY_REACH.get(name)
    lam = np.asarray(eigenvalues, dtype=complex).reshape(-1)
    if reach is None or lam.size == 0:
        return
    fastest = float(np.max(np.abs(lam)))
    steps = window * fastest / reach
    if steps <= MAX_EXPLICIT_STEPS:
        return
    from ..quantities import format_si

    place = f" {where}" if where else ""
    raise UnstableStepError(
        f"method {name} would need at least {steps:.2g} steps: the fastest mode{place} has "
        f"|λ| = {fastest:.3g} 1/s (time constant {format_si(1 / fastest, 's')}), which keeps an "
        f"explicit method's step below about {format_si(reach / fastest, 's')} over the "
        f"{format_si(window, 's')} window; use method radau or bdf (stiff) or exact, or insist "
        "(--insist, simulate(..., insist=True)) to run it anyway",
        largest_stable_step=reach / fastest,
    )
