"""Warnings where a run's figures rest on thin ice: an output step that does not resolve
the fastest mode the recorded quantities see.

With an output step h and a mode of rate |λ| (1/s) seen by a recorded quantity,
h·|λ| > 1 means the rows are further apart than the mode's time constant (or
1/ω of its ringing): what happens between two rows is not in the rows.  The
figures computed from the solution itself — the window integrals, the located
extrema and crossings (:mod:`.between_rows`) — do not depend on h, except that an
extremum is looked for only where the slope changes sign from one row to the next
(a whole swing between two rows, ringing faster than the step, is missed); every figure
read from the rows does (damping ratio and frequency, undershoot, the rms, peak
and step figures of a power, and anything the run could not carry).  The warning names those and the step that resolves
the mode (h ≤ 1/|λ|).
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
    located = bool(getattr(waveforms, "extrema", None))
    from_rows = ["damping ratio and frequency", "undershoot"]
    if not located:
        from_rows[:0] = ["peaks, their instants and minima", "rise and settling times"]
    if not exact_integrals:
        from_rows.append("energy, I²t, rms and mean")
    carried = []
    if exact_integrals:
        carried.append("energy, I²t, rms and mean" + (", exact" if waveforms.method == "exact" else ""))
    if located:
        carried.append("the peaks, minima, rise and settling times of voltages and currents (located "
                       "between rows, but a swing that begins and ends between two rows is not seen)")
    text = (f"the output step {format_si(step, 's')} is coarser than the fastest mode the recorded "
            f"quantities see (time constant {format_si(1.0 / rate, 's')}, h·|λ| = {step * rate:.3g}): "
            f"{', '.join(from_rows)} and the rms and peak of a power are read from the rows and may "
            f"miss what happens between them; a step of {format_si(1.0 / rate, 's')} or less resolves it")
    if carried:
        text += f"; independent of the step, from the solution: {'; '.join(carried)}"
    return [text]
