"""Read a measured waveform (a scope capture exported as CSV) into SI arrays.

The accepted layouts are described in docs/captures.md.  In short:

* any number of header lines before the data; a header line "name<sep>value"
  may give the sample interval (``sample interval``, ``interval``, ``dt`` or
  ``time step``) and the time of the first sample (``start`` or ``t0``), each as
  a quantity with its unit (``1 us``, ``2.5e-7 s``);
* the line just before the data may name the columns; a unit goes in brackets,
  parentheses or after a slash (``time [ms]``, ``CH2 (V)``, ``ch1 / mV``);
* fields separated by comma, semicolon or tab; with semicolon or tab
  separators a decimal comma is accepted;
* a time column (named ``time`` or ``t``, or with a unit of seconds) or a sample
  interval in the header; every other column is a channel.

The numbers are parsed with numpy in one call; only when that fails is the block
read line by line to say which line and field is wrong.
"""
from __future__ import annotations

import io
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import CircuitodeError
from ..quantities import parse_quantity, read_quantity

__all__ = ["Capture", "CaptureError", "read_capture", "parse_capture"]

_NUMBER = re.compile(r"^[+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?$")
_UNIT_IN_NAME = re.compile(r"^(.*?)\s*(?:\[([^\]]*)\]|\(([^)]*)\)|/\s*(\S+))\s*$")
_INTERVAL_KEYS = ("sample interval", "sampling interval", "interval", "dt", "time step")
_START_KEYS = ("start", "t0", "first sample")
_TIME_NAMES = ("time", "t")


class CaptureError(CircuitodeError):
    """A capture file that cannot be read; the message names the file, line and what was expected."""


@dataclass(frozen=True)
class Capture:
    """A measured waveform.

    t : (nt,) s, strictly increasing.  channels : name → (nt,) values in SI units.
    units : name → "V", "A" or "" (no unit given).  header : header key → text.
    source : file name.  first_data_line : 1-based line of the first sample.
    """

    t: np.ndarray
    channels: dict[str, np.ndarray]
    units: dict[str, str]
    header: dict[str, str] = field(default_factory=dict)
    source: str = ""
    first_data_line: int = 0

    @property
    def sample_interval(self) -> float:
        """s, the median spacing of the samples."""
        return float(np.median(np.diff(self.t)))

    def channel(self, which: str | int) -> str:
        """The channel's name from a name or a number.

        A number N picks the channel whose name ends in N ("CH2", "channel 2")
        when exactly one does, else the N-th channel column (counting from 1).
        """
        names = list(self.channels)
        text = str(which).strip()
        if text in self.channels:
            return text
        lowered = {n.lower(): n for n in names}
        if text.lower() in lowered:
            return lowered[text.lower()]
        if text.isdigit():
            ending = [n for n in names if re.search(rf"(?<!\d){text}$", n)]
            if len(ending) == 1:
                return ending[0]
            k = int(text)
            if 1 <= k <= len(names):
                return names[k - 1]
        raise CaptureError(f"{self.source}: no channel {text!r}; the capture has "
                           f"{len(names)} channel(s): {', '.join(names)}")


def _fail(source: str, line: int, message: str) -> CaptureError:
    return CaptureError(f"{source}, line {line}: {message}")


def _separator(line: str) -> str:
    for sep in ("\t", ";"):
        if sep in line:
            return sep
    return ","


def _is_number(text: str, sep: str) -> bool:
    return bool(_NUMBER.match(text)) and ("," not in text or sep != ",")


def _fields(line: str, sep: str) -> list[str]:
    parts = [p.strip().strip('"').strip() for p in line.split(sep)]
    while parts and parts[-1] == "":  # a trailing separator
        parts.pop()
    return parts


def _is_data(line: str) -> bool:
    parts = _fields(line, _separator(line))
    return bool(parts) and all(_is_number(p, _separator(line)) for p in parts)


def _name_and_unit(text: str, source: str, line: int) -> tuple[str, str, float]:
    """'time [ms]' → ('time', 's', 1e-3); a name without a unit → (name, '', 1)."""
    m = _UNIT_IN_NAME.match(text)
    if m is None or not m.group(1):
        return text, "", 1.0
    unit_text = next(g for g in m.groups()[1:] if g is not None).strip()
    try:
        q = read_quantity("1", unit_text)
    except CircuitodeError:
        raise _fail(source, line, f"column {text!r}: unknown unit {unit_text!r}; expected a unit such as "
                                  "s, ms, us, V, mV, kV, A, mA") from None
    return m.group(1).strip(), q.unit, q.value


def _header_value(lines: list[str], keys, unit: str, source: str):
    """The quantity given for one of ``keys`` in the header lines, or None."""
    for number, line in lines:
        parts = [p for p in _fields(line, _separator(line)) if p]
        if len(parts) < 2 or parts[0].lower().rstrip(":") not in keys:
            continue
        text = " ".join(parts[1:3]) if len(parts) > 2 else parts[1]
        text = text.replace(",", ".") if _separator(line) != "," else text
        try:
            return parse_quantity(text if any(c.isalpha() for c in text) else f"{text} {unit}", unit)
        except CircuitodeError:
            raise _fail(source, number, f"{parts[0]!r} should be a time such as '1 us' or '2.5e-7 s'; "
                                        f"got {text!r}") from None
    return None


def _data_start(lines: list[str]) -> int | None:
    """Index of the first row of numbers whose next non-blank line is also one (or is the end).

    Only the header and the first data rows are looked at; a lone number inside
    the header (followed by text) does not start the data."""
    for k, line in enumerate(lines):
        if not _is_data(line):
            continue
        following = next((other for other in lines[k + 1:k + 50] if other.strip()), None)
        if following is None or _is_data(following):
            return k
    return None


def parse_capture(text: str, source: str = "<capture>") -> Capture:
    """Read capture text (see the module notes for the layouts); raises CaptureError."""
    lines = text.lstrip("\ufeff").splitlines()
    first = _data_start(lines)
    if first is None:
        raise CaptureError(f"{source}: no line of numbers found; expected a block of rows such as "
                           "'0.000012,1.25,0.31' after the header lines")
    end = len(lines)
    while end > first and not lines[end - 1].strip():  # blank lines at the end
        end -= 1
    sep = _separator(lines[first])
    width = len(_fields(lines[first], sep))
    header = [(k + 1, lines[k]) for k in range(first) if lines[k].strip()]
    block = "\n".join(lines[first:end])
    block = re.sub(rf"(?:{re.escape(sep)}[ \t]*)+$", "", block, flags=re.M)  # trailing separators
    if sep != ",":
        block = block.replace(",", ".")
    try:
        data = np.loadtxt(io.StringIO(block), delimiter=sep, ndmin=2, dtype=float, quotechar='"')
    except ValueError:
        data = None
    if data is None or data.shape[1] != width or not np.all(np.isfinite(data)):
        for k in range(first, end):  # only on failure: find and name the bad line
            parts = _fields(lines[k], sep)
            if not lines[k].strip():
                continue
            if not any(_is_number(p, sep) for p in parts):
                raise _fail(source, k + 1, "text after the block of numbers; expected the data to run to "
                                           "the end of the file (remove the trailing lines)")
            if len(parts) != width:
                raise _fail(source, k + 1, f"expected {width} fields separated by {sep!r}, like line "
                                           f"{first + 1}; got {len(parts)}")
            for j, p in enumerate(parts):
                if not _is_number(p, sep) or not np.isfinite(float(p.replace(",", "."))):
                    raise _fail(source, k + 1, f"field {j + 1} is {p!r}; expected a number"
                                               + (" (decimal point, as the separator is a comma)"
                                                  if sep == "," and "," in p else ""))
        raise _fail(source, first + 1, "the block of numbers could not be read")

    names = [f"channel {j + 1}" for j in range(width)]
    units, scales = [""] * width, [1.0] * width
    last = _fields(header[-1][1], _separator(header[-1][1])) if header else []
    if len(last) == width and last[0].lower().rstrip(":") not in _INTERVAL_KEYS + _START_KEYS:
        number, line = header[-1]
        parsed = [_name_and_unit(p, source, number) for p in _fields(line, _separator(line))]
        names = [p[0] or f"channel {j + 1}" for j, p in enumerate(parsed)]
        units = [p[1] for p in parsed]
        scales = [p[2] for p in parsed]
        header = header[:-1]
    data = data * np.array(scales)
    time_col = next((j for j in range(width) if units[j] == "s" or names[j].lower() in _TIME_NAMES), None)
    if time_col is not None:
        t = data[:, time_col]
    else:
        dt = _header_value(header, _INTERVAL_KEYS, "s", source)
        if dt is None:
            raise _fail(source, first, "no time column and no sample interval: name a column 'time [s]' "
                                       "or add a header line such as 'sample interval,1 us'")
        if not dt > 0:
            raise _fail(source, first, f"the sample interval must be positive; got {dt} s")
        start = _header_value(header, _START_KEYS, "s", source) or 0.0
        t = start + dt * np.arange(data.shape[0])
    steps = np.diff(t)
    if steps.size and not np.all(steps > 0):
        k = int(np.argmax(~(steps > 0)))
        raise _fail(source, first + k + 2, f"time {t[k + 1]:g} s does not come after {t[k]:g} s; "
                                           "expected strictly increasing times")
    if data.shape[0] < 3:
        raise _fail(source, first + 1, f"only {data.shape[0]} sample(s); expected at least 3")
    chans = {names[j]: data[:, j].copy() for j in range(width) if j != time_col}
    if not chans:
        raise _fail(source, first + 1, "only a time column; expected at least one channel beside it")
    meta = {}
    for _, line in header:
        parts = [p for p in _fields(line, _separator(line)) if p]
        if len(parts) >= 2:
            meta[parts[0].rstrip(":")] = " ".join(parts[1:])
    return Capture(t=t.copy(), channels=chans, units={names[j]: units[j] for j in range(width) if j != time_col},
                   header=meta, source=source, first_data_line=first + 1)


def read_capture(path: str | Path) -> Capture:
    """Read a capture file (UTF-8, else Latin-1); raises CaptureError with file and line."""
    p = Path(path)
    if not p.is_file():
        raise CaptureError(f"no capture file at {str(path)!r}; give the path to a CSV export")
    raw = p.read_bytes()
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    return parse_capture(text, source=str(path))
