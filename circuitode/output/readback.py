"""Reading run, batch and sweep folders back, as pandas DataFrames and plain dicts.

``co.read_run(folder)`` reads what ``circuitode run`` wrote (``waveforms.csv``,
``summary.json``); ``co.read_batch(folder)`` what ``circuitode tolerance``
wrote (``samples.csv``, ``batch_summary.json``); ``co.read_sweep(folder)`` the
``sweep.csv`` of ``circuitode sweep``.  Column headers ``name [unit]`` become
the column ``name`` with its unit in ``frame.attrs["units"]``; the waveform
table gets the same ``(time, side)`` index as ``Waveforms.to_frame()`` (see
:mod:`circuitode.notebook`).  The JSON summaries are returned as read.
"""
from __future__ import annotations

import json
import re
from dataclasses import dataclass
from pathlib import Path

from ..errors import CircuitodeError
from ..notebook import pandas_module, side_labels

__all__ = ["RunFolder", "BatchFolder", "read_run", "read_batch", "read_sweep"]

_HEADER = re.compile(r"^(?P<name>.*?)(?: \[(?P<unit>[^\]]*)\])?$")


@dataclass
class RunFolder:
    """A run folder read back: ``waveforms`` (DataFrame) and ``summary`` (the JSON as a dict)."""

    folder: Path
    waveforms: object
    summary: dict

    def __repr__(self) -> str:
        return f"<RunFolder {str(self.folder)!r}: {len(self.waveforms)} rows, {len(self.waveforms.columns)} signals>"


@dataclass
class BatchFolder:
    """A tolerance folder read back: ``samples`` (DataFrame, one row per sample) and ``summary``."""

    folder: Path
    samples: object
    summary: dict

    def __repr__(self) -> str:
        return f"<BatchFolder {str(self.folder)!r}: {len(self.samples)} samples>"


def _need(folder: Path, name: str, command: str) -> Path:
    path = Path(folder) / name
    if not path.is_file():
        raise CircuitodeError(f"{path} does not exist: give a folder written by 'circuitode {command}'")
    return path


def _table(path: Path):
    """DataFrame of a CSV whose headers read ``name [unit]``; units in attrs."""
    pd = pandas_module()
    frame = pd.read_csv(path, keep_default_na=False, na_values=["nan", "NaN"])
    names, units = [], {}
    for header in frame.columns:
        m = _HEADER.match(str(header))
        names.append(m.group("name"))
        units[m.group("name")] = m.group("unit") or ""
    frame.columns = names
    frame.attrs["units"] = units
    return frame


def _json(path: Path) -> dict:
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise CircuitodeError(f"cannot read {path}: {exc}") from None


def read_run(folder) -> RunFolder:
    """The waveforms (index ``time``, ``side``) and the summary of a run folder."""
    pd = pandas_module()
    frame = _table(_need(folder, "waveforms.csv", "run"))
    units = frame.attrs["units"]
    t = frame.pop("time").to_numpy(dtype=float)
    frame.index = pd.MultiIndex.from_arrays([t, side_labels(t)], names=["time", "side"])
    frame.attrs["units"] = units
    summary_path = Path(folder) / "summary.json"
    summary = _json(summary_path) if summary_path.is_file() else {}
    return RunFolder(Path(folder), frame, summary)


def read_batch(folder) -> BatchFolder:
    """The per-sample table (index ``sample``) and the summary of a tolerance folder."""
    frame = _table(_need(folder, "samples.csv", "tolerance"))
    frame = frame.set_index("sample")
    frame["ok"] = frame["ok"].astype(bool)
    summary_path = Path(folder) / "batch_summary.json"
    summary = _json(summary_path) if summary_path.is_file() else {}
    return BatchFolder(Path(folder), frame, summary)


def read_sweep(folder):
    """The sweep table of a sweep folder, one row per point, units in attrs."""
    frame = _table(_need(folder, "sweep.csv", "sweep"))
    for column in frame.columns:
        if column.startswith("pass: ") or column == "ok":
            frame[column] = frame[column].astype(int).astype(bool)
    return frame
