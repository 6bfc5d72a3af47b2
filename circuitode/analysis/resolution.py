"""Warnings where a run's figures rest on thin ice: an output step that does not resolve
the fastest mode the recorded quantities see.

With an output step h and a mode of rate |λ| (1/s) seen by a recorded quantity,
h·|λ| > 1 means the rows are further apart than the mode's time constant (or
1/ω of its ringing): what happens between two rows is not in the rows.  The
figures computed from the solution itself — the window integrals, the located
extrema (each interval searched at sub-points, :mod:`circuitode.transient.extrema`)
— do not depend on h, unless the sub-point search hit its cap (then the warning says
so).  The rise and settling times are located between rows too, but in the interval
the rows point to, so a crossing that begins and ends between two rows is missed:
they stay with the figures read from the rows (damping ratio and frequency,
undershoot, the rms, peak and step figures of a power, and anything the run could
not carry).  The warning names those and the step that resolves the mode (h ≤ 1/|λ|).
"""
from __future__ import annotations

from typing import Any

import numpy as np

from ..quantities import format_si

__all__ = ["resolution_warnings"]


def resolution_warnings(waveforms: Any) -> list[str]:
    """Plain-text warnings (empty list when the rows resolve every seen mode).

    waveforms : a run's ``Waveforms`` (``t`` s, ``fastest_seen_rate`` 1/s,
    ``integrals``, ``extrema``, ``method``).
    """
    rate = float(getattr(waveforms, "fastest_seen_rate", 0.0) or 0.0)
    t = np.asarray(waveforms.t, dtype=float)
    if rate <= 0 or t.size < 2:
        return []
    step = float(np.max(np.diff(t)))
    if step * rate <= 1.0:
        return []
    exact_integrals = bool(getattr(waveforms, "integrals", None))
    extrema = getattr(waveforms, "extrema", None) or {}
    located = bool(extrema)
    capped = any(getattr(e, "capped", False) for e in extrema.values())
    from_rows = ["rise and settling times", "damping ratio and frequency", "undershoot"]
    if not located:
        from_rows[:0] = ["peaks, their instants and minima"]
    if not exact_integrals:
        from_rows.append("energy, I²t, rms and mean")
    carried = []
    if exact_integrals:
        carried.append("energy, I²t, rms and mean" + (", exact" if waveforms.method == "exact" else ""))
    if located:
        carried.append("the peaks and minima of voltages and currents and their instants (located on the "
                       "solution, every output interval searched"
                       + (", but the search hit its cap of sub-points: a swing shorter than the sub-point "
                          "spacing may be missed)" if capped else ")"))
    text = (f"the output step {format_si(step, 's')} is coarser than the fastest mode the recorded "
            f"quantities see (time constant {format_si(1.0 / rate, 's')}, h·|λ| = {step * rate:.3g}): "
            f"{', '.join(from_rows)} and the rms and peak of a power are read from the rows and may "
            f"miss what happens between them; a step of {format_si(1.0 / rate, 's')} or less resolves it")
    if carried:
        text += f"; independent of the step, from the solution: {'; '.join(carried)}"
    return [text]
