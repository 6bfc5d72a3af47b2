"""A tolerance batch as a pandas DataFrame (pandas is the optional ``frames`` extra), and
what a notebook shows for it (one-line ``repr``, the printed summary as HTML)."""
from __future__ import annotations

from html import escape
from typing import Any

from ..notebook import pandas_module

__all__ = ["batch_frame", "drivers_frame", "batch_repr", "batch_html"]


def batch_frame(result: Any):
    """One row per sample (index ``sample``): the sampled parameters, every figure as
    '<figure> of <probe>', then ``ok`` and ``message``.  ``attrs["units"]`` maps columns to units."""
    pd = pandas_module()
    table = result.samples
    values = table.values
    data = {name: values[:, j] for j, name in enumerate(table.names)}
    units = {name: result.parameter_units.get(name, "") for name in table.names}
    for j, ((figure, label), unit) in enumerate(zip(result.figure_keys, result.figure_units)):
        column = f"{figure.replace('_', ' ')} of {label}"
        data[column] = result.figures[:, j]
        units[column] = unit
    data["ok"] = result.ok
    data["message"] = result.messages
    frame = pd.DataFrame(data)
    frame.index.name = "sample"
    frame.attrs["units"] = units
    return frame


def drivers_frame(result: Any):
    """One row per figure and part, strongest first within a figure: ``figure``, ``part``,
    ``eta2`` (share of the figure's variance the part explains alone, sees a rise-and-fall)
    and ``spearman_rho`` (rank correlation: its sign is the direction)."""
    pd = pandas_module()
    rows = [(f"{figure.replace('_', ' ')} of {label}", d.parameter, d.eta2, d.rho)
            for (figure, label), drivers in result.sensitivity.items() for d in drivers]
    return pd.DataFrame(rows, columns=["figure", "part", "eta2", "spearman_rho"])


def batch_repr(result: Any) -> str:
    """One line: samples, sampler, yield; never the arrays."""
    y = result.yield_estimate
    return (f"<BatchResult: {result.samples.count} samples ({result.samples.sampler}, seed {result.samples.seed}); "
            f"yield {y.passed} of {y.total}; {len(result.figure_keys)} figures>")


def batch_html(result: Any) -> str:
    """The printed batch summary in ``<pre>`` (the histograms are in the folder's plots/)."""
    from .summary import format_batch_summary

    return f"<pre>{escape(format_batch_summary(result))}</pre>"
