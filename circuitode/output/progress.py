"""A one-line "still working" note on stderr for long single runs.

The driver's loop is not instrumented (it belongs to the numerics); instead a
daemon thread prints the elapsed time every second once a run has taken more
than a few seconds, on the same line, and erases it when the run ends.  It
is off when stderr is not a terminal, so logs and pipes stay clean.
"""
from __future__ import annotations

import sys
import threading
import time
from typing import TextIO

__all__ = ["Ticker"]


class Ticker:
    """Context manager: ``with Ticker("simulating"):`` shows ``simulating… 7 s`` on a terminal.

    label : what is being done.  after : seconds before the first note.  every : seconds
    between notes.  stream : where to write (stderr); nothing is written unless it is a tty.
    """

    def __init__(self, label: str, *, after: float = 3.0, every: float = 1.0, stream: TextIO | None = None):
        self.label, self.after, self.every = label, after, every
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = bool(getattr(self.stream, "isatty", lambda: False)())
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None
        self.shown = 0

    def _loop(self) -> None:
        start = time.monotonic()
        if self._stop.wait(self.after):
            return
        while not self._stop.is_set():
            self.stream.write(f"\r  {self.label}… {time.monotonic() - start:.0f} s ")
            self.stream.flush()
            self.shown += 1
            self._stop.wait(self.every)

    def __enter__(self) -> "Ticker":
        if self.enabled:
            self._thread = threading.Thread(target=self._loop, name="circuitode-progress", daemon=True)
            self._thread.start()
        return self

    def __exit__(self, *exc) -> None:
        if self._thread is None:
            return
        self._stop.set()
        self._thread.join()
        if self.shown:
            self.stream.write("\r" + " " * (len(self.label) + 16) + "\r")
            self.stream.flush()
