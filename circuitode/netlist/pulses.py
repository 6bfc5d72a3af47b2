"""The timing of a ``pulses`` waveform from its written fields.

A pulse train is written in IEEE Std 181 terms: ``base`` and ``top`` state
levels, ``every`` (pulse repetition period), the flat top either as ``hold``
or through ``duty``, and the transition durations as ``edges`` (both) or
``rising`` / ``falling``; ``from`` is where the first rising edge starts and
``repeats`` how many pulses there are.

``duty`` follows IEEE Std 181-2011's definitions of pulse duration and duty
factor (clause 3; clause number from memory):
the pulse duration runs between the 50 % reference-level instants of the two
edges, so duty · every = rising/2 + hold + falling/2.  With sharp edges this is
the fraction of each period spent at ``top``, as for a toggling switch.
"""
from __future__ import annotations

import math
from typing import Any

from ..errors import NetlistError, Where
from ..quantities import format_si

__all__ = ["pulse_times"]


def pulse_times(resolved: dict[str, Any], written: dict[str, Any], where: Where) -> dict[str, Any]:
    """Keyword arguments of :class:`~circuitode.model.periodic.PulseTrain` from resolved pulse fields.

    Parameters
    ----------
    resolved : field values in SI keyed by dataclass attribute (``low``, ``high``, ``period``, ``width``,
        ``duty``, ``edges``, ``rise``, ``fall``, ``delay``, ``count``); None where a field was not written.
    written : the written fields by their word, for error locations.
    where : the waveform's location, for a missing field.

    Raises
    ------
    NetlistError : conflicting or missing edge or hold fields, or a pulse that does not fit in its period.
    """
    out = dict(resolved)
    edges, duty = out.pop("edges"), out.pop("duty")
    if edges is not None:
        for word in ("rising", "falling"):
            if word in written:
                raise NetlistError(f"'edges' already sets both transition durations; '{word}' would repeat it",
                                   written[word].where, "write 'edges T' for equal edges, or 'rising T1 falling T2'")
        out["rise"] = out["fall"] = edges
    out["rise"] = 0.0 if out["rise"] is None else out["rise"]
    out["fall"] = 0.0 if out["fall"] is None else out["fall"]
    period, rise, fall = out["period"], out["rise"], out["fall"]
    if duty is None and out["width"] is None:
        raise NetlistError("a pulses waveform needs 'hold' (the flat top) or 'duty'", where,
                           "add e.g. 'hold 10 us' or 'duty 50 %'")
    if duty is not None:
        if out["width"] is not None:
            raise NetlistError("give either 'hold' or 'duty', not both", written["duty"].where,
                               "'duty' sets the hold time from the period and the edges")
        if not 0.0 < duty <= 1.0:
            raise NetlistError("the duty must lie above 0 % and at most 100 %", written["duty"].value.where,
                               "write e.g. 'duty 50 %'")
        hold = duty * period - (rise + fall) / 2.0
        if hold < -1e-12 * period:
            raise NetlistError(
                f"a duty of {duty * 100:g} % is shorter than half the two edges together", written["duty"].value.where,
                "the duty counts from the middle of the rising edge to the middle of the falling edge; "
                "raise the duty or shorten the edges")
        out["width"] = max(hold, 0.0)
    if period > 0 and out["width"] >= 0 and rise >= 0 and fall >= 0 \
            and rise + out["width"] + fall > period * (1.0 + 1e-12):
        word = "duty" if duty is not None else "hold"
        raise NetlistError("the pulse (rising edge, hold, falling edge) is longer than its period",
                           written[word].value.where if word in written else where,
                           f"rising + hold + falling = {format_si(math.fsum((rise, out['width'], fall)), 's')} "
                           f"exceeds 'every' = {format_si(period, 's')}; shorten the pulse or lengthen 'every'")
    return out
