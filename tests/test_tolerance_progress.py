"""Progress bars (circuitode.tolerance.progress) of batches, sweeps and sizing.

What is checked: a bar appears only where someone watches it (a terminal's
stderr), counts every simulated point exactly once and ends at its total.
No timing is asserted.
"""
from __future__ import annotations

import re

import pytest

from circuitode.netlist import loads
from circuitode.studies import sweep
from circuitode.studies.sizing import size
from circuitode.tolerance import progress as progress_module
from circuitode.tolerance import run_batch

RC = """\
circuit "RC charge"
param R = 10 Ω ± 10 %
param C = 1 uF
ground gnd
voltage_source V1 in -- gnd constant 10 V
resistor R1 in -- out R
capacitor C1 out -- gnd C initial 0 V
transient until 200 us step 1 us method exact initial given
record current through R1, voltage at out
require peak current through R1 < 0.8 A
require final voltage at out > 9 V
"""


class _Screen:
    """A stand-in stderr; ``tty`` says whether it claims to be a terminal."""

    def __init__(self, tty: bool):
        self.tty, self.text = tty, ""

    def isatty(self):
        return self.tty

    def write(self, s):
        self.text += s

    def flush(self):
        pass


@pytest.fixture
def rc(tmp_path):
    path = tmp_path / "rc.cnet"
    path.write_text(RC, encoding="utf-8")
    return path


def _last_count(text: str) -> tuple[int, int]:
    """The last ``n/total`` a bar drew."""
    found = re.findall(r"(\d+)/(\d+)", text)
    assert found, f"no bar drawn: {text!r}"
    return int(found[-1][0]), int(found[-1][1])


def test_counter_draws_only_on_a_terminal(monkeypatch):
    quiet = _Screen(False)
    monkeypatch.setattr(progress_module.sys, "stderr", quiet)
    with progress_module.Counter(5, "work") as bar:
        bar.advance(5)
    assert quiet.text == "" and bar.bar is None
    screen = _Screen(True)
    monkeypatch.setattr(progress_module.sys, "stderr", screen)
    with progress_module.Counter(5, "work") as bar:
        bar.advance(2)
        bar.expect(3)  # more work found while running: the total grows
        bar.advance(6)
    assert "work" in screen.text and "0/5" in screen.text
    assert _last_count(screen.text) == (8, 8)


def test_a_callable_is_told_instead_of_a_bar(monkeypatch):
    screen = _Screen(True)
    monkeypatch.setattr(progress_module.sys, "stderr", screen)
    told = []
    with progress_module.counter(told.append, 4, "work") as bar:
        bar.advance(3)
        bar.advance(1)
    assert told == [3, 1] and screen.text == ""


def test_batch_bar_counts_every_sample_on_a_terminal_only(tmp_path, monkeypatch, capsys):
    run_batch(loads(RC), samples=20, seed=1, out_dir=tmp_path / "quiet", plots=False, progress=True)
    assert capsys.readouterr().err == ""  # pytest's stderr is not a terminal
    screen = _Screen(True)
    monkeypatch.setattr(progress_module.sys, "stderr", screen)
    run_batch(loads(RC), samples=20, seed=1, out_dir=tmp_path / "tty", plots=False, progress=True, chunk_size=10)
    assert "samples" in screen.text and "0/20" in screen.text
    assert _last_count(screen.text) == (20, 20)
    # a batch that asks for no progress draws nothing even on a terminal
    screen.text = ""
    run_batch(loads(RC), samples=20, seed=1, out_dir=tmp_path / "off", plots=False, progress=False)
    assert screen.text == ""


def test_sweep_bar_counts_the_grid(rc, monkeypatch):
    screen = _Screen(True)
    monkeypatch.setattr(progress_module.sys, "stderr", screen)
    result = sweep(rc, {"R": "5Ω..50Ω/7/log", "C": "1uF,2uF"})
    assert result.points.shape[0] == 14
    assert "sweep" in screen.text and _last_count(screen.text) == (14, 14)
    told = []
    sweep(rc, {"R": "5Ω..50Ω/7/log"}, progress=told.append)
    assert sum(told) == 7


def test_sizing_bar_ends_at_its_grown_total(rc, monkeypatch):
    screen = _Screen(True)
    monkeypatch.setattr(progress_module.sys, "stderr", screen)
    result = size(rc, "R", "1Ω..100Ω", points=9)
    assert result.intervals  # 10 V / R < 0.8 A holds above 12.5 Ω (Ohm's law), so something passes
    done, total = _last_count(screen.text)
    # the sweep of 9 points, every refinement run and the middle of each piece, all counted
    assert done == total and done > 9
    assert "sizing R" in screen.text
