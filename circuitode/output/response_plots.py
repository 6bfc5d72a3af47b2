"""PNG Bode plots of frequency responses: magnitude above, phase below, resonances marked with Q."""
from __future__ import annotations

from pathlib import Path
from typing import Sequence

import numpy as np

from ..quantities import format_si
from .plots import _PALETTE

__all__ = ["plot_response"]

#: Relative level below which a computed response is rounding (double precision).
ROUNDING_FLOOR = 1e-15


def plot_response(curves: Sequence, path: Path, *, title: str = "") -> Path:
    """Draw the curves of one quantity (one line per switch configuration).

    Magnitude is in dB (20 log10) for a ratio of like units, else |H| on a log
    axis in the curve's unit; phase in degrees.  Each resonance gets a dot and
    "f₀, Q" (Q from the nearest pole pair).
    """
    from matplotlib.figure import Figure

    fig = Figure(figsize=(9.0, 6.2), dpi=110)  # no pyplot: no global state
    top, bottom = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": (3, 2)})
    unit = curves[0].unit
    in_db = unit in ("V/V", "A/A", "W/W")
    hidden = False
    for i, cu in enumerate(curves):
        color = _PALETTE[i % len(_PALETTE)]
        # below 1e-15 of the curve's largest value the computed response is rounding of the
        # double-precision solve (a ladder far above its cut-off): neither magnitude nor phase
        # means anything there, so it is not drawn
        noise = cu.magnitude < ROUNDING_FLOOR * np.max(cu.magnitude)
        hidden |= bool(noise.any())
        shown = np.where(noise, np.nan, cu.magnitude)
        mag = 20 * np.log10(shown) if in_db else shown
        top.plot(cu.frequency_hz, mag, color=color, lw=1.4, label=cu.configuration)
        bottom.plot(cu.frequency_hz, np.where(noise, np.nan, cu.phase_deg), color=color, lw=1.2)
        for r in cu.resonances:
            y = 20 * np.log10(r.magnitude) if in_db else r.magnitude
            top.plot(r.frequency_hz, y, "o", ms=5, color=color, mec="white", mew=0.8, zorder=5)
            top.annotate(f"{format_si(r.frequency_hz, 'Hz', 3)}, Q = {r.pole_q:.3g}", (r.frequency_hz, y),
                         xytext=(6, 6 if r.kind == "peak" else -14), textcoords="offset points",
                         fontsize=8, color=color)
    top.set_xscale("log")
    if not in_db:
        top.set_yscale("log")
    top.set_ylabel(f"|{curves[0].label}| [dB]" if in_db else f"|{curves[0].label}| [{unit}]")
    bottom.set_ylabel("phase [°]")
    if hidden:
        top.text(0.99, 0.02, "not drawn where |H| < 1e-15 of its largest value (−300 dB): rounding",
                 transform=top.transAxes, ha="right", va="bottom", fontsize=7, color="#555555")
    bottom.set_xlabel("frequency [Hz]")
    bottom.set_yticks(np.arange(-180, 181, 90))
    for ax in (top, bottom):
        ax.grid(True, which="both", color="#e3e3e3", lw=0.7)
        ax.set_axisbelow(True)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
    top.legend(loc="best", fontsize=8, frameon=False)
    if title:
        fig.suptitle(title, fontsize=11, x=0.01, ha="left")
    fig.tight_layout()
    path = Path(path)
    fig.savefig(path)
    return path
