"""What a notebook shows for a run: the printed summary and the waveform plot, inline.

Used by ``JobResult._repr_html_``; the plot is embedded as a PNG (base64), so
nothing is written to disk.
"""
from __future__ import annotations

import base64
import io
from html import escape
from typing import Any

__all__ = ["figure_png_html", "job_html", "job_repr"]


def figure_png_html(figure: Any, width: int = 720) -> str:
    """An ``<img>`` holding a matplotlib Figure as an inline PNG."""
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png")
    data = base64.b64encode(buffer.getvalue()).decode("ascii")
    return f"<img src='data:image/png;base64,{data}' style='max-width:{width}px'/>"


def job_repr(result: Any) -> str:
    """One line: the circuit, the limits met, the files written."""
    met = sum(1 for r in result.limits if r.passed)
    return (f"<JobResult {result.circuit.title!r}: {met} of {len(result.limits)} limits met; "
            f"{len(result.waveforms.t)} points; {len(result.files)} file(s)>")


def job_html(result: Any) -> str:
    """The run's printed summary in ``<pre>`` and its waveform plot."""
    from .plots import waveform_figure
    from .report import run_text

    text = run_text(result.circuit, result.waveforms, result.figures, result.limits, result.files)
    return (f"<pre>{escape(text)}</pre>"
            + figure_png_html(waveform_figure(result.waveforms, title=result.circuit.title, limits=result.limits)))
