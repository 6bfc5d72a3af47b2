"""PNG plots of a run: recorded waveforms with switching events and peaks marked.

Matplotlib is imported inside the functions, with the non-interactive Agg
backend, so importing circuitode never pulls it in.  Axes read in engineering
notation (ms, kA …) through :func:`circuitode.quantities.si_scale`.
"""
from __future__ import annotations

from pathlib import Path
from typing import Any, Sequence

import numpy as np

import math

from ..quantities import format_si, si_scale
from .plot_layout import panels, running_integral, zoom_windows
from .report import requirement_words

__all__ = ["plot_waveforms", "waveform_figure", "QUANTITY_NAMES"]

#: Axis words per unit.
QUANTITY_NAMES = {"V": "voltage", "A": "current", "W": "power"}

_PALETTE = ("#1b6ca8", "#d1495b", "#2e8b57", "#8e44ad", "#e08e0b", "#00798c", "#6c757d", "#9c6644")


def _figure(n_panels: int):
    """A matplotlib Figure with ``n_panels`` stacked axes sharing the time axis (no pyplot: it loads slowly)."""
    from matplotlib.figure import Figure

    height = 1.2 + 2.3 * n_panels  # inches
    fig = Figure(figsize=(9.0, height), dpi=110)
    axes = fig.subplots(n_panels, 1, sharex=True, squeeze=False)[:, 0]
    # fixed margins (inches turned into fractions) instead of tight_layout, which draws the figure an extra time
    fig.subplots_adjust(left=0.1, right=0.975, bottom=0.6 / height, top=1.0 - 0.75 / height, hspace=0.42)
    return fig, axes


def plot_waveforms(
    waveforms: Any,
    path: Path,
    *,
    title: str = "",
    labels: Sequence[str] | None = None,
    limits: Sequence[Any] = (),
    running: Sequence[str] = (),
    max_panels: int = 6,
    max_traces: int = 6,
) -> Path:
    """Write the PNG of :func:`waveform_figure` to ``path`` and return the path."""
    path = Path(path)
    waveform_figure(waveforms, path, title=title, labels=labels, limits=limits, running=running,
                    max_panels=max_panels, max_traces=max_traces)
    return path


def waveform_figure(
    waveforms: Any,
    path: Path | str | None = None,
    *,
    title: str = "",
    labels: Sequence[str] | None = None,
    limits: Sequence[Any] = (),
    running: Sequence[str] = (),
    max_panels: int = 6,
    max_traces: int = 6,
):
    """Draw the recorded signals, one panel per unit and scale, with limits, insets and running integrals.

    Parameters
    ----------
    waveforms : the transient engine's Waveforms (``t`` s, ``signals``, ``units``, ``events``).
    path : PNG file to write, or None to write nothing (a notebook shows the Figure).
    title : figure title (the circuit's).
    labels : which signals to draw (default: all).
    limits : the run's LimitResults; each is drawn on the panel of its quantity with its verdict.
    running : signal labels that also get a running I²t (currents) or energy (powers) curve;
        every quantity with an I²t or energy limit gets one anyway.
    max_panels, max_traces : caps that keep a large ladder readable; the
        signals left out are still in the CSV.

    Returns
    -------
    The matplotlib Figure (built without pyplot: no global state, no backend change).
    """
    t = np.asarray(waveforms.t, dtype=float)
    labels = list(labels if labels is not None else waveforms.signals)
    signals = {k: np.asarray(v, dtype=float) for k, v in waveforms.signals.items()}
    layout = panels(signals, waveforms.units, labels, max_panels)
    integrals = _running_panels(signals, waveforms.units, limits, running)
    n = min(len(layout) + len(integrals), max_panels) or 1
    integrals = integrals[: max(0, n - len(layout))]
    layout = layout[: n - len(integrals)]
    tf, tp = si_scale(t)
    fig, axes = _figure(n)
    for ax, panel in zip(axes, layout):
        members = list(panel.labels[:max_traces])
        curves = [(m, signals[m]) for m in members]
        _draw_panel(ax, t, tf, curves, panel.unit, QUANTITY_NAMES.get(panel.unit, "value"), peaks=True)
        if len(panel.labels) > max_traces:
            ax.text(0.99, 0.02, f"+{len(panel.labels) - max_traces} more in the CSV", transform=ax.transAxes,
                    ha="right", va="bottom", fontsize=7, color="#555555")
        if panel.scale_note:  # the smaller signals of a unit, on a scale of their own
            ax.set_ylabel(ax.get_ylabel() + "\n(smaller signals)")
        _draw_limits(ax, tf, [r for r in limits if r.requirement.probe.label in members
                              and r.requirement.figure not in ("i2t", "energy")], panel.unit)
        window = zoom_windows(t, [y for _, y in curves])
        if window is not None:
            _inset(ax, t, tf, curves, window)
        _mark_events(ax, waveforms.events, tf)
    for ax, (unit, word, curves, limited) in zip(axes[len(layout):], integrals):
        _draw_panel(ax, t, tf, curves, unit, word, peaks=False)
        _draw_limits(ax, tf, limited, unit)
        _mark_events(ax, waveforms.events, tf)
    axes[-1].set_xlabel(f"time [{tp}s]")
    axes[-1].set_xlim(t[0] * tf, t[-1] * tf)
    if waveforms.events:  # the switch names sit above the first panel: its legend moves inside
        axes[0].legend(loc="best", fontsize=8, frameon=True, framealpha=0.85, edgecolor="none")
        _label_events(axes[0], waveforms.events, tf)
    if title:
        fig.suptitle(title, fontsize=11, x=0.01, ha="left")
    for ax in axes:
        _settle_labels(ax)
    if path is not None:
        fig.savefig(Path(path))
    return fig


def _running_panels(signals, units, limits, running) -> list[tuple[str, str, list, list]]:
    """(unit, axis word, [(name, ("running", samples, square))], limits drawn there) per integral panel."""
    wanted = {label: None for label in running if label in signals}
    for r in limits:
        if r.requirement.figure in ("i2t", "energy") and r.requirement.probe.label in signals:
            wanted.setdefault(r.requirement.probe.label, None)
    out = []
    for unit, word, square, figure, source in (("A²s", "I²t", True, "i2t", "A"), ("J", "energy", False, "energy", "W")):
        members = [m for m in wanted if units.get(m) == source]
        if not members:
            continue
        curves = [((f"I²t of {m}" if square else f"energy, {m}"), ("running", signals[m], square)) for m in members]
        limited = [r for r in limits if r.requirement.figure == figure and r.requirement.probe.label in members]
        out.append((unit, word, curves, limited))
    return out


def _values(t: np.ndarray, y: Any) -> np.ndarray:
    """A curve's samples: a signal, or ("running", label-signal, square) computed on demand."""
    if isinstance(y, tuple):
        _, samples, square = y
        return running_integral(t, samples, square)
    return y


def _draw_panel(ax: Any, t: np.ndarray, tf: float, curves, unit: str, word: str, peaks: bool) -> None:
    values = [(label, _values(t, y)) for label, y in curves]
    yf, yp = si_scale(np.concatenate([v for _, v in values]) if values else np.zeros(1))
    marked: list[tuple[float, float]] = []  # peaks labelled so far, as shares of the time and value spans
    span_t = float(np.ptp(t)) or 1.0
    finite = np.concatenate([v[np.isfinite(v)] for _, v in values]) if values else np.zeros(1)
    span_y = float(np.ptp(finite)) if finite.size and np.ptp(finite) > 0 else 1.0
    for i, (label, y) in enumerate(values):
        color = _PALETTE[i % len(_PALETTE)]
        ax.plot(t * tf, y * yf, color=color, lw=1.4, label=label)
        if not peaks:
            continue
        k = int(np.nanargmax(np.abs(y))) if y.size else 0
        if y.size and np.isfinite(y[k]) and y[k] != 0:
            ax.plot(t[k] * tf, y[k] * yf, "o", ms=4.5, color=color, mec="white", mew=0.8, zorder=5)
            here = (t[k] / span_t, y[k] / span_y)  # peaks close together get their labels stacked, not overlaid
            near = sum(abs(here[0] - a) < 0.12 and abs(here[1] - b) < 0.1 for a, b in marked)
            marked.append(here)
            step = 11 * near
            ax.annotate(format_si(y[k], unit, 3), (t[k] * tf, y[k] * yf),
                        xytext=(6, 6 + step if y[k] > 0 else -12 - step),
                        textcoords="offset points", fontsize=8, color=color)
    ax.set_ylabel(f"{word} [{yp}{unit}]")
    ax.margins(x=0, y=0.14)
    ax.grid(True, color="#e3e3e3", lw=0.7)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    # above the panel, right-aligned: a legend there never hides a trace, a limit or an inset
    ax.legend(loc="lower right", bbox_to_anchor=(1.0, 1.0), ncol=min(3, max(1, len(values))), fontsize=8,
              frameon=False, borderaxespad=0.1)
    ax._circuitode_scale = yf  # the panel's value factor, for the limits drawn on it


_PASS, _FAIL = "#2e8b57", "#c0392b"


def _draw_limits(ax: Any, tf: float, results: Sequence[Any], unit: str) -> None:
    """Each limit as a line on this panel (levels horizontal, times vertical), with its verdict."""
    import matplotlib.transforms as transforms

    yf = getattr(ax, "_circuitode_scale", 1.0)
    low, high = ax.get_ylim()
    notes = []
    labelled: list[float] = []  # levels whose label sits on their line
    for r in results:
        req = r.requirement
        verdict = "pass" if r.passed else "FAIL"
        color = _PASS if r.passed else _FAIL
        words = f"{verdict}: {requirement_words(req, r.unit)}"
        if math.isfinite(r.value):
            words += f" (measured {format_si(r.value, r.unit, 4)})"
        start, stop = getattr(req, "start", None), getattr(req, "stop", None)
        windowed = start is not None or stop is not None  # drawn over its window only
        if req.figure in ("settling_time", "rise_time"):
            ax.axvline(((start or 0.0) + req.limit) * tf, color=color, lw=1.3, ls="--")
            notes.append(("┆ " + words, color, None, None))  # the dashed vertical line
        elif windowed and req.figure in ("i2t", "energy"):  # the running integral counts from 0 s
            notes.append((words, color, start, stop))
        elif req.figure in ("peak", "minimum", "final", "mean", "rms", "i2t", "energy") and r.unit == unit:
            level = req.limit * yf
            span = high - low
            x0, x1 = ax.get_xlim()
            x0, x1 = (x0 if start is None else start * tf), (x1 if stop is None else stop * tf)
            if low - span <= level <= high + span:  # near the data: draw it where it is (over its window)
                ax.hlines(level, x0, x1, color=color, lw=1.3, ls="--") if windowed else \
                    ax.axhline(level, color=color, lw=1.3, ls="--")
                if req.figure == "peak" and low < -0.5 * level:  # a peak is of the magnitude: both signs
                    ax.hlines(-level, x0, x1, color=color, lw=1.3, ls="--") if windowed else \
                        ax.axhline(-level, color=color, lw=1.3, ls="--")
                if any(abs(level - other) < 0.07 * span for other in labelled):  # labels would overlap
                    notes.append((words, color, None, None))
                    continue
                labelled.append(level)
                # an upper limit is labelled above its line, a lower one below, on the side the data must avoid;
                # _settle_labels moves it along its line (or to the other side) when another label is there
                va = "bottom" if req.comparison.startswith("<") else "top"
                other = "top" if va == "bottom" else "bottom"
                spots = _level_spots(ax, (x0, x1) if windowed else None)
                label = ax.text(spots[0][1], level, words + " ", transform=spots[0][0], fontsize=7, color=color,
                                ha=spots[0][2], va=va)
                label._circuitode_spots = [(tr, x, level, ha, v) for v in (va, other) for tr, x, ha in spots]
            else:  # far off the scale: an arrow at the edge keeps the waveform readable
                notes.append((("↑ " if level > high else "↓ ") + words + ", off scale", color, None, None))
        else:
            notes.append((words, color, start, stop))
    if notes:  # head room above the data for the notes, so they hide no trace
        low, high = ax.get_ylim()
        top = max(high, max((r.requirement.limit * yf for r in results if r.requirement.figure in
                             ("peak", "minimum", "final", "mean", "rms", "i2t", "energy") and r.unit == unit
                             and low - (high - low) <= r.requirement.limit * yf <= high + (high - low)),
                            default=high))
        ax.set_ylim(low, top + (top - low) * (0.08 + 0.14 * len(notes)))
    high_up = transforms.blended_transform_factory(ax.transData, ax.transAxes)
    for i, (words, color, start, stop) in enumerate(notes):  # limits with no line of their own, at the top
        y = 0.97 - 0.1 * i
        spots = [(ax.transAxes, 0.01, y, "left", "top")]
        if start is not None:  # over its window ("after 1 ms": from 1 ms on), else as far into it as fits
            spots = [(high_up, start * tf, y, "left", "top"), (ax.transAxes, 0.99, y, "right", "top")]
        elif stop is not None:  # "before …": ending where the window ends
            spots = [(high_up, stop * tf, y, "right", "top")] + spots
        note = ax.text(spots[0][1], y, words, transform=spots[0][0], fontsize=7, color=color, ha=spots[0][3],
                       va="top", bbox=dict(facecolor="white", edgecolor="none", alpha=0.85, pad=1.0))
        note._circuitode_spots = spots


def _level_spots(ax: Any, window: tuple[float, float] | None) -> list[tuple[Any, float, str]]:
    """Where a limit level's label may sit along its line, best first: (x transform, x, ha).

    At the right end, then centred further and further left, then at the left end; a limit over
    part of the run (``window``, x0 and x1 in plotted time units) first starts over its own stretch."""
    import matplotlib.transforms as transforms

    along = transforms.blended_transform_factory(ax.transAxes, ax.transData)
    spots = [(along, 0.99, "right")] + [(along, f, "center") for f in (0.6, 0.5, 0.4, 0.3)] + [(along, 0.01, "left")]
    if window is not None:
        on_line = transforms.blended_transform_factory(ax.transData, ax.transData)
        x0, x1 = window
        spots = [(on_line, x0 + f * (x1 - x0), "left") for f in (0.0, 0.1, 0.2, 0.3, 0.4, 0.5)] + [
            (on_line, x1, "right")] + spots
    return spots


def _settle_labels(ax: Any) -> None:
    """Put each limit label and note at the first of its spots (``_circuitode_spots``: transform, x, y,
    ha, va) where it stays inside the panel and overlaps no other text of the panel and no inset;
    a label with no free spot stays at its first.  Runs once the panel's scales are final."""
    texts = [t for t in ax.texts if t.get_text().strip()]
    frame = ax.get_window_extent()
    for text in texts:
        spots = getattr(text, "_circuitode_spots", None)
        if not spots:
            continue
        others = [t.get_window_extent() for t in texts if t is not text]
        others += [inset.get_window_extent() for inset in ax.child_axes]
        for transform, x, y, ha, va in spots + spots[:1]:  # none free: back to the first
            text.set_transform(transform)
            text.set_position((x, y))
            text.set_ha(ha)
            text.set_va(va)
            box = text.get_window_extent()
            inside = box.x0 >= frame.x0 - 1 and box.x1 <= frame.x1 + 1
            if inside and not any(box.overlaps(o) for o in others):
                break


def _inset(ax: Any, t: np.ndarray, tf: float, curves, window: tuple[float, float]) -> None:
    """A zoomed copy of the panel on ``window`` (s), placed where the data leave room."""
    t0, t1 = window
    inside = (t >= t0) & (t <= t1)
    if inside.sum() < 3:
        return
    yf = getattr(ax, "_circuitode_scale", 1.0)
    low, high = ax.get_ylim()
    centre = 0.5 * (t0 + t1)
    right = centre < 0.5 * (t[0] + t[-1])  # put the inset on the other side of the window
    side = t > centre if right else t < centre
    values = np.concatenate([_values(t, y)[side] for _, y in curves]) * yf
    frac = (values[np.isfinite(values)] - low) / ((high - low) or 1.0)  # data heights in axes fractions
    lines = [(line.get_ydata()[0] - low) / ((high - low) or 1.0) for line in ax.get_lines()
             if line.get_linestyle() == "--" and len(set(np.atleast_1d(line.get_ydata()))) == 1
             and line.get_transform() != ax.get_xaxis_transform()]

    def crowding(y0: float, h: float) -> float:  # data inside the slot, plus any limit line and its label
        inside = float(np.mean((frac >= y0 - 0.03) & (frac <= y0 + h + 0.03))) if frac.size else 0.0
        return inside + sum(1.0 for y in lines if y0 - 0.12 <= y <= y0 + h + 0.03)

    y0 = min((0.06, 0.44), key=lambda y: crowding(y, 0.34))
    box = [0.56 if right else 0.06, y0, 0.38, 0.34]
    inset = ax.inset_axes(box)
    for i, (label, y) in enumerate(curves):
        inset.plot(t[inside] * tf, _values(t, y)[inside] * yf, color=_PALETTE[i % len(_PALETTE)], lw=1.2)
    inset.set_xlim(t0 * tf, t1 * tf)
    inset.tick_params(labelsize=6)
    inset.grid(True, color="#eeeeee", lw=0.5)
    inset.set_title("zoom", fontsize=7, loc="left", color="#555555")
    ax.indicate_inset_zoom(inset, edgecolor="#999999")


def _mark_events(ax: Any, events: Sequence[Any], tf: float) -> None:
    for ev in events:
        ax.axvline(ev.time * tf, color="#888888", lw=0.8, ls=(0, (4, 3)), zorder=1)


def _label_events(ax: Any, events: Sequence[Any], tf: float) -> None:
    """Name the switch and its move at the top of the first panel (first 8 events)."""
    import matplotlib.transforms as transforms

    trans = transforms.blended_transform_factory(ax.transData, ax.transAxes)
    low, high = ax.get_xlim()
    room = 0.14 * (high - low)  # a label is about this wide: later ones that would overlap are left out
    last = -math.inf
    for ev in list(events)[:8]:
        if ev.time * tf < last + room:
            continue
        last = ev.time * tf
        if "conducting" in ev.reason:  # a diode
            word = "conducts" if ev.closed else "blocks"
        else:
            word = "closes" if ev.closed else "opens"
        ax.text(ev.time * tf, 1.01, f"{ev.switch} {word}", transform=trans, rotation=0, fontsize=7,
                ha="left", va="bottom", color="#555555")
