"""How a run's waveforms look in a notebook: a pandas DataFrame, a short ``repr``, a compact HTML table.

Knows no circuits: it reads the fields of a :class:`circuitode.transient.Waveforms`
(``t``, ``signals``, ``units``, ``events``, ``states``).  pandas is an optional
extra (``pip install circuitode[frames]``); nothing here imports it before
:meth:`WaveformsView.to_frame` is called.

Two rows at one instant
-----------------------
A switching instant is recorded twice, just before and just after the switch
moves, so that jumps stay sharp.  ``to_frame()`` keeps both rows and makes the
index unique with a second level, ``side``:

* ``"at"`` for an ordinary instant,
* ``"before"`` and ``"after"`` for the two rows of a switching instant
  (``"between 1"``, ``"between 2"`` … for any rows in the middle, should several
  events share an instant).

``to_frame(keep="after")`` (or ``"before"``) keeps one row per instant and gives
a plain, unique time index instead — convenient for resampling or joining.
"""
from __future__ import annotations

from html import escape

import numpy as np

from .errors import CircuitodeError

__all__ = ["WaveformsView", "side_labels", "pandas_module"]

KEEP = ("both", "before", "after")


def pandas_module():
    """The pandas module, or a CircuitodeError saying how to install it."""
    try:
        import pandas
    except ImportError:  # a third-party extra, not one of our modules
        raise CircuitodeError("DataFrames need pandas: pip install 'circuitode[frames]' (or pip install pandas)") \
            from None
    return pandas


def side_labels(t: np.ndarray) -> np.ndarray:
    """(nt,) "at", "before", "after" or "between k" for each time row (see the module text)."""
    t = np.asarray(t, dtype=float)
    if t.size == 0:
        return np.zeros(0, dtype=object)
    starts = np.concatenate([[True], t[1:] != t[:-1]])
    group = np.cumsum(starts) - 1
    first = np.flatnonzero(starts)
    size = np.diff(np.append(first, t.size))[group]
    position = np.arange(t.size) - first[group]
    out = np.array([f"between {p}" for p in position], dtype=object)
    out[position == 0] = "before"
    out[position == size - 1] = "after"
    out[size == 1] = "at"
    return out


def _fmt(value: float, unit: str) -> str:
    from .quantities import format_si

    return format_si(value, unit, 4)


class WaveformsView:
    """Notebook face of Waveforms: ``to_frame``, a one-line ``repr`` and ``_repr_html_``."""

    def to_frame(self, keep: str = "both", states: bool = False):
        """The recorded signals as a pandas DataFrame.

        Parameters
        ----------
        keep : "both" (every row; index levels ``time`` in s and ``side``), or "before" /
            "after" (one row per instant; a unique ``time`` index in s).
        states : also include the state variables (capacitor voltages, inductor currents).

        Returns
        -------
        DataFrame with one column per signal label; ``attrs["units"]`` maps every column
        (and ``"time"``) to its SI unit; ``attrs["events"]`` lists (time s, switch, closed).
        """
        if keep not in KEEP:
            raise CircuitodeError(f"keep={keep!r}: use one of {', '.join(KEEP)}")
        pd = pandas_module()
        columns = {label: np.asarray(values, dtype=float) for label, values in self.signals.items()}
        units = dict(self.units)
        if states:
            for j, (name, unit) in enumerate(zip(self.state_names, self.state_units)):
                if name not in columns:
                    columns[name] = self.states[:, j]
                    units[name] = unit
        t = np.asarray(self.t, dtype=float)
        side = side_labels(t)
        if keep == "both":
            index = pd.MultiIndex.from_arrays([t, side], names=["time", "side"])
            rows = slice(None)
        else:
            drop = "after" if keep == "before" else "before"
            rows = np.flatnonzero(~np.isin(side, [drop] + [s for s in set(side) if s.startswith("between")]))
            index = pd.Index(t[rows], name="time")
        frame = pd.DataFrame({k: v[rows] for k, v in columns.items()}, index=index)
        frame.attrs["units"] = {"time": "s", **{k: units.get(k, "") for k in columns}}
        frame.attrs["events"] = [(e.time, e.switch, e.closed) for e in self.events]
        return frame

    def __repr__(self) -> str:
        t = np.asarray(self.t)
        span = f"{_fmt(t[0], 's')} to {_fmt(t[-1], 's')}" if t.size else "empty"
        signals = ", ".join(f"{k} [{self.units.get(k, '')}]" for k in list(self.signals)[:4])
        more = f" and {len(self.signals) - 4} more" if len(self.signals) > 4 else ""
        return (f"<Waveforms: {t.size} points, {span}; {len(self.events)} event(s); method {self.method}; "
                f"signals {signals}{more}>")

    def _repr_html_(self) -> str:
        rows = []
        for label, values in self.signals.items():
            y = np.asarray(values, dtype=float)
            unit = self.units.get(label, "")
            if y.size:
                k = int(np.nanargmax(np.abs(y)))
                cells = (_fmt(abs(y[k]), unit), _fmt(self.t[k], "s"), _fmt(np.nanmin(y), unit), _fmt(y[-1], unit))
            else:
                cells = ("", "", "", "")
            rows.append("<tr><td>" + escape(label) + "</td>" + "".join(f"<td>{escape(c)}</td>" for c in cells)
                        + "</tr>")
        events = "".join(f"<li>{escape(_fmt(e.time, 's'))}: {escape(e.switch)} "
                         f"{'closes' if e.closed else 'opens'}</li>" for e in list(self.events)[:12])
        more = f"<li>… {len(self.events) - 12} more</li>" if len(self.events) > 12 else ""
        return (f"<p>{escape(repr(self))}</p><table><thead><tr><th>signal</th><th>peak |y|</th><th>at</th>"
                f"<th>minimum</th><th>final</th></tr></thead><tbody>{''.join(rows)}</tbody></table>"
                + (f"<p>events:</p><ul>{events}{more}</ul>" if events else ""))
