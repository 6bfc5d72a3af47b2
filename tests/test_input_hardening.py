"""Bad input is exit 2 located, the environment exit 4, and no input reaches 'internal error'.

One test per class of input found by an outside attack on the tool (huge
exponents, NUL in include, too few points, near-coincident events, negative
counts, foreign scheduler addresses, unlocated messages, byte-order marks).
"""
import os
import socket
import threading

import pytest

from circuitode.cli import main

RC = """\
circuit "RC"
param R = 1 kΩ ± 5 %
ground gnd
voltage_source V1 a -- gnd step from 0 V to 10 V at 0 s
resistor R1 a -- b R
capacitor C1 b -- gnd 1 uF initial 0 V
transient until 5 ms {window}
record voltage at b
"""


def _write(tmp_path, text, name="x.cnet"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return str(path)


def _run(capsys, *argv):
    code = main(list(argv))
    captured = capsys.readouterr()
    assert "internal error" not in captured.err and "Traceback" not in captured.err
    return code, captured.out, captured.err


def _netlist(tmp_path, body, window="step 50 us"):
    return _write(tmp_path, "ground gnd\n" + body + f"\ntransient until 1 ms {window}\n")


@pytest.mark.parametrize("line, column", [
    ("voltage_source V1 a -- gnd constant 1e9999999999999999999 V\nresistor R1 a -- gnd 1 Ω", 37),
    ("voltage_source V1 a -- gnd constant 1 V\nresistor R1 a -- gnd 1 Ω ± 1e99999999999999999999 %", 28),
    ("voltage_source V1 a -- gnd constant 1e-99999999999999999999 V\nresistor R1 a -- gnd 1 Ω", 37),
])
def test_huge_exponents_are_located_bad_input(tmp_path, capsys, line, column):
    path = _netlist(tmp_path, line + "\nrecord voltage at a")
    code, _, err = _run(capsys, "check", path)
    assert code == 2 and "out of range" in err
    assert f"x.cnet:{2 + line.count(chr(10)) - (0 if '±' in line else 1)}:{column}:" in err


def test_huge_exponent_in_set_is_bad_input(tmp_path, capsys):
    path = _write(tmp_path, RC.format(window="step 50 us"))
    code, _, err = _run(capsys, "run", path, "--set", "R=1e9999999999999999999", "--out", str(tmp_path / "o"))
    assert code == 2 and "out of range" in err


def test_nul_in_an_include_path_is_located(tmp_path, capsys):
    from circuitode.errors import NetlistError
    from circuitode.netlist import loads

    with pytest.raises(NetlistError, match="control characters") as info:
        loads('ground gnd\ninclude "a\0b"\n', str(tmp_path / "x.cnet"))
    assert info.value.where.line == 2
    raw = tmp_path / "nul.cnet"
    raw.write_bytes(b'ground gnd\ninclude "a\0b"\n')
    code, _, err = _run(capsys, "check", str(raw))
    assert code == 2 and "nul.cnet:2:11: error: a NUL character in the netlist" in err
    raw.write_bytes(b"ground gnd\nresistor R1 a -- gnd 1 \xff\n")
    code, _, err = _run(capsys, "check", str(raw))
    assert code == 2 and "nul.cnet:2:24: error: bytes that are not UTF-8 text" in err


@pytest.mark.parametrize("window", ["points 2", "step 5 ms"])
def test_two_output_points_give_a_complete_run(tmp_path, capsys, window):
    path = _write(tmp_path, RC.format(window=window))
    out = tmp_path / "o"
    code, _, _ = _run(capsys, "run", path, "--out", str(out), "--no-plots")
    assert code == 0 and (out / "summary.json").exists()


def test_an_event_within_1e_12_of_the_window_is_located(tmp_path, capsys):
    body = ("voltage_source V1 a -- gnd points (0 s, 0 V) (1e-16 s, 1 V) (1 ms, 1 V)\n"
            "resistor R1 a -- b 1 Ω\ncapacitor C1 b -- gnd 1 uF\nrecord voltage at b")
    code, _, err = _run(capsys, "run", _netlist(tmp_path, body), "--out", str(tmp_path / "o"))
    assert code == 2 and "x.cnet:2:" in err and "cannot be told apart" in err
    body = ("voltage_source V1 a -- gnd constant 1 V\nswitch S1 a -- b closes at 0.5 ms opens at 0.5000000000000001 ms\n"
            "resistor R1 b -- c 1 Ω\ncapacitor C1 c -- gnd 1 uF\nrecord voltage at c")
    code, _, err = _run(capsys, "run", _netlist(tmp_path, body), "--out", str(tmp_path / "o"))
    assert code == 2 and "x.cnet:3:" in err and "S1" in err


@pytest.mark.parametrize("flag", ["--seed", "--keep-waveforms"])
def test_negative_counts_are_refused(tmp_path, capsys, flag):
    path = _write(tmp_path, RC.format(window="step 50 us"))
    code, _, err = _run(capsys, "tolerance", path, "--samples", "8", flag, "-1", "--out", str(tmp_path / "o"))
    assert code == 2 and flag in err and "at least 0" in err
    assert not (tmp_path / "o").exists()


def test_a_pulse_period_of_zero_is_located(tmp_path, capsys):
    body = ("voltage_source V1 a -- gnd pulses base 0 V top 1 V every 0 s hold 1 us\n"
            "resistor R1 a -- gnd 1 Ω\nrecord voltage at a")
    code, _, err = _run(capsys, "check", _netlist(tmp_path, body))
    assert code == 2 and "x.cnet:2:28: error: a pulse period must be positive" in err


def test_a_byte_order_mark_is_accepted(tmp_path, capsys):
    path = tmp_path / "bom.cnet"
    path.write_bytes("\ufeff".encode() + RC.format(window="step 50 us").encode())
    code, out, _ = _run(capsys, "check", str(path))
    assert code == 0 and "RC" in out


# --------------------------------------------------------------------------
# scheduler addresses
# --------------------------------------------------------------------------


@pytest.mark.parametrize("address", ["tls://127.0.0.1:8786", "ucx://127.0.0.1:8786", "tcp://nohost"])
def test_unsupported_scheduler_addresses_are_bad_input(tmp_path, capsys, address):
    pytest.importorskip("distributed")
    path = _write(tmp_path, RC.format(window="step 50 us"))
    code, _, err = _run(capsys, "tolerance", path, "--samples", "8", "--scheduler", address,
                        "--out", str(tmp_path / "o"))
    assert code == 2 and "tcp://host:8786" in err


def _greeter(greeting: bytes):
    """A loopback server that sends ``greeting`` to each client first; stops itself after
    two connections or 10 s."""
    server = socket.create_server(("127.0.0.1", 0))
    server.settimeout(10)

    def serve():
        with server:
            for _ in range(2):
                try:
                    conn, _ = server.accept()
                except OSError:
                    return
                with conn:
                    conn.sendall(greeting)

    thread = threading.Thread(target=serve, daemon=True)
    thread.start()
    return server.getsockname()[1], thread


def test_a_service_that_speaks_first_is_no_scheduler(tmp_path, capsys):
    pytest.importorskip("distributed")
    port, thread = _greeter(b"SSH-2.0-SomeServer_1.0\r\n")
    path = _write(tmp_path, RC.format(window="step 50 us"))
    code, _, err = _run(capsys, "tolerance", path, "--samples", "8", "--scheduler", f"tcp://127.0.0.1:{port}",
                        "--out", str(tmp_path / "o"))
    thread.join(timeout=15)
    assert code == 4 and "is not a Dask scheduler" in err and f"127.0.0.1:{port}" in err


def test_an_unreachable_scheduler_is_exit_4(tmp_path, capsys):
    pytest.importorskip("distributed")
    probe = socket.create_server(("127.0.0.1", 0))
    port = probe.getsockname()[1]
    probe.close()  # nothing listens there now
    path = _write(tmp_path, RC.format(window="step 50 us"))
    code, _, err = _run(capsys, "tolerance", path, "--samples", "8", "--scheduler", f"tcp://127.0.0.1:{port}",
                        "--out", str(tmp_path / "o"))
    assert code == 4 and "cannot reach the Dask scheduler" in err


# --------------------------------------------------------------------------
# include confinement
# --------------------------------------------------------------------------


def test_include_of_etc_passwd_is_refused_without_echo(tmp_path, capsys):
    path = _write(tmp_path, 'include "/etc/passwd"\nground gnd\n')
    code, out, err = _run(capsys, "check", path)
    assert code == 2 and "absolute path" in err and "--include-path" in err
    assert "root:" not in err + out
    # allowed by name, it is still no netlist, and none of it is shown
    code, out, err = _run(capsys, "check", path, "--include-path", "/etc")
    assert code == 2 and "not a netlist" in err and "root:" not in err + out


def test_dotdot_escape_and_symlink_out_are_refused(tmp_path, capsys):
    inner = tmp_path / "inner"
    inner.mkdir()
    (tmp_path / "secret.cnet").write_text("ground gnd\n")
    (inner / "link.cnet").symlink_to(tmp_path / "secret.cnet")
    for target in ("../secret.cnet", "link.cnet"):
        path = _write(inner, f'include "{target}"\n')
        code, _, err = _run(capsys, "check", path)
        assert code == 2 and "leaves the netlist's folder" in err
    code, _, err = _run(capsys, "check", path, "--include-path", str(tmp_path))
    assert "leaves" not in err


def test_include_reads_regular_files_only(tmp_path, capsys):
    os.mkfifo(tmp_path / "pipe.cnet")  # would block a plain open() forever
    (tmp_path / "folder.cnet").mkdir()
    for target in ("pipe.cnet", "folder.cnet"):
        code, _, err = _run(capsys, "check", _write(tmp_path, f'include "{target}"\n'))
        assert code == 2 and "not a regular file" in err


def test_include_of_dev_zero_is_refused(tmp_path, capsys):
    code, _, err = _run(capsys, "check", _write(tmp_path, 'include "/dev/zero"\n'), "--include-path", "/dev")
    assert code == 2 and "not a regular file" in err


def test_an_included_file_with_a_bad_first_line_is_not_echoed(tmp_path, capsys):
    (tmp_path / "data.cnet").write_text("TOPSECRET-token-123 abc\nmore\n")
    code, _, err = _run(capsys, "check", _write(tmp_path, 'include "data.cnet"\n'))
    assert code == 2 and "not a netlist" in err and "TOPSECRET" not in err


def test_file_size_cap_8_mib(tmp_path, capsys):
    big = tmp_path / "big.cnet"
    with open(big, "wb") as fh:
        fh.truncate(8 * 2**20 + 1)
    code, _, err = _run(capsys, "check", _write(tmp_path, 'include "big.cnet"\n'))
    assert code == 2 and "8388609 bytes; the limit is 8388608" in err and "--allow-large" in err


def test_include_count_cap_200_stops_a_doubling_tree(tmp_path, capsys):
    for level in range(12):  # each file includes the next one twice: 2^12 inclusions
        nxt = f"level{level + 1}.cnet"
        (tmp_path / f"level{level}.cnet").write_text(f'include "{nxt}"\ninclude "{nxt}"\n')
    (tmp_path / "level12.cnet").write_text("# leaf\n")
    code, _, err = _run(capsys, "check", str(tmp_path / "level0.cnet"), "--allow-large")
    assert code == 2
    code, _, err = _run(capsys, "check", str(tmp_path / "level0.cnet"))
    assert code == 2 and ("more than 200 files are included; the limit is 200" in err
                          or "deep; the limit is 8" in err)


def test_include_depth_cap_8(tmp_path, capsys):
    for level in range(9):
        (tmp_path / f"d{level}.cnet").write_text(f'include "d{level + 1}.cnet"\n')
    (tmp_path / "d9.cnet").write_text("ground gnd\n")
    code, _, err = _run(capsys, "check", str(tmp_path / "d0.cnet"))
    assert code == 2 and "includes are nested 9 files deep; the limit is 8" in err
    (tmp_path / "d8.cnet").write_text("ground gnd\n")  # 8 levels are fine
    code, _, err = _run(capsys, "check", str(tmp_path / "d0.cnet"))
    assert "nested" not in err


def test_line_length_cap_4096_and_excerpt_of_120(tmp_path, capsys):
    ok_line = "# " + "x" * 4094
    code, _, err = _run(capsys, "check", _write(tmp_path, ok_line + "\nground gnd\n"))
    assert "the limit is 4096" not in err
    long_line = "resistor R1 a -- gnd " + "y" * 1_000_000
    code, _, err = _run(capsys, "check", _write(tmp_path, "ground gnd\n" + long_line + "\n"))
    assert code == 2 and "line 2 has 1000021 characters; the limit is 4096" in err
    assert 100 <= max(line.count("y") for line in err.splitlines()) <= 120  # an excerpt, never the line
    assert len(err) < 2000


def test_nesting_cap_64(tmp_path, capsys):
    deep = "param p = " + "(" * 65 + "1" + ")" * 65 + "\n"
    code, _, err = _run(capsys, "check", _write(tmp_path, deep))
    assert code == 2 and "nested 65 deep here; the limit is 64" in err and "x.cnet:1:" in err
    fine = "param p = " + "(" * 64 + "1" + ")" * 64 + "\nground gnd\n"
    code, _, err = _run(capsys, "check", _write(tmp_path, fine))
    assert "nested" not in err


# --------------------------------------------------------------------------
# the parser stays linear
# --------------------------------------------------------------------------


def test_a_megabyte_of_blank_lines_costs_memory_linear_in_its_size():
    """A run of newlines was one regex match whose repeated group kept a backtracking
    record per newline (about 500 bytes each); now it is a possessive group."""
    import tracemalloc

    from circuitode.netlist.parse import parse_text

    text = "ground gnd\n" + "\n" * 1_000_000 + "resistor R1 a -- gnd 1 Ω\n"
    parse_text("ground gnd\n")  # grammar compiled outside the measurement
    tracemalloc.start()
    try:
        netlist = parse_text(text, "blank.cnet")
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert netlist.statements[-1].where.line == 1_000_002
    assert peak < 60 * len(text)  # bytes per input character; was about 500


def test_a_sum_of_200_operators_parses_and_201_is_refused_located(tmp_path, capsys):
    fine = "ground gnd\nparam p = " + " + ".join(["1"] * 201) + "\n"
    code, out, err = _run(capsys, "check", _write(tmp_path, fine))
    assert "operators" not in err and "nested" not in err
    from circuitode.netlist import loads
    assert loads(fine).parameters["p"] == 201.0
    too_long = "ground gnd\nparam p = " + " + ".join(["1"] * 202) + "\n"
    code, _, err = _run(capsys, "check", _write(tmp_path, too_long))
    assert code == 2 and "x.cnet:2:1:" in err and "201 operators (+ - * / ^); the limit is 200" in err


def test_a_step_longer_than_the_window_is_located(tmp_path, capsys):
    path = _write(tmp_path, RC.format(window="step 6 ms"))
    code, _, err = _run(capsys, "run", path, "--out", str(tmp_path / "o"))
    assert code == 2 and "x.cnet:7:1: error: the step (0.006 s) must be positive and no longer than the window" in err



def test_numerically_singular_values_are_refused_not_crashed(tmp_path, capsys):
    # Found by the fuzz slice: in the bridge example, an on-resistance of 1e28 Ω (a unit
    # slip) left a configuration's nodal matrix singular in double precision and `check`
    # ended in an internal error; now that configuration is reported, not crashed on.
    from pathlib import Path

    from circuitode.cli import main

    text = (Path(__file__).resolve().parents[1] / "netlists" / "bridge_rectifier.cnet").read_text(encoding="utf-8")
    assert "drop 0.9 V  on 20 mΩ" in text
    netlist = tmp_path / "slip.cnet"
    netlist.write_text(text.replace("drop 0.9 V  on 20 mΩ", "drop 0.9 V  on 9999999999999999999999999999990 mΩ", 1),
                       encoding="utf-8")
    assert main(["check", str(netlist)]) in (0, 2, 3)
    assert "internal error" not in capsys.readouterr().err
