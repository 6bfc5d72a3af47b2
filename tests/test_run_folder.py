"""Traceable run folders (circuitode.jobs.run): what summary.json records, reruns that
replace a folder whole, and threshold switches that never acted."""
from __future__ import annotations

import hashlib
import json
import math

import numpy
import pytest
import scipy

import circuitode
from circuitode.cli import main
from circuitode.jobs.run import run_job, summary_of
from circuitode.output.report import run_text

# RC charge from an ideal 10 V source through 1 kΩ into 1 µF (τ = 1 ms), watched for 2 ms.
# K_late waits for 9.5 V, which v(t) = V (1 − e^(−t/τ)) reaches only after 3 ms: it never
# closes.  K_load opens when the charging current I e^(−t/τ) falls below 1 mA, which it
# does only after 2.3 ms: it never opens (Nilsson & Riedel, Electric Circuits, ch. 7).
RC = """\
circuit "RC charge with two patient switches"
param R = 1 kΩ
param C = 1 uF
ground gnd
voltage_source V1 in -- gnd constant 10 V
resistor R1 in -- out R
capacitor C1 out -- gnd C initial 0 V
switch K_late in -- out closes when voltage at out > 9.5 V on 1 Ω
switch K_load in -- x opens when current through R1 < 1 mA
resistor R_load x -- gnd 1 kΩ
transient until 2 ms step 10 us method exact initial given
record voltage at out, current through R1
require final voltage at out > 8 V
"""


@pytest.fixture
def rc(tmp_path):
    path = tmp_path / "rc.cnet"
    path.write_text(RC, encoding="utf-8")
    return path


def _summary(folder):
    return json.loads((folder / "summary.json").read_text(encoding="utf-8"))


def test_summary_records_hash_parameters_command_method_and_versions(rc, tmp_path, capsys):
    out = tmp_path / "run"
    argv = ["run", str(rc), "--set", "R=500Ω", "--out", str(out), "--no-plots"]
    assert main(argv) == 0
    s = _summary(out)
    assert s["netlist_sha256"] == hashlib.sha256(rc.read_bytes()).hexdigest()
    assert s["parameters"]["R"] == {"value": 500.0, "unit": "Ω"}  # after --set
    assert s["parameters"]["C"] == {"value": 1e-6, "unit": "F"}
    assert s["command"] == ["circuitode", *argv]
    assert s["solver"]["asked"] == "exact" and s["solver"]["method"] == "exact"
    assert s["versions"]["circuitode"] == circuitode.__version__
    assert s["versions"]["numpy"] == numpy.__version__ and s["versions"]["scipy"] == scipy.__version__


def test_api_run_has_no_command_and_hashes_netlist_text(tmp_path):
    result = run_job(RC, out_dir=tmp_path / "api", plots=False, method="radau")
    s = _summary(tmp_path / "api")
    assert s["command"] is None and s["solver"]["asked"] == "radau"
    assert s["netlist_sha256"] == hashlib.sha256(RC.encode("utf-8")).hexdigest()
    assert result.netlist_sha256 == s["netlist_sha256"] and not result.replaced


def test_rerun_without_plots_replaces_the_folder_and_leaves_no_old_plot(rc, tmp_path, capsys):
    out = tmp_path / "run"
    assert main(["run", str(rc), "--out", str(out)]) == 0
    first = capsys.readouterr().out
    assert (out / "waveforms.png").is_file() and "replaced" not in first
    assert main(["run", str(rc), "--out", str(out), "--no-plots"]) == 0
    second = capsys.readouterr().out
    assert sorted(p.name for p in out.iterdir()) == ["summary.json", "waveforms.csv"]
    assert [line for line in second.splitlines() if "replaced" in line] == [f"replaced the earlier run in {out}"]
    assert "plot" not in _summary(out)["files"]


def test_a_complete_run_removes_the_incomplete_folder_of_an_earlier_failure(rc, tmp_path):
    out = tmp_path / "run"
    stale = tmp_path / "run-incomplete"
    stale.mkdir()
    (stale / "waveforms.csv").write_text("time [s]\n0\n", encoding="utf-8")
    run_job(rc, out_dir=out, plots=False)
    assert not stale.exists() and (out / "waveforms.csv").is_file()
    # a folder of that name holding anything else is someone's: kept, and said so
    stale.mkdir()
    (stale / "notes.txt").write_text("mine", encoding="utf-8")
    result = run_job(rc, out_dir=out, plots=False)
    assert (stale / "notes.txt").is_file() and result.replaced
    assert any("holds other files" in p for p in result.problems)


def test_switches_that_never_acted_are_said_under_the_events(rc, tmp_path, capsys):
    out = tmp_path / "run"
    assert main(["run", str(rc), "--out", str(out), "--no-plots"]) == 0
    text = capsys.readouterr().out
    # v(2 ms) = 10 V (1 − e^−2) = 8.647 V; i(2 ms) = 10 mA e^−2 = 1.353 mA (RC charge, ch. 7)
    assert "events (0):" in text
    assert "  K_late never closed: voltage at out peaked at 8.647 V < 9.5 V" in text
    assert "  K_load never opened: current through R1 fell only to 1.353 mA > 1 mA" in text
    idle = {d["switch"]: d for d in _summary(out)["never_acted"]}
    assert idle["K_late"]["extreme"] == pytest.approx(10 * (1 - math.exp(-2)), rel=1e-9)
    assert idle["K_load"]["extreme"] == pytest.approx(10e-3 * math.exp(-2), rel=1e-9)
    assert idle["K_late"]["waited_to"] == "close" and idle["K_load"]["waited_to"] == "open"


def test_a_switch_that_acted_is_not_listed(rc):
    # with 9.5 V → 8 V the threshold is crossed at t = −τ ln(0.2) = 1.609 ms: K_late closes,
    # bypasses R1, and the current through R1 then falls below 1 mA: K_load opens too
    result = run_job(RC.replace("> 9.5 V", "> 8 V"), plots=False)
    assert [ev.switch for ev in result.waveforms.events] == ["K_late", "K_load"]
    assert result.waveforms.events[0].time == pytest.approx(-1e-3 * math.log(0.2), rel=1e-9)
    assert summary_of(result)["never_acted"] == []
    assert "never" not in run_text(result.circuit, result.waveforms, result.figures, result.limits, {})


def test_digits_grow_until_peak_and_threshold_differ():
    from circuitode.analysis.idle_switches import IdleSwitch
    from circuitode.output.report import idle_words

    near = IdleSwitch("K", True, "voltage at a", "V", True, 43.0, 42.9999)
    assert idle_words(near) == "K never closed: voltage at a peaked at 42.9999 V < 43 V"
    unknown = IdleSwitch("K", True, "voltage at a", "V", True, 43.0, None)
    assert idle_words(unknown) == "K never closed: voltage at a never reached 43 V"


def test_precharge_with_a_large_resistor_never_closes_its_main_contactor():
    """The README's example: netlists/precharge.cnet with R_pre = 100 Ω.  After K_pre closes at
    1 ms the link is a first-order circuit: Thévenin source V_th = 48 V · R_load / (R_load + R),
    R_th = R ∥ R_load with R = R_pre + R_int, charging C through R_th + ESR (Nilsson & Riedel,
    Electric Circuits, ch. 4 for Thévenin, ch. 7 for the RC step response)."""
    from pathlib import Path

    netlist = Path(__file__).resolve().parents[1] / "netlists" / "precharge.cnet"
    result = run_job(netlist, overrides={"R_pre": "100 Ω"}, plots=False, with_modes=False)
    (idle,) = summary_of(result)["never_acted"]
    r, r_load, esr, c = 100.0 + 25e-3, 2.2e3, 8e-3, 1.5e-3
    v_th, r_th = 48.0 * r_load / (r_load + r), r * r_load / (r + r_load)
    tau = (r_th + esr) * c
    v_c = v_th * (1 - math.exp(-(80e-3 - 1e-3) / tau))
    v_link = v_c + esr * (v_th - v_c) / (r_th + esr)
    assert idle["switch"] == "K_main" and idle["threshold"] == 43.0
    assert idle["extreme"] == pytest.approx(v_link, rel=1e-9)
    assert idle["words"] == "K_main never closed: voltage at link peaked at 19.44 V < 43 V"
    assert tau == pytest.approx(0.1435, rel=1e-3)  # the README's "τ ≈ 144 ms"
