"""Work bounds are checked before any work starts, each refusal with the number, the limit
and how to raise it (checks/bounds.py)."""
import pytest

from circuitode.checks import bounds
from circuitode.cli import main
from circuitode.netlist import loads
from circuitode.netlist.limits import reading_policy


def _code_err(capsys, *argv):
    code = main(list(argv))
    err = capsys.readouterr().err
    assert "internal error" not in err
    return code, err


def _file(tmp_path, body):
    path = tmp_path / "w.cnet"
    path.write_text("ground gnd\n" + body, encoding="utf-8")
    return str(path)


RC = ("voltage_source V1 a -- gnd constant 1 V\nresistor R1 a -- b 1 Ω ± 5 %\ncapacitor C1 b -- gnd 1 uF\n"
      "record voltage at b\n")


@pytest.fixture
def simulate_never(monkeypatch):
    """Fail the test if a refused run reaches the simulator."""
    def boom(*args, **kwargs):
        raise AssertionError("the work started before the bound was checked")
    monkeypatch.setattr("circuitode.transient.simulate", boom)


def test_points_1e12_refused_at_10_million(tmp_path, capsys, simulate_never):
    code, err = _code_err(capsys, "run", _file(tmp_path, RC + "transient until 1 ms points 1e12\n"),
                          "--out", str(tmp_path / "o"))
    assert code == 2
    assert "the output grid would have 1,000,000,000,000 points; the limit is 10,000,000" in err
    assert "--allow-large" in err


def test_step_20_ns_over_1_s_refused(tmp_path, capsys, simulate_never):
    code, err = _code_err(capsys, "run", _file(tmp_path, RC + "transient until 1 s step 20 ns\n"),
                          "--out", str(tmp_path / "o"))
    assert code == 2 and "50,000,002 points; the limit is 10,000,000" in err


def test_allow_large_raises_the_point_limit_100_fold(monkeypatch):
    circuit = loads(RC.replace("voltage_source", "ground gnd\nvoltage_source")
                    + "transient until 1 ms points 20000000\n")
    monkeypatch.setattr(bounds, "free_memory", lambda: 10**15)
    with pytest.raises(bounds.BoundError, match="the limit is 10,000,000"):
        bounds.check_run_bounds(circuit)
    with reading_policy(allow_large=True):
        bounds.check_run_bounds(circuit)  # 2e7 < 1e9: allowed
        with pytest.raises(bounds.BoundError, match="the limit is 1,000,000,000"):
            bounds.check_run_bounds(loads(RC.replace("voltage_source", "ground gnd\nvoltage_source")
                                          + "transient until 1 ms points 2e9\n"))


def test_memory_and_disk_are_checked_against_what_is_free(tmp_path, capsys, monkeypatch, simulate_never):
    netlist = _file(tmp_path, RC + "transient until 1 ms step 1 ns\n")  # 1e6 points
    monkeypatch.setattr(bounds, "free_memory", lambda: 10 * 2**20)
    code, err = _code_err(capsys, "run", netlist, "--out", str(tmp_path / "o"))
    assert code == 2 and "80 % of the free memory" in err and "bytes of waveforms" in err
    monkeypatch.setattr(bounds, "free_memory", lambda: 10**12)
    monkeypatch.setattr(bounds, "free_disk", lambda folder: 10 * 2**20)
    code, err = _code_err(capsys, "run", netlist, "--out", str(tmp_path / "o"))
    assert code == 2 and "90 % of the free disk" in err and "waveforms.csv would take about 40,000,080" in err


def test_a_switch_toggling_every_ns_for_2_ms_is_refused_at_100000_events(tmp_path, capsys, simulate_never):
    body = ("voltage_source V1 a -- gnd constant 1 V\nswitch S1 a -- b toggles every 1 ns duty 50 %\n"
            "resistor R1 b -- gnd 1 Ω\nrecord voltage at b\ntransient until 2 ms step 1 us\n")
    code, err = _code_err(capsys, "run", _file(tmp_path, body), "--out", str(tmp_path / "o"))
    assert code == 2
    assert "4,000,004 switching events and source corners; the limit is 100,000" in err


def test_a_1_ns_pulse_train_over_1_s_is_refused(tmp_path, capsys, simulate_never):
    body = ("voltage_source V1 a -- gnd pulses base 0 V top 1 V every 2 ns hold 1 ns\n"
            "resistor R1 a -- gnd 1 Ω\nrecord voltage at a\ntransient until 1 s step 10 us\n")
    code, err = _code_err(capsys, "run", _file(tmp_path, body), "--out", str(tmp_path / "o"))
    assert code == 2 and "switching events and source corners; the limit is 100,000" in err


def _ladder(sections: int) -> str:
    lines = ["ground gnd", "voltage_source V1 n0 -- gnd step from 0 V to 1 V at 0 s"]
    for k in range(sections):
        lines.append(f"resistor R{k} n{k} -- n{k + 1} 1 Ω")
        lines.append(f"capacitor C{k} n{k + 1} -- gnd 1 nF")
    lines += [f"record voltage at n{sections}", "transient until 1 ms step 1 us"]
    return "\n".join(lines) + "\n"


def test_more_than_4000_states_is_refused_before_a_dense_matrix(tmp_path, capsys, simulate_never):
    path = tmp_path / "ladder.cnet"
    path.write_text(_ladder(4001), encoding="utf-8")
    code, err = _code_err(capsys, "run", str(path), "--out", str(tmp_path / "o"))
    assert code == 2 and "the circuit has 4,001 states" in err and "the limit is 4,000" in err


def test_samples_times_states_squared_per_chunk(monkeypatch):
    circuit = loads(_ladder(200))
    monkeypatch.setattr(bounds, "free_memory", lambda: 10**15)
    bounds.check_batch_bounds(circuit, samples=1000, chunk_size=256, parameters=2, figures=5)  # 0.33 GB
    with pytest.raises(bounds.BoundError, match=r"4,096 samples × 200² states per chunk .* "
                                                r"the limit is 2,147,483,648"):
        bounds.check_batch_bounds(circuit, samples=100_000, chunk_size=None, parameters=2, figures=5)


def test_samples_above_10_million_are_refused_before_drawing(tmp_path, capsys, monkeypatch):
    def never(*args, **kwargs):
        raise AssertionError("samples were drawn before the bound was checked")
    monkeypatch.setattr("circuitode.tolerance.batch.draw_samples", never)
    path = _file(tmp_path, RC + "transient until 1 ms step 10 us\n")
    code, err = _code_err(capsys, "tolerance", path, "--samples", "100000000", "--out", str(tmp_path / "o"))
    assert code == 2 and "100,000,000 samples; the limit is 10,000,000" in err


def test_a_terahertz_sine_under_bdf_is_refused_exact_is_not(tmp_path, capsys, simulate_never):
    body = ("voltage_source V1 a -- gnd sine amplitude 1 V frequency 1e12 Hz\n"
            "resistor R1 a -- b 1 Ω\ncapacitor C1 b -- gnd 1 uF\nrecord voltage at b\n"
            "transient until 1 ms points 100 method bdf\n")
    code, err = _code_err(capsys, "run", _file(tmp_path, body), "--out", str(tmp_path / "o"))
    assert code == 2
    assert "1,000,000,000 periods in the window, each stepped by bdf; the limit is 1,000,000" in err
    circuit = loads("ground gnd\n" + body)
    bounds.check_run_bounds(circuit, method="exact")  # the exact method needs no steps per period


def test_kept_waveforms_and_samples_csv_are_checked_against_the_free_disk(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(bounds, "free_disk", lambda folder: 50 * 2**20)
    path = _file(tmp_path, RC + "transient until 1 ms step 10 us\n")
    code, err = _code_err(capsys, "tolerance", path, "--samples", "10000", "--keep-waveforms", "10000",
                          "--out", str(tmp_path / "o"))
    assert code == 2 and "samples.csv and the kept waveforms would take about" in err and "90 % of the free disk" in err
    assert not (tmp_path / "o" / "chunks").exists()
