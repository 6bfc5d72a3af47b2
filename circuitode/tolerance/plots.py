"""Histogram and scatter PNGs of a tolerance batch (matplotlib imported lazily, Agg).

One histogram per figure that a requirement limits (or, with no requirements,
per figure), with the limit drawn as a vertical line; one scatter of each of
those figures against its strongest driver (largest |Spearman rho|).
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

__all__ = ["write_plots"]


def _safe(text: str) -> str:
    return "".join(ch if ch.isalnum() else "_" for ch in text).strip("_")[:80]


def write_plots(result, folder: Path) -> dict:
    """Write PNGs into ``folder/plots``; returns name → path."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    out_dir = Path(folder) / "plots"
    out_dir.mkdir(parents=True, exist_ok=True)
    limited = {(r.figure, r.probe.label): r for r in result.requirements}
    keys = [k for k in result.figure_keys if k in limited] or list(result.figure_keys)[:8]
    files = {}
    names = result.samples.names
    params = result.samples.values
    for key in keys:
        j = result.figure_keys.index(key)
        v = result.figures[:, j]
        good = np.isfinite(v)
        if not good.any():
            continue
        unit = result.figure_units[j]
        title = f"{key[0].replace('_', ' ')} of {key[1]}"
        fig, ax = plt.subplots(figsize=(6, 4))
        ax.hist(v[good], bins=min(60, max(10, int(np.sqrt(good.sum())))), color="#4a7fb0")
        if key in limited:
            r = limited[key]
            ax.axvline(r.limit, color="#c0392b", lw=2, label=f"limit {r.comparison} {r.limit:g}")
            ax.legend()
        ax.set_xlabel(f"{title} [{unit}]" if unit else title)
        ax.set_ylabel("samples")
        fig.tight_layout()
        path = out_dir / f"hist_{_safe(title)}.png"
        fig.savefig(path, dpi=90)
        plt.close(fig)
        files[f"hist {title}"] = path
        drivers = result.sensitivity.get(key) or []
        if drivers and np.isfinite(drivers[0].rho):
            p = names.index(drivers[0].parameter)
            fig, ax = plt.subplots(figsize=(6, 4))
            ax.plot(params[good, p], v[good], ".", ms=2, color="#2c3e50")
            ax.set_xlabel(f"{drivers[0].parameter} (rank correlation {drivers[0].rho:+.2f})")
            ax.set_ylabel(f"{title} [{unit}]" if unit else title)
            fig.tight_layout()
            path = out_dir / f"scatter_{_safe(title)}.png"
            fig.savefig(path, dpi=90)
            plt.close(fig)
            files[f"scatter {title}"] = path
    return files
