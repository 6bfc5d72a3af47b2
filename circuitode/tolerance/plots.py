"""Histogram and scatter PNGs of a tolerance batch (matplotlib imported lazily, Agg).

One histogram per figure that a requirement limits (or, with no requirements,
per figure, at most 8), with the limit drawn as a vertical line; one scatter of
each of those figures against its strongest driver (largest |Spearman rho|).
Axes read in engineering notation through
:func:`circuitode.netlist.quantities.si_scale`.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

from ..netlist.quantities import format_si, si_scale
from .summary import figure_label, varies
from ..output.atomic import write_atomic

__all__ = ["write_plots"]

_BAR = "#4a7fb0"
_LIMIT = "#c0392b"
_DOT = "#2c3e50"


def _safe(text: str) -> str:
    return "".join(ch if ch.isascii() and ch.isalnum() else "_" for ch in text).strip("_")[:80]


def _axis(values: np.ndarray, unit: str) -> tuple[float, str]:
    """(factor, axis unit text) so that values * factor read in e.g. "mA²s"."""
    if unit in ("", "%"):
        return 1.0, unit
    factor, prefix = si_scale(values)
    return factor, prefix + unit


def _save(plt, fig, ax, path: Path) -> Path:
    """Tidy the axes (light grid, no top/right frame), write the PNG, free the figure."""
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.grid(True, color="#e3e3e3", lw=0.7)
    ax.set_axisbelow(True)
    fig.tight_layout()
    try:
        write_atomic(path, lambda handle: fig.savefig(handle, format="png"))  # never a half-written PNG
    finally:
        plt.close(fig)
    return path


def write_plots(result, folder: Path) -> dict:
    """Write PNGs into ``folder/plots``; returns name → path."""
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    out_dir = Path(folder) / "plots"
    out_dir.mkdir(parents=True, exist_ok=True)
    limited = {(r.figure, r.probe.label): r for r in result.requirements}
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

        fig, ax = plt.subplots(figsize=(6.4, 4.0), dpi=100)
        if varies(result.summaries[key]):
            ax.hist(v[good] * vf, bins=min(60, max(10, int(np.sqrt(good.sum())))), color=_BAR)
        else:  # every sample gives the same value: one bar, said in words
            typical = float(np.median(v[good]))
            ax.bar([typical * vf], [good.sum()], width=abs(typical * vf) * 0.004 or 1.0, color=_BAR)
            ax.text(0.5, 0.95, f"every sample ≈ {format_si(typical, unit)}", transform=ax.transAxes,
                    ha="center", va="top", fontsize=9)
        if key in limited:
            r = limited[key]
            passed = result.yield_estimate.per_limit.get(r.label, 0)
            ax.axvline(r.limit * vf, color=_LIMIT, lw=2,
                       label=f"limit {r.comparison} {format_si(r.limit, unit)} ({passed} of {n} meet it)")
            ax.legend(frameon=True, framealpha=0.9, fontsize=8, loc="best")
        ax.set_xlabel(vlabel)
        ax.set_ylabel("samples")
        ax.set_title(f"{title}: {n} samples ({result.samples.sampler})", fontsize=10, loc="left")
        files[f"hist {title}"] = _save(plt, fig, ax, out_dir / f"hist_{_safe(title)}.png")

        drivers = result.sensitivity.get(key) or []
        if drivers and np.isfinite(drivers[0].rho) and varies(result.summaries[key]):
            p = names.index(drivers[0].parameter)
            x = params[good, p]
            xf, xunit = _axis(x, units_of.get(drivers[0].parameter, ""))
            fig, ax = plt.subplots(figsize=(6.4, 4.0), dpi=100)
            ax.plot(x * xf, v[good] * vf, ".", ms=2.5, color=_DOT)
            if key in limited:
                ax.axhline(limited[key].limit * vf, color=_LIMIT, lw=1.5)
            xname = drivers[0].parameter + (f" [{xunit}]" if xunit else "")
            ax.set_xlabel(f"{xname}   (rank correlation {drivers[0].rho:+.2f})")
            ax.set_ylabel(vlabel)
            ax.set_title(f"{title} against its strongest driver", fontsize=10, loc="left")
            files[f"scatter {title}"] = _save(plt, fig, ax, out_dir / f"scatter_{_safe(title)}.png")
    return files
