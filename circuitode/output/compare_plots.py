"""PNG of a comparison: measurement and model overlaid, the residual in a panel below."""
from __future__ import annotations

from pathlib import Path

import numpy as np

from ..quantities import si_scale
from .plots import QUANTITY_NAMES, _PALETTE

__all__ = ["plot_comparison"]


def plot_comparison(result, path: Path) -> Path:
    """Draw ``result`` (a CompareResult): top, measured (thin, grey-blue) and model (line),
    a dashed mark where the ringing figures start; bottom, measured − model."""
    from matplotlib.figure import Figure

    c = result.comparison
    tf, tp = si_scale(c.t)
    yf, yp = si_scale(np.concatenate([c.measured, c.model]))
    rf, rp = si_scale(c.residual)
    fig = Figure(figsize=(9.0, 6.0), dpi=110)  # no pyplot: no global state
    top, bottom = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": (3, 1.3)})
    top.plot(c.t * tf, c.measured * yf, color="#9fb7cc", lw=0.8, label=f"measured ({result.channel})")
    top.plot(c.t * tf, c.model * yf, color=_PALETTE[1], lw=1.5, label="model")
    fit = result.ringing.get("damped-sine fit")
    if fit is not None:  # mark where the ringing figures start
        top.axvline(fit.start * tf, color="#888888", lw=0.8, ls=(0, (4, 3)))
        top.text(fit.start * tf, 0.02, " ringing figures from here", transform=top.get_xaxis_transform(),
                 fontsize=7, color="#555555")
    bottom.plot(c.t * tf, c.residual * rf, color=_PALETTE[0], lw=0.8)
    bottom.axhline(0.0, color="#444444", lw=0.7)
    word = QUANTITY_NAMES.get(result.unit, "value")
    top.set_ylabel(f"{result.quantity} [{yp}{result.unit}]")
    bottom.set_ylabel(f"measured − model [{rp}{result.unit}]")
    bottom.set_xlabel(f"time [{tp}s] (model clock)")
    top.set_title(f"{result.circuit.title}: measured {word} against the model; "
                  f"rms error {c.rms_error * rf:.3g} {rp}{result.unit}", fontsize=10, loc="left")
    for ax in (top, bottom):
        ax.grid(True, color="#e3e3e3", lw=0.7)
        ax.set_axisbelow(True)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
        ax.margins(x=0)
    top.legend(loc="best", fontsize=8, frameon=False)
    fig.tight_layout()
    path = Path(path)
    fig.savefig(path)
    return path
