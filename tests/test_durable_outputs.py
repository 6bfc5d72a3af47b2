"""Nothing lost, nothing mixed: run folders, chunk files, the batch lock, exit 4.

The faults (full disk, read-only file system) are produced by patching the
writer, so the tests run anywhere without a special mount.
"""
import errno
import json
import os
import socket
import subprocess
import sys

import numpy as np
import pytest

from circuitode.cli import main
from circuitode.errors import EnvironmentFault
from circuitode.output import atomic
from circuitode.tolerance.lock import LOCK_NAME, FolderLock
from circuitode.tolerance.store import ChunkStore, ForeignChunkError

RC = """\
circuit "RC for durability tests"
param R = 1 kΩ ± 5 %
param C = 1 uF ± 10 %
ground gnd
voltage_source V1 a -- gnd step from 0 V to 10 V at 0 s
resistor R1 a -- b R
capacitor C1 b -- gnd C initial 0 V
transient until 5 ms step 50 us method exact
record voltage at b
"""


@pytest.fixture
def netlist(tmp_path):
    path = tmp_path / "rc.cnet"
    path.write_text(RC, encoding="utf-8")
    return path


def _snapshot(folder):
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir())}


def _leftovers(folder):
    return [p.name for p in folder.rglob("*") if p.name.endswith((".tmp", ".staging", ".old"))]


# --------------------------------------------------------------------------
# run folders
# --------------------------------------------------------------------------


def test_run_folder_is_replaced_whole_never_mixed(netlist, tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["run", str(netlist), "--out", str(out)]) == 0
    assert {p.name for p in out.iterdir()} == {"waveforms.csv", "summary.json", "waveforms.png"}
    assert main(["run", str(netlist), "--out", str(out), "--no-plots", "--step", "100us"]) == 0
    # the second run replaced the folder: no PNG of the first run beside its CSV
    assert {p.name for p in out.iterdir()} == {"waveforms.csv", "summary.json"}
    assert len(np.loadtxt(out / "waveforms.csv", delimiter=",", skiprows=1)) == 51
    assert _leftovers(tmp_path) == []


def test_full_disk_during_a_second_run_keeps_the_first_run_intact(netlist, tmp_path, capsys, monkeypatch):
    from circuitode.transient import Waveforms

    out = tmp_path / "out"
    assert main(["run", str(netlist), "--out", str(out), "--no-plots"]) == 0
    before = _snapshot(out)

    def half_then_full(self, path):
        with open(path, "w") as fh:
            fh.write("time [s],voltage at b [V]\n0,0\n1e-3,6.3")  # cut mid-line
        raise OSError(errno.ENOSPC, "No space left on device", str(path))

    monkeypatch.setattr(Waveforms, "to_csv", half_then_full)
    code = main(["run", str(netlist), "--out", str(out), "--no-plots"])
    err = capsys.readouterr().err
    assert code == 4
    assert "No space left on device" in err and "free space" in err and str(out) in err
    assert _snapshot(out) == before  # byte-identical previous run
    assert _leftovers(tmp_path) == [] and not (tmp_path / "out-incomplete").exists()


def test_read_only_place_is_exit_4_before_the_work(netlist, tmp_path, capsys, monkeypatch):
    def refuse(self, *args, **kwargs):
        raise OSError(errno.EROFS, "Read-only file system", str(self))

    simulated = []
    monkeypatch.setattr("circuitode.transient.simulate", lambda *a, **k: simulated.append(1))
    monkeypatch.setattr(atomic.Path, "mkdir", refuse)
    code = main(["run", str(netlist), "--out", str(tmp_path / "ro" / "out"), "--no-plots"])
    err = capsys.readouterr().err
    assert code == 4 and "read-only" in err and "--out" in err
    assert simulated == []  # refused before any simulation


def test_out_onto_a_file_or_dev_null_is_bad_input(netlist, tmp_path, capsys):
    a_file = tmp_path / "a_file"
    a_file.write_text("keep me")
    for target in (str(a_file), os.devnull):
        assert main(["run", str(netlist), "--out", target, "--no-plots"]) == 2
        assert "is an existing file, not a folder" in capsys.readouterr().err
    assert a_file.read_text() == "keep me"


def test_failure_after_the_waveforms_keeps_them_in_an_incomplete_folder(netlist, tmp_path, capsys, monkeypatch):
    from circuitode.errors import IntegrationError

    def fail(*args, **kwargs):
        raise IntegrationError("figures failed on purpose")

    monkeypatch.setattr("circuitode.analysis.measure.summarise", fail)
    out = tmp_path / "out"
    assert main(["run", str(netlist), "--out", str(out), "--no-plots"]) == 3
    err = capsys.readouterr().err
    kept = tmp_path / "out-incomplete"
    assert str(kept) in err and (kept / "waveforms.csv").stat().st_size > 0
    assert not out.exists()


def test_write_atomic_removes_its_temp_on_failure(tmp_path):
    def breaks(handle):
        handle.write(b"partial")
        raise OSError(errno.ENOSPC, "No space left on device")

    with pytest.raises(EnvironmentFault, match="free space"):
        atomic.write_atomic(tmp_path / "f.csv", breaks)
    assert list(tmp_path.iterdir()) == []


def test_temps_of_dead_processes_are_removed_live_ones_kept(tmp_path):
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    pid = int(dead.stdout)
    live = atomic.temp_name(tmp_path / "x.csv")
    live.write_text("mine")
    stale = tmp_path / live.name.replace(f"-{os.getpid()}-", f"-{pid}-")
    stale.write_text("left by kill -9")
    assert atomic.remove_stale_temps(tmp_path) == 1
    assert live.exists() and not stale.exists()


# --------------------------------------------------------------------------
# chunk files
# --------------------------------------------------------------------------


def _batch(netlist, out, *extra):
    return main(["tolerance", str(netlist), "--samples", "40", "--chunk", "10", "--out", str(out), "--no-plots",
                 *extra])


def test_a_chunk_copied_over_another_is_refused_by_name(netlist, tmp_path, capsys):
    out = tmp_path / "batch"
    assert _batch(netlist, out) == 0
    chunks = out / "chunks"
    (chunks / "chunk_000002.npz").write_bytes((chunks / "chunk_000000.npz").read_bytes())
    assert _batch(netlist, out) == 4
    err = capsys.readouterr().err
    assert "chunk_000002.npz" in err and "holds chunk 0" in err


def test_a_damaged_chunk_is_refused_by_name(netlist, tmp_path, capsys):
    out = tmp_path / "batch"
    assert _batch(netlist, out) == 0
    store = ChunkStore(out / "x", {"a": 1}, {0: (0, 3)})
    store.write(0, {"figures": np.arange(3.0)})
    raw = bytearray(store.path(0).read_bytes())
    raw[raw.index(b"\x00\x00\x00\x00\x00\x00\xf0?")] ^= 1  # flip one bit of the value 1.0
    store.path(0).write_bytes(bytes(raw))
    with pytest.raises(ForeignChunkError, match="chunk_000000.npz is damaged"):
        store.read(0)


def test_missing_manifest_and_another_seed_never_resume_on_old_chunks(netlist, tmp_path, capsys):
    out = tmp_path / "batch"
    assert _batch(netlist, out, "--seed", "1") == 0
    (out / "batch.json").unlink()
    assert _batch(netlist, out, "--seed", "2") == 4
    assert "belongs to another batch" in capsys.readouterr().err
    assert not (out / "batch.json").exists()  # nothing new written on top of the old chunks
    # the same run without its manifest may resume: the chunks prove they belong to it
    assert _batch(netlist, out, "--seed", "1") == 0


def test_resume_after_a_full_disk_gives_the_uninterrupted_result(netlist, tmp_path, capsys, monkeypatch):
    clean = tmp_path / "clean"
    assert _batch(netlist, clean) == 0
    out = tmp_path / "interrupted"
    real_savez, calls = np.savez, []

    def savez_until_full(handle, **arrays):
        calls.append(1)
        if len(calls) == 3:
            handle.write(b"PK\x03\x04 partial")
            raise OSError(errno.ENOSPC, "No space left on device")
        real_savez(handle, **arrays)

    monkeypatch.setattr(np, "savez", savez_until_full)
    assert _batch(netlist, out) == 4
    assert "free space" in capsys.readouterr().err
    assert sorted(p.name for p in (out / "chunks").iterdir()) == ["chunk_000000.npz", "chunk_000001.npz"]
    assert not (out / LOCK_NAME).exists()
    monkeypatch.setattr(np, "savez", real_savez)
    assert _batch(netlist, out) == 0
    assert (out / "samples.csv").read_bytes() == (clean / "samples.csv").read_bytes()
    assert _leftovers(out) == []


# --------------------------------------------------------------------------
# the lock
# --------------------------------------------------------------------------


def test_a_second_batch_on_a_locked_folder_is_refused(netlist, tmp_path, capsys):
    out = tmp_path / "batch"
    out.mkdir()
    with FolderLock(out):  # held by this (live) process, as a concurrent run would
        assert _batch(netlist, out) == 4
        err = capsys.readouterr().err
        assert f"process {os.getpid()}" in err and LOCK_NAME in err
    assert not (out / LOCK_NAME).exists()
    assert _batch(netlist, out) == 0


def test_a_stale_lock_of_a_dead_process_is_taken_over(netlist, tmp_path, capsys):
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    out = tmp_path / "batch"
    out.mkdir()
    (out / LOCK_NAME).write_text(json.dumps({"pid": int(dead.stdout), "host": socket.gethostname()}))
    assert _batch(netlist, out) == 0
    assert not (out / LOCK_NAME).exists()


def test_a_lock_of_another_host_is_not_taken_over(tmp_path):
    (tmp_path / LOCK_NAME).write_text(json.dumps({"pid": 1, "host": "another-machine.example"}))
    with pytest.raises(EnvironmentFault, match="another-machine.example"):
        FolderLock(tmp_path).acquire()
    assert json.loads((tmp_path / LOCK_NAME).read_text())["host"] == "another-machine.example"


# --------------------------------------------------------------------------
# progress of long single runs
# --------------------------------------------------------------------------


class _Terminal:
    def __init__(self, tty):
        self.tty, self.text = tty, ""

    def isatty(self):
        return self.tty

    def write(self, text):
        self.text += text

    def flush(self):
        pass


def test_progress_shows_elapsed_time_on_a_terminal_and_erases_it():
    import threading

    from circuitode.output.progress import Ticker

    screen = _Terminal(True)
    seen = threading.Event()
    with Ticker("simulating", after=0.0, every=0.01, stream=screen) as ticker:
        for _ in range(1000):  # wait for the thread's first note (bounded, not timed)
            if ticker.shown:
                break
            seen.wait(0.01)
    assert "simulating… 0 s" in screen.text and screen.text.endswith("\r")


def test_progress_is_silent_when_stderr_is_not_a_terminal():
    from circuitode.output.progress import Ticker

    log = _Terminal(False)
    with Ticker("simulating", after=0.0, every=0.01, stream=log) as ticker:
        pass
    assert log.text == "" and ticker.shown == 0 and not ticker.enabled


def test_a_folder_with_other_files_is_never_replaced(netlist, tmp_path, capsys):
    """--out . or a batch folder would otherwise be swapped away whole."""
    batch = tmp_path / "batch"
    assert _batch(netlist, batch) == 0
    before = sorted(p.name for p in batch.rglob("*"))
    assert main(["run", str(netlist), "--out", str(batch), "--no-plots"]) == 2
    err = capsys.readouterr().err
    assert "holds files a run did not write" in err and "batch.json" in err
    assert sorted(p.name for p in batch.rglob("*")) == before
    home = tmp_path / "home"
    home.mkdir()
    (home / "thesis.tex").write_text("years of work")
    assert main(["run", str(netlist), "--out", str(home), "--no-plots"]) == 2
    assert (home / "thesis.tex").read_text() == "years of work"


def test_lock_without_hard_links_and_an_unreadable_fresh_lock(tmp_path, monkeypatch):
    import errno as errno_

    def no_links(*args):
        raise OSError(errno_.EPERM, "Operation not permitted")

    monkeypatch.setattr(os, "link", no_links)
    with FolderLock(tmp_path) as lock:  # exclusive create instead of a hard link
        assert json.loads((tmp_path / LOCK_NAME).read_text())["pid"] == os.getpid()
        assert lock.held
    assert not (tmp_path / LOCK_NAME).exists()
    (tmp_path / LOCK_NAME).write_text("")  # being written by someone right now
    with pytest.raises(EnvironmentFault, match="in use"):
        FolderLock(tmp_path).acquire()
    old = os.path.getmtime(tmp_path / LOCK_NAME) - 60
    os.utime(tmp_path / LOCK_NAME, (old, old))  # a minute old and still empty: a crash left it
    with FolderLock(tmp_path):
        pass
