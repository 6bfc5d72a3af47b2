"""Chunk store (atomic writes, resume, refusal to mix runs) and the executors."""
import numpy as np
import pytest

from circuitode.errors import CircuitodeError
from circuitode.tolerance.executors import InProcessExecutor, LocalProcessExecutor, make_executor
from circuitode.tolerance.store import ChunkStore


def test_chunks_round_trip_and_are_listed_as_finished(tmp_path):
    store = ChunkStore(tmp_path / "out", {"netlist": "abc", "seed": 1})
    arrays = {"index": np.arange(5), "figures": np.linspace(0, 1, 10).reshape(5, 2),
              "message": np.array(["", "", "singular", "", ""])}
    store.write(3, arrays)
    (store.chunk_dir / ".chunk_000004.npz.99.tmp").write_bytes(b"half written")
    assert store.finished() == {3}
    back = store.read(3)
    for k in arrays:
        assert np.array_equal(back[k], arrays[k])


def test_same_run_reopens_other_run_is_refused(tmp_path):
    ChunkStore(tmp_path, {"netlist": "abc", "seed": 1}).write(0, {"x": np.ones(2)})
    assert ChunkStore(tmp_path, {"netlist": "abc", "seed": 1}).finished() == {0}
    with pytest.raises(CircuitodeError, match="seed"):
        ChunkStore(tmp_path, {"netlist": "abc", "seed": 2})
    with pytest.raises(CircuitodeError, match="netlist"):
        ChunkStore(tmp_path, {"netlist": "xyz", "seed": 1})


def _square(x):
    return x * x


def test_local_processes_give_the_in_process_results():
    tasks = [(i, np.arange(i + 1.0)) for i in range(6)]
    a = dict(InProcessExecutor().map_unordered(_square, tasks))
    b = dict(LocalProcessExecutor(2).map_unordered(_square, tasks))
    assert a.keys() == b.keys() == set(range(6))
    for k in a:
        assert np.array_equal(a[k], b[k]) and np.array_equal(a[k], np.arange(k + 1.0) ** 2)


def test_executor_choice_is_checked():
    assert isinstance(make_executor(), InProcessExecutor)
    with pytest.raises(CircuitodeError, match="not both"):
        make_executor(workers=2, scheduler="tcp://127.0.0.1:1")
    with pytest.raises(CircuitodeError, match="at least 1"):
        make_executor(workers=-1)
