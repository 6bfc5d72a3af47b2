"""Results that notebooks read (circuitode.notebook, Waveforms.to_frame, Figures without files)."""
from __future__ import annotations

import os
import runpy
from pathlib import Path

import numpy as np
import pytest

import circuitode as co
from circuitode.notebook import side_labels

pd = pytest.importorskip("pandas")
ROOT = Path(__file__).resolve().parent.parent

RC = """\
circuit "RC switched"
ground gnd
voltage_source V1 in -- gnd constant 10 V
switch K1 in -- a closes at 1 ms
resistor R1 a -- out 10 Ω
capacitor C1 out -- gnd 1 uF initial 0 V
transient until 2 ms step 10 us method exact initial given
record current through R1, voltage at out
"""


def test_side_labels_tell_the_two_rows_of_an_instant_apart():
    t = np.array([0.0, 1.0, 1.0, 2.0, 3.0, 3.0, 3.0])
    assert list(side_labels(t)) == ["at", "before", "after", "at", "before", "between 1", "after"]


def test_to_frame_keeps_both_rows_of_a_switching_instant():
    waves = co.simulate(co.loads(RC))
    frame = waves.to_frame()
    assert frame.index.is_unique and frame.index.names == ["time", "side"]
    assert len(frame) == waves.t.size
    # the current jumps from 0 to V/R = 1 A at the closing instant (Nilsson & Riedel ch. 7)
    assert frame.loc[(1e-3, "before"), "current through R1"] == 0.0
    assert frame.loc[(1e-3, "after"), "current through R1"] == pytest.approx(1.0, rel=1e-12)
    assert frame.attrs["units"] == {"time": "s", "current through R1": "A", "voltage at out": "V"}
    assert frame.attrs["events"] == [(1e-3, "K1", True)]


@pytest.mark.parametrize("keep, current", [("before", 0.0), ("after", 1.0)])
def test_to_frame_one_row_per_instant(keep, current):
    waves = co.simulate(co.loads(RC))
    frame = waves.to_frame(keep=keep)
    assert frame.index.is_unique and frame.index.name == "time"
    assert len(frame) == waves.t.size - 1
    assert frame.loc[1e-3, "current through R1"] == pytest.approx(current, abs=1e-12)


def test_to_frame_with_states_and_bad_keep():
    waves = co.simulate(co.loads(RC))
    frame = waves.to_frame(states=True)
    assert frame.attrs["units"]["voltage across C1"] == "V"
    with pytest.raises(co.CircuitodeError, match="before, after"):
        waves.to_frame(keep="middle")


def test_repr_and_html_never_dump_arrays():
    waves = co.simulate(co.loads(RC))
    text, html = repr(waves), waves._repr_html_()
    assert len(text) < 300 and "array" not in text and "202 points" in text
    assert len(html) < 3000 and "array" not in html and "K1 closes" in html


def test_waveform_figure_is_returned_and_saved_only_with_a_path(tmp_path):
    from matplotlib.figure import Figure

    waves = co.simulate(co.loads(RC))
    before = set(os.listdir(tmp_path))
    figure = co.waveform_figure(waves)
    assert isinstance(figure, Figure) and len(figure.axes) == 2
    assert set(os.listdir(tmp_path)) == before
    co.waveform_figure(waves, tmp_path / "w.png")
    assert (tmp_path / "w.png").stat().st_size > 10_000


def test_notebook_example_writes_no_file(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    netlists = ROOT / "netlists"
    before = sorted(p.name for p in netlists.iterdir())
    runpy.run_path(str(ROOT / "docs" / "notebook_example.py"), run_name="__main__")
    assert sorted(p.name for p in netlists.iterdir()) == before
    assert list(tmp_path.iterdir()) == []
    assert "R_pre" in capsys.readouterr().out


def test_batch_result_as_a_frame(tmp_path):
    path = tmp_path / "rc.cnet"
    path.write_text(RC.replace("10 Ω", "10 Ω ± 5 %"), encoding="utf-8")
    result = co.run_batch(path, samples=16, out_dir=tmp_path / "t", plots=False, progress=False)
    frame = result.to_frame()
    assert len(frame) == 16 and frame.index.name == "sample"
    assert frame.attrs["units"]["R1"] == "Ω" and frame.attrs["units"]["peak of current through R1"] == "A"
    # peak current at closing is V/R for every sample (Nilsson & Riedel ch. 7)
    np.testing.assert_allclose(frame["peak of current through R1"], 10.0 / frame["R1"], rtol=1e-12)
    # the ranking as a frame: R1 alone varies, so it explains the peak's whole variance and
    # the peak falls as it rises (ρ = −1); 16 samples make 4 slices, and binning a smooth
    # effect into B slices loses about 1/B² of its share (a line over uniform x: 1 − 1/B²)
    drivers = result.drivers_frame()
    peak = drivers[drivers["figure"] == "peak of current through R1"]
    assert list(peak["part"]) == ["R1"] and list(drivers.columns) == ["figure", "part", "eta2", "spearman_rho"]
    assert 0.8 < peak["eta2"].iloc[0] <= 1.0 and peak["spearman_rho"].iloc[0] == pytest.approx(-1.0)


def test_run_and_batch_results_show_compactly(tmp_path):
    path = tmp_path / "rc.cnet"
    path.write_text(RC.replace("10 Ω", "10 Ω ± 5 %"), encoding="utf-8")
    job = co.run_job(path, out_dir=tmp_path / "run", plots=False)
    assert repr(job).startswith("<JobResult 'RC switched'") and len(repr(job)) < 200
    html = job._repr_html_()
    assert "<pre>" in html and "data:image/png;base64," in html and "array(" not in html
    batch = co.run_batch(path, samples=8, out_dir=tmp_path / "t", plots=False, progress=False)
    assert repr(batch) == "<BatchResult: 8 samples (lhs, seed 0); yield 8 of 8; 11 figures>"
    assert "tolerance batch: 8 samples" in batch._repr_html_()


def test_folders_read_back_as_frames(tmp_path):
    from circuitode.cli import main

    path = tmp_path / "rc.cnet"
    path.write_text(RC.replace("10 Ω", "10 Ω ± 5 %") + "require peak current through R1 < 2 A\n",
                    encoding="utf-8")
    job = co.run_job(path, out_dir=tmp_path / "run", plots=False)
    run = co.read_run(tmp_path / "run")
    assert run.waveforms.index.names == ["time", "side"]
    assert run.waveforms.attrs["units"]["current through R1"] == "A"
    np.testing.assert_allclose(run.waveforms["current through R1"].to_numpy(),
                               job.waveforms["current through R1"], rtol=1e-11, atol=1e-15)
    assert run.waveforms.loc[(1e-3, "after"), "current through R1"] == pytest.approx(1.0, rel=1e-11)
    assert run.summary["all_limits_met"] is True

    batch = co.run_batch(path, samples=8, out_dir=tmp_path / "t", plots=False, progress=False)
    back = co.read_batch(tmp_path / "t")
    assert len(back.samples) == 8 and back.samples["ok"].all()
    np.testing.assert_allclose(back.samples["R1"], batch.samples.values[:, 0], rtol=1e-15)
    assert back.summary["samples"] == 8

    assert main(["sweep", str(path), "--vary", "R1=5Ω,20Ω", "--out", str(tmp_path / "s"), "--no-plots"]) == 0
    table = co.read_sweep(tmp_path / "s")
    assert list(table["pass: peak of current through R1 < 2 A"]) == [False, True]
    assert table.attrs["units"]["R1"] == "Ω"
    with pytest.raises(co.CircuitodeError, match="circuitode run"):
        co.read_run(tmp_path / "t")
