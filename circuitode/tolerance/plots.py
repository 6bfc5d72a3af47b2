"""Histogram and scatter PNGs of a tolerance batch (matplotlib's Figure, imported lazily).

One histogram per figure that a requirement limits (or, with no requirements,
per figure, at most 8), with the limit drawn as a vertical line; one scatter of
each of those figures against its strongest driver (largest |Spearman rho|).
Axes read in engineering notation through
:func:`circuitode.quantities.si_scale`.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

from ..quantities import format_si, si_scale
from ..analysis.limits import figure_key
from .summary import figure_label, varies
from ..output.atomic import write_atomic

__all__ = ["write_plots"]

_BAR = "#4a7fb0"
_LIMIT = "#c0392b"
_DOT = "#2c3e50"


def _safe(text: str) -> str:
    return "".join(ch if ch.isascii() and ch.isalnum() else "_" for ch in text).strip("_")[:80]


def _axis(values: np.ndarray, unit: str) -> tuple[float, str]:
    """(factor, axis unit text) so that values * factor read in e.g. "mA²s"; an angle
    (SI radians) reads in degrees, as users write it and the text summary prints it."""
    if unit in ("", "%"):
        return 1.0, unit
    if unit == "rad":
        return 180.0 / np.pi, "deg"
    factor, prefix = si_scale(values)
    return factor, prefix + unit


def _new_figure():
    """A 6.4 × 4 in figure at 100 dpi with one axes and fixed margins (no pyplot state, and
    no layout pass that draws the figure once more before saving)."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(6.4, 4.0), dpi=100)
    fig.subplots_adjust(left=0.12, right=0.97, bottom=0.13, top=0.92)
    return fig, fig.add_subplot()


def _save(fig, ax, path: Path) -> Path:
    """Tidy the axes (light grid, no top/right frame), write the PNG."""
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.grid(True, color="#e3e3e3", lw=0.7)
    ax.set_axisbelow(True)
    write_atomic(path, lambda handle: fig.savefig(handle, format="png"))  # never a half-written PNG
    return path


def _arrow_to_limit(ax, x0: float, x1: float, above: bool, words: str) -> None:
    """Limit far off the distribution: an arrow at the right (``above``) or left edge, with the words."""
    free = 0.3  # share of the axis kept clear for the arrow and its words, on the limit's side
    width = (x1 - x0) / (1.0 - free)
    ax.set_xlim((x0, x0 + width) if above else (x1 - width, x1))
    edge, tail = (0.99, 1.0 - free + 0.02) if above else (0.01, free - 0.02)
    ax.annotate("", xy=(edge, 0.45), xytext=(tail, 0.45), xycoords="axes fraction",
                arrowprops=dict(arrowstyle="-|>", color=_LIMIT, lw=2))
    ax.text(tail if above else edge, 0.5, words, transform=ax.transAxes, ha="left", va="bottom", fontsize=8,
            color=_LIMIT)


def write_plots(result, folder: Path) -> dict:
    """Write PNGs into ``folder/plots``; returns name → path."""
    out_dir = Path(folder) / "plots"
    out_dir.mkdir(parents=True, exist_ok=True)
    limited = {figure_key(r): r for r in result.requirements}
    keys = [k for k in result.figure_keys if k in limited] or list(result.figure_keys)[:8]
    files = {}
    names = result.samples.names
    params = result.samples.values
    units_of = getattr(result, "parameter_units", {}) or {}
    n = result.samples.count
    for key in keys:
        j = result.figure_keys.index(key)
        v = result.figures[:, j]
        good = np.isfinite(v)
        if not good.any():
            continue
        unit = result.figure_units[j]
        title = figure_label(key)
        vf, vunit = _axis(v[good], unit)
        vlabel = f"{title} [{vunit}]" if vunit else title

        fig, ax = _new_figure()
        lo, hi = float(np.min(v[good])), float(np.max(v[good]))
        if varies(result.summaries[key]):
            ax.hist(v[good] * vf, bins=min(60, max(10, int(np.sqrt(good.sum())))), color=_BAR)
            pad = 0.08 * (hi - lo)
        else:  # every sample gives the same value: one bar, said in words
            typical = float(np.median(v[good]))
            pad = 10 * (abs(typical) * 1e-3 or 1e-12)
            lo = hi = typical
            ax.bar([typical * vf], [good.sum()], width=0.1 * pad * vf, color=_BAR)
            ax.text(0.5, 0.95, f"every sample ≈ {format_si(typical, unit)}", transform=ax.transAxes,
                    ha="center", va="top", fontsize=9)
        if key in limited:
            r = limited[key]
            passed = result.yield_estimate.per_limit.get(r.label, 0)
            words = f"limit {r.comparison} {format_si(r.limit, unit)} ({passed} of {n} meet it)"
            if lo - 2 * pad - (hi - lo) <= r.limit <= hi + 2 * pad + (hi - lo):  # near the samples: draw it
                ax.axvline(r.limit * vf, color=_LIMIT, lw=2, label=words)
                ax.legend(frameon=True, framealpha=0.9, fontsize=8, loc="best")
            else:  # far away: keep the distribution readable and point to the limit from the edge
                gap = format_si(abs(r.limit - (hi if r.limit > hi else lo)), unit, 3)
                _arrow_to_limit(ax, (lo - pad) * vf, (hi + pad) * vf, r.limit > hi,
                                f"limit {r.comparison} {format_si(r.limit, unit)}\n{gap} beyond the\n"
                                f"{'largest' if r.limit > hi else 'smallest'} sample;\n{passed} of {n} meet it")
        ax.set_xlabel(vlabel)
        ax.set_ylabel("samples")
        ax.set_title(f"{title}: {n} samples ({result.samples.sampler})", fontsize=10, loc="left")
        files[f"hist {title}"] = _save(fig, ax, out_dir / f"hist_{_safe(title)}.png")

        drivers = result.sensitivity.get(key) or []
        if drivers and np.isfinite(drivers[0].eta2) and varies(result.summaries[key]):
            p = names.index(drivers[0].parameter)
            x = params[good, p]
            xf, xunit = _axis(x, units_of.get(drivers[0].parameter, ""))
            fig, ax = _new_figure()
            ax.plot(x * xf, v[good] * vf, ".", ms=2.5, color=_DOT)
            if key in limited:
                ax.axhline(limited[key].limit * vf, color=_LIMIT, lw=1.5)
            xname = drivers[0].parameter + (f" [{xunit}]" if xunit else "")
            ax.set_xlabel(f"{xname}   (variance share η² {drivers[0].eta2:.2f}, rank correlation ρ {drivers[0].rho:+.2f})")
            ax.set_ylabel(vlabel)
            ax.set_title(f"{title} against its strongest driver", fontsize=10, loc="left")
            files[f"scatter {title}"] = _save(fig, ax, out_dir / f"scatter_{_safe(title)}.png")
    return files
