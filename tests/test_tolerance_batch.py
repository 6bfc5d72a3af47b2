"""run_batch end to end: files, summary, yield exit code, resume, kill and resume, executors."""
import csv
import json
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pytest

from circuitode.errors import CircuitodeError, NetlistError
from circuitode.netlist import loads
from circuitode.tolerance import format_batch_summary, run_batch, wilson_interval

RC_WITH_LIMIT = """
circuit "RC inrush with a current limit"
param R_c = 10 Ω ± 10 %
param C_c = 100 uF ± 20 % uniform
ground gnd
voltage_source V1 rail -- gnd constant 12 V
switch K1 rail -- s closes at 0.1 ms
resistor R1 s -- out R_c
capacitor C1 out -- gnd C_c initial 0 V
resistor R_bleed out -- gnd 10 kΩ
transient until 8 ms step 10 us method exact initial given
record voltage at out, current through R1
require peak current through R1 < 1.2 A
"""


def _run(tmp, **kw):
    kw.setdefault("samples", 200)
    kw.setdefault("seed", 4)
    kw.setdefault("progress", False)
    return run_batch(loads(RC_WITH_LIMIT), out_dir=tmp, **kw)


def test_files_summary_and_yield(tmp_path):
    r = _run(tmp_path, chunk_size=64)
    rows = list(csv.reader(open(r.files["samples"], encoding="utf-8")))
    assert len(rows) == 201 and rows[0][:5] == ["sample", "ok", "message", "R_c", "C_c"]
    summary = json.loads(Path(r.files["summary"]).read_text(encoding="utf-8"))
    assert summary["samples"] == 200
    assert any(str(p).endswith(".png") and Path(p).stat().st_size > 0 for p in r.files.values())
    # the limit peak I = 12 V / R < 1.2 A fails exactly for R < 10 Ω (Ohm's law at the
    # instant of closing, the capacitor still empty; Nilsson & Riedel ch. 7)
    R = r.samples.values[:, 0]
    expected_pass = int(np.sum(12.0 / R < 1.2))
    assert r.yield_estimate.passed == expected_pass
    assert 0 < expected_pass < 200
    assert (r.yield_estimate.low, r.yield_estimate.high) == wilson_interval(expected_pass, 200)
    text = format_batch_summary(r)
    assert max(len(line) for line in text.splitlines()) <= 80
    assert "Wilson" in text and "R_c" in text


def test_min_yield_sets_the_exit_code(tmp_path):
    assert _run(tmp_path / "a", min_yield=0.99).exit_code == 1
    assert _run(tmp_path / "b", min_yield=0.10).exit_code == 0


def test_resume_skips_finished_chunks_and_gives_identical_results(tmp_path):
    whole = _run(tmp_path / "whole", chunk_size=50)
    part = tmp_path / "part"
    _run(part, chunk_size=50)
    os.remove(part / "chunks" / "chunk_000002.npz")
    again = _run(part, chunk_size=50)
    assert again.chunks_resumed == 3
    assert np.array_equal(again.figures, whole.figures, equal_nan=True)


def test_another_seed_in_the_same_folder_is_refused(tmp_path):
    _run(tmp_path, samples=20)
    with pytest.raises(CircuitodeError, match="seed"):
        _run(tmp_path, samples=20, seed=5)


def test_killed_run_resumes_without_loss(tmp_path):
    netlist = tmp_path / "rc.cnet"
    netlist.write_text(RC_WITH_LIMIT, encoding="utf-8")
    out = tmp_path / "killed"
    script = textwrap.dedent(f"""
        from circuitode.tolerance import run_batch
        run_batch({str(netlist)!r}, samples=1500, seed=9, out_dir={str(out)!r}, chunk_size=20,
                  progress=False, plots=False)
    """)
    env = dict(os.environ, PYTHONPATH=str(Path(__file__).resolve().parents[1]))
    proc = subprocess.Popen([sys.executable, "-c", script], env=env)
    chunks = out / "chunks"
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline and not (chunks.exists() and any(chunks.glob("chunk_*.npz"))):
        time.sleep(0.01)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    finished = len(list(chunks.glob("chunk_*.npz")))
    assert 1 <= finished < 75, "the run must be killed part-way"
    resumed = run_batch(str(netlist), samples=1500, seed=9, out_dir=out, chunk_size=20,
                        progress=False, plots=False)
    whole = run_batch(str(netlist), samples=1500, seed=9, out_dir=tmp_path / "whole", chunk_size=20,
                      progress=False, plots=False)
    assert resumed.chunks_resumed == finished
    assert np.array_equal(resumed.figures, whole.figures, equal_nan=True)
    assert np.array_equal(resumed.ok, whole.ok)


def test_local_processes_equal_in_process(tmp_path):
    a = _run(tmp_path / "a", chunk_size=50, plots=False)
    b = _run(tmp_path / "b", chunk_size=50, plots=False, workers=2)
    assert np.array_equal(a.figures, b.figures, equal_nan=True)


def test_dask_cluster_on_localhost_equals_in_process(tmp_path):
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False, host="127.0.0.1",
                                  protocol="tcp", dashboard_address=None) as cluster:
        remote = _run(tmp_path / "dask", chunk_size=50, plots=False, scheduler=cluster.scheduler_address)
    local = _run(tmp_path / "local", chunk_size=50, plots=False)
    assert "Dask" in remote.executor
    assert np.array_equal(remote.figures, local.figures, equal_nan=True)


def test_unreachable_scheduler_is_explained(tmp_path, monkeypatch):
    pytest.importorskip("distributed")
    from circuitode.tolerance import executors

    monkeypatch.setattr(executors, "CONNECT_TIMEOUT", 1.0)
    with pytest.raises(CircuitodeError, match="cannot reach the Dask scheduler"):
        _run(tmp_path, samples=10, scheduler="tcp://127.0.0.1:9")


def test_a_spread_source_level_varies_per_sample(tmp_path):
    # the rail itself is ± 5 %: the peak current at closing is V/R per sample (Ohm's law,
    # capacitor still empty; Nilsson & Riedel ch. 7)
    text = RC_WITH_LIMIT.replace("constant 12 V", "constant 12 V ± 5 % uniform")
    r = run_batch(loads(text), samples=40, seed=3, out_dir=tmp_path, progress=False, plots=False)
    names = r.samples.names
    V = r.samples.values[:, names.index("V1.waveform.value")]
    R = r.samples.values[:, names.index("R_c")]
    peak = r.figures[:, r.figure_keys.index(("peak", "current through R1"))]
    assert np.allclose(peak, V / R, rtol=1e-9)
    assert np.ptp(V) > 0.5


def test_a_spread_on_source_timing_is_refused_plainly(tmp_path):
    text = RC_WITH_LIMIT.replace("constant 12 V", "sine amplitude 12 V frequency 50 Hz ± 5 %")
    with pytest.raises(CircuitodeError, match="only a source's levels"):
        run_batch(loads(text), samples=10, out_dir=tmp_path, progress=False)


def test_kept_waveforms_are_written_decimated(tmp_path):
    r = _run(tmp_path, samples=30, chunk_size=8, plots=False, keep_waveforms=3)
    files = sorted(k for k in r.files if k.startswith("waveform"))
    assert files == ["waveform 0", "waveform 1", "waveform 2"]
    rows = list(csv.reader(open(r.files["waveform 1"], encoding="utf-8")))
    assert rows[0] == ["time [s]", "voltage at out [V]", "current through R1 [A]"]
    data = np.array(rows[1:], dtype=float)
    # the peak current of sample 1 is 12 V / R (capacitor empty when K1 closes, Ohm's law)
    assert data[:, 2].max() == pytest.approx(12.0 / r.samples.values[1, 0], rel=1e-9)
    assert len(data) <= 2100


def test_a_circuit_that_cannot_run_is_reported_once_as_bad_input(tmp_path):
    text = RC_WITH_LIMIT.replace("resistor R_bleed out -- gnd 10 kΩ", "").replace(
        "capacitor C1 out -- gnd C_c initial 0 V", "inductor L9 out -- gnd 1 mH ± 5 %")
    text = text.replace("switch K1 rail -- s closes at 0.1 ms", "switch K1 rail -- s opens at 0.1 ms")
    with pytest.raises(CircuitodeError) as err:
        run_batch(loads(text), samples=10, out_dir=tmp_path / "x", progress=False)
    assert err.value.exit_code == 2 and "K1" in str(err.value)


def test_summary_names_the_sample_closest_to_each_limit(tmp_path):
    r = _run(tmp_path, plots=False)
    k, value = r.worst["peak of current through R1 < 1.2"]
    peaks = r.figures[:, r.figure_keys.index(("peak", "current through R1"))]
    assert k == int(np.argmax(peaks)) and value == peaks.max()
    assert f"at sample {k}" in format_batch_summary(r)


# the progress bar is tested in tests/test_tolerance_progress.py


def test_a_spread_on_an_initial_value_is_refused_at_its_line(tmp_path):
    # Batches share initial states; a tolerance reaching one is named at the
    # netlist line that carries it, with what to change (not a nominal-run failure).
    text = RC_WITH_LIMIT.replace("initial 0 V", "initial V0").replace(
        "ground gnd", "param V0 = 1 V ± 10 %\nground gnd")
    with pytest.raises(NetlistError) as info:
        run_batch(loads(text), samples=10, out_dir=tmp_path, progress=False)
    assert info.value.where is not None and info.value.where.line == 5
    assert "initial voltage of C1" in info.value.message and "V0" in info.value.hint


def test_per_limit_columns_keys_safety_and_worst_sample_wording(tmp_path):
    r = _run(tmp_path, chunk_size=64, plots=False)
    rows = list(csv.reader(open(r.files["samples"], encoding="utf-8")))
    column = rows[0].index("pass: peak of current through R1 < 1.2 A")
    # the pass column is the limit itself, sample by sample: 12 V / R < 1.2 A (Ohm's law at closing)
    R = r.samples.values[:, 0]
    assert [int(row[column]) for row in rows[1:]] == [int(12.0 / x < 1.2) for x in R]
    summary = json.loads(Path(r.files["summary"]).read_text(encoding="utf-8"))
    assert summary["yield"]["per_limit"] == {"peak of current through R1 < 1.2 A": r.yield_estimate.passed}
    assert "local electrical codes" in summary["safety"].lower()
    text = format_batch_summary(r)
    # some samples fail this limit, so the sample named beside it is the worst one, not a "closest" pass
    assert "worst (fails): " in text and "closest:" not in text


def test_a_figure_without_spread_says_so_instead_of_printing_rounding_noise(tmp_path):
    r = _run(tmp_path, chunk_size=64, plots=False)
    text = format_batch_summary(r)
    # every sample's switch closes at 0.1 ms, so the time of peak current is one instant for all
    line = next(li for li in text.splitlines() if li.startswith("time of peak, current through R1"))
    assert "does not vary" in line and "σ" not in line
    assert max(len(li) for li in text.splitlines()) <= 80
