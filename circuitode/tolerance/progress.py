"""Progress of batches, sweeps and sizing: a tqdm bar with an ETA.

``tqdm.auto`` draws a text bar on a terminal and a widget bar in a Jupyter
notebook.  The bar goes to stderr and is shown only where someone watches it:
when stderr is a terminal, or in a notebook.  In CI logs and pipes it is off,
so their output stays clean.  tqdm is imported only when a bar is made.
"""
from __future__ import annotations

import sys
from typing import Any, Callable

__all__ = ["Counter", "counter", "watched"]


def _in_notebook(bar_class: type) -> bool:
    """Whether ``tqdm.auto`` chose its notebook (widget) bar, i.e. we run in a Jupyter kernel."""
    notebook = sys.modules.get("tqdm.notebook")
    return notebook is not None and issubclass(bar_class, notebook.tqdm_notebook)


def watched() -> bool:
    """True when a progress bar would be seen: stderr is a terminal, or a notebook shows widgets."""
    from tqdm.auto import tqdm

    stream = sys.stderr
    return _in_notebook(tqdm) or bool(getattr(stream, "isatty", lambda: False)())


class Counter:
    """Counts finished work on a tqdm bar (or a caller's callable).

    total : expected count (None when unknown).  label : the bar's title, e.g. ``"samples"``.
    unit : one item counted (``"sample"``, ``"point"``; tqdm shows its rate per second).
    enabled : False never draws.  report : a callable(count) told each advance instead of a bar.
    """

    def __init__(self, total: int | None, label: str, *, unit: str = "run", enabled: bool = True,
                 report: Callable[[int], Any] | None = None):
        self.report = report
        self.bar = None
        if report is None and enabled and watched():
            from tqdm.auto import tqdm

            self.bar = tqdm(total=total, desc=label, unit=unit, file=sys.stderr, leave=True,
                            dynamic_ncols=True, smoothing=0.1)

    def expect(self, count: int) -> None:
        """Add ``count`` to the expected total (work found to be needed while running)."""
        if self.bar is not None:
            self.bar.total = (self.bar.total or 0) + int(count)  # drawn at the next update

    def advance(self, count: int) -> None:
        """Count ``count`` more finished runs."""
        if self.report is not None:
            self.report(int(count))
        elif self.bar is not None:
            self.bar.update(int(count))

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()

    def __enter__(self) -> "Counter":
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def counter(progress: Any, total: int | None, label: str, unit: str = "run") -> Counter:
    """A Counter from a ``progress`` argument: True (a bar when watched), False/None (nothing)
    or a callable(count) (the caller's own display)."""
    if callable(progress):
        return Counter(total, label, unit=unit, report=progress)
    return Counter(total, label, unit=unit, enabled=bool(progress))
