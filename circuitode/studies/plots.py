"""Pictures of a sweep, as matplotlib Figures (never pyplot state; saved only by the caller).

* one axis: each limited figure against the varied value, the limit drawn as a
  dashed line and the values that meet every requirement shaded;
* two axes with few values of the second (or three axes): a line per value of the
  second, one column of panels per value of the third; points that meet every
  requirement are filled, the others hollow;
* two axes with at least four values each: a filled contour map of each limited
  figure, the limit drawn as a thick contour line and the region where every
  requirement holds hatched.

Axes read in engineering notation through :func:`circuitode.quantities.si_scale`.
"""
from __future__ import annotations

from typing import Any

import numpy as np

from ..quantities import format_si, format_value, si_scale
from ..analysis.limits import figure_key

__all__ = ["sweep_figure"]

_LIMIT = "#c0392b"
_PASS = "#2e8b57"
_PALETTE = ("#1b6ca8", "#d1495b", "#2e8b57", "#8e44ad", "#e08e0b", "#00798c")
_MAX_PANELS = 4
_MAX_LINES = 6
_MAX_FACETS = 4


def _scaled(values: np.ndarray, unit: str) -> tuple[np.ndarray, str]:
    if unit == "rad":  # angles as users write them
        return np.degrees(values), "deg"
    if unit in ("", "%"):
        return values, unit
    factor, prefix = si_scale(values)
    return values * factor, prefix + unit


def _label(name: str, unit: str) -> str:
    return f"{name} [{unit}]" if unit else name


def _panels(result: Any) -> list[tuple[int, Any]]:
    """(figure column, requirement or None) to draw: each requirement's figure, else the first figures."""
    keys = result.results.figure_keys
    if result.requirements:
        out = [(keys.index(figure_key(r)), r) for r in result.requirements]
    else:
        out = [(j, None) for j in range(len(keys))]
    return out[:_MAX_PANELS]


def _figure(rows: int, cols: int):
    from matplotlib.figure import Figure

    fig = Figure(figsize=(4.6 * cols + 0.6, 3.3 * rows + 0.5), layout="constrained")
    axes = fig.subplots(rows, cols, squeeze=False)
    return fig, axes


def _suptitle(fig, text: str) -> None:
    """The figure's title, wrapped to the figure's width (a one-panel sweep is 5.2 in wide)."""
    import textwrap

    width = max(20, int(fig.get_figwidth() * 11))  # characters of 10 pt text per inch, with margin
    fig.suptitle(textwrap.fill(text, width=width), fontsize=10)


def _log_axis(axis) -> None:
    """Log scale with plain tick labels at 1, 2, 5 × 10^n (no crowded minor labels)."""
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    axis.set_major_locator(LogLocator(subs=(1.0, 2.0, 5.0)))
    axis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
    axis.set_minor_formatter(NullFormatter())


def _tidy(ax) -> None:
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.grid(True, alpha=0.3, linewidth=0.6)


def _title(j: int, requirement: Any, result: Any) -> str:
    """The requirement in the report's words, or the figure's name when nothing limits it."""
    from .report import limit_words

    if requirement is not None:
        return limit_words(requirement)
    f, label = result.results.figure_keys[j]
    return f"{f.replace('_', ' ')} of {label}"


def sweep_figure(result: Any):
    """A matplotlib Figure of the sweep (see the module text for what is drawn)."""
    axes = result.axes
    if len(axes) == 2 and min(a.values.size for a in axes) >= 4:
        return _contours(result)
    return _lines(result)


def _lines(result: Any):
    axes = result.axes
    shape = result.shape
    first = axes[0]
    second = axes[1] if len(axes) > 1 else None
    third = axes[2] if len(axes) > 2 else None
    panels = _panels(result)
    facets = list(range(min(third.values.size, _MAX_FACETS))) if third is not None else [None]
    wrap = third is None and len(panels) > 2  # one column of panels only: lay them out two wide
    rows = -(-len(panels) // 2) if wrap else len(panels)
    fig, cells = _figure(rows, 2 if wrap else len(facets))
    grid = [[cells[n // 2][n % 2]] for n in range(len(panels))] if wrap else cells
    if wrap and len(panels) % 2:
        cells[-1][1].set_visible(False)
    x, xunit = _scaled(first.values, first.unit)
    ok = result.all_pass.reshape(shape)
    for row, (j, req) in enumerate(panels):
        values = result.results.figures[:, j].reshape(shape)
        y, yunit = _scaled(values, result.results.figure_units[j])
        factor = (y.ravel()[np.isfinite(values.ravel()) & (values.ravel() != 0)] /
                  values.ravel()[np.isfinite(values.ravel()) & (values.ravel() != 0)])
        factor = float(factor[0]) if factor.size else 1.0
        for col, facet in enumerate(facets):
            ax = grid[row][col]
            lines = range(min(second.values.size, _MAX_LINES)) if second is not None else [None]
            for n, line in enumerate(lines):
                index = tuple(i for i in (slice(None), line, facet) if i is not None)
                color = _PALETTE[n % len(_PALETTE)]
                name = None if second is None else f"{second.name} = {format_value(second.values[line], second.unit)}"
                ax.plot(x, y[index], color=color, linewidth=1.4, label=name)
                good = ok[index]
                ax.plot(x[good], y[index][good], "o", color=color, markersize=4)
                ax.plot(x[~good], y[index][~good], "o", markerfacecolor="white", color=color, markersize=4)
                if second is None:
                    _shade_passing(ax, x, good)
            if req is not None:
                ax.axhline(req.limit * factor, color=_LIMIT, linestyle="--", linewidth=1.2, label="limit")
            if first.log:
                ax.set_xscale("log")
                _log_axis(ax.xaxis)
            ax.set_xlabel(_label(first.name, xunit))
            ax.set_ylabel(yunit)
            title = _title(j, req, result)
            if facet is not None:
                title += f"; {third.name} = {format_value(third.values[facet], third.unit)}"
            ax.set_title(title, fontsize=9)
            _tidy(ax)
            if row == 0 and col == 0 and (second is not None or req is not None):
                ax.legend(fontsize=7, frameon=False)
    _suptitle(fig, f"{result.title}: filled points meet every requirement")
    return fig


def _shade_passing(ax, x: np.ndarray, good: np.ndarray) -> None:
    """Shade the stretches of x where every requirement holds (between passing grid points)."""
    edges = np.flatnonzero(np.diff(np.concatenate([[0], good.astype(int), [0]])))
    for start, stop in zip(edges[::2], edges[1::2]):
        ax.axvspan(x[start], x[stop - 1], color=_PASS, alpha=0.12, linewidth=0,
                   label="meets every requirement" if start == edges[0] else None)


def _contours(result: Any):
    first, second = result.axes
    shape = result.shape
    panels = _panels(result)
    cols = min(2, len(panels))
    rows = -(-len(panels) // cols)
    fig, grid = _figure(rows, cols)
    x, xunit = _scaled(first.values, first.unit)
    y, yunit = _scaled(second.values, second.unit)
    X, Y = np.meshgrid(x, y, indexing="ij")
    passing = result.all_pass.reshape(shape).astype(float)
    for n, (j, req) in enumerate(panels):
        ax = grid[n // cols][n % cols]
        values = result.results.figures[:, j].reshape(shape)
        z, zunit = _scaled(values, result.results.figure_units[j])
        finite = np.isfinite(values) & (values != 0)
        factor = float((z[finite] / values[finite])[0]) if finite.any() else 1.0
        filled = ax.contourf(X, Y, np.ma.masked_invalid(z), levels=14, cmap="viridis")
        fig.colorbar(filled, ax=ax, label=zunit)
        if passing.any() and not passing.all():
            ax.contourf(X, Y, passing, levels=[0.5, 1.5], colors="none", hatches=["//"])
            ax.contour(X, Y, passing, levels=[0.5], colors=_PASS, linewidths=1.0)
        if req is not None and np.nanmin(z) < req.limit * factor < np.nanmax(z):
            ax.contour(X, Y, np.ma.masked_invalid(z), levels=[req.limit * factor], colors=_LIMIT,
                       linewidths=2.2)
        if first.log:
            ax.set_xscale("log")
            _log_axis(ax.xaxis)
        if second.log:
            ax.set_yscale("log")
            _log_axis(ax.yaxis)
        ax.set_xlabel(_label(first.name, xunit))
        ax.set_ylabel(_label(second.name, yunit))
        ax.set_title(_title(j, req, result), fontsize=9)
    for n in range(len(panels), rows * cols):
        grid[n // cols][n % cols].set_visible(False)
    _suptitle(fig, f"{result.title}: red line = limit, hatched = meets every requirement")
    return fig
