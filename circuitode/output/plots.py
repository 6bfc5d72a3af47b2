"""PNG plots of a run: recorded waveforms with switching events and peaks marked.

Matplotlib is imported inside the functions and figures are built as
``matplotlib.figure.Figure`` objects (no pyplot state, no backend switch), so
importing circuitode never pulls it in and a notebook keeps its own backend.  Axes read in engineering
notation (ms, kA …) through :func:`circuitode.netlist.quantities.si_scale`.
"""
from __future__ import annotations

from pathlib import Path
from typing import Any, Sequence

import numpy as np

from ..netlist.quantities import format_si, si_scale

__all__ = ["plot_waveforms", "waveform_figure", "QUANTITY_NAMES"]

#: Axis words per unit.
QUANTITY_NAMES = {"V": "voltage", "A": "current", "W": "power"}

_PALETTE = ("#1b6ca8", "#d1495b", "#2e8b57", "#8e44ad", "#e08e0b", "#00798c", "#6c757d", "#9c6644")


def plot_waveforms(
    waveforms: Any,
    path: Path,
    *,
    title: str = "",
    labels: Sequence[str] | None = None,
    max_panels: int = 4,
    max_traces: int = 6,
) -> Path:
    """Write the PNG of :func:`waveform_figure` to ``path`` and return the path."""
    path = Path(path)
    waveform_figure(waveforms, path, title=title, labels=labels, max_panels=max_panels, max_traces=max_traces)
    return path


def waveform_figure(
    waveforms: Any,
    path: Path | str | None = None,
    *,
    title: str = "",
    labels: Sequence[str] | None = None,
    max_panels: int = 4,
    max_traces: int = 6,
):
    """Draw the recorded signals, one panel per unit (voltages, currents, powers).

    Parameters
    ----------
    waveforms : the transient engine's Waveforms (``t`` s, ``signals``, ``units``, ``events``).
    path : PNG file to write, or None to write nothing (a notebook shows the Figure).
    title : figure title (the circuit's).
    labels : which signals to draw (default: all, grouped by unit).
    max_panels, max_traces : caps that keep a large ladder readable; the
        signals left out are still in the CSV.

    Returns
    -------
    The matplotlib Figure (built without pyplot, so no global state and no backend change).
    """
    from matplotlib.figure import Figure

    t = np.asarray(waveforms.t, dtype=float)
    labels = list(labels if labels is not None else waveforms.signals)
    groups: dict[str, list[str]] = {}
    for label in labels:
        groups.setdefault(waveforms.units.get(label, ""), []).append(label)
    order = sorted(groups, key=lambda u: ("V", "A", "W").index(u) if u in ("V", "A", "W") else 9)
    order = order[:max_panels]
    tf, tp = si_scale(t)

    fig = Figure(figsize=(9.0, 1.2 + 2.5 * len(order)), dpi=110)
    axes = fig.subplots(len(order), 1, sharex=True, squeeze=False)
    axes = axes[:, 0]
    for ax, unit in zip(axes, order):
        members = groups[unit][:max_traces]
        values = np.concatenate([np.asarray(waveforms.signals[m], dtype=float) for m in members])
        yf, yp = si_scale(values)
        for i, label in enumerate(members):
            y = np.asarray(waveforms.signals[label], dtype=float)
            color = _PALETTE[i % len(_PALETTE)]
            ax.plot(t * tf, y * yf, color=color, lw=1.4, label=label)
            k = int(np.nanargmax(np.abs(y))) if y.size else 0
            if y.size and np.isfinite(y[k]) and y[k] != 0:
                ax.plot(t[k] * tf, y[k] * yf, "o", ms=4.5, color=color, mec="white", mew=0.8, zorder=5)
                ax.annotate(format_si(y[k], unit, 3), (t[k] * tf, y[k] * yf), xytext=(6, 6 if y[k] > 0 else -12),
                            textcoords="offset points", fontsize=8, color=color)
        if len(groups[unit]) > max_traces:
            ax.text(0.99, 0.02, f"+{len(groups[unit]) - max_traces} more in the CSV", transform=ax.transAxes,
                    ha="right", va="bottom", fontsize=7, color="#555555")
        word = QUANTITY_NAMES.get(unit, "value")
        ax.set_ylabel(f"{word} [{yp}{unit}]")
        ax.margins(x=0, y=0.14)
        ax.grid(True, color="#e3e3e3", lw=0.7)
        ax.set_axisbelow(True)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
        ax.legend(loc="best", fontsize=8, frameon=False)
        _mark_events(ax, waveforms.events, tf)
    if len(axes):
        axes[-1].set_xlabel(f"time [{tp}s]")
        axes[-1].set_xlim(t[0] * tf, t[-1] * tf)
        _label_events(axes[0], waveforms.events, tf)
    if title:
        fig.suptitle(title, fontsize=11, x=0.01, ha="left")
    fig.tight_layout()
    if path is not None:
        fig.savefig(Path(path))
    return fig


def _mark_events(ax: Any, events: Sequence[Any], tf: float) -> None:
    for ev in events:
        ax.axvline(ev.time * tf, color="#888888", lw=0.8, ls=(0, (4, 3)), zorder=1)


def _label_events(ax: Any, events: Sequence[Any], tf: float) -> None:
    """Name the switch and its move at the top of the first panel (first 8 events)."""
    import matplotlib.transforms as transforms

    trans = transforms.blended_transform_factory(ax.transData, ax.transAxes)
    for ev in list(events)[:8]:
        word = "closes" if ev.closed else "opens"
        ax.text(ev.time * tf, 1.01, f"{ev.switch} {word}", transform=trans, rotation=0, fontsize=7,
                ha="left", va="bottom", color="#555555")
