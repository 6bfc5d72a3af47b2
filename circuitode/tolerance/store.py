"""Finished chunks on disk, so an interrupted batch resumes without loss.

Layout of an output folder::

    DIR/batch.json              what this folder holds (the run's fingerprint)
    DIR/batch.lock              held while a batch runs (see :mod:`.lock`)
    DIR/chunks/chunk_000012.npz one file per finished chunk

A chunk file is written under a unique temporary name and renamed into place
(``os.replace`` is atomic on one file system), so a chunk file either exists
whole or not at all.  Each chunk carries the batch's identity (the SHA-256 of
the fingerprint: netlist hash, seed, sampler, sample count, chunking,
overrides, method), its own index and sample range, and a SHA-256 checksum
of its arrays; every chunk is verified before it is reused, so a chunk copied
from another batch or another position, or damaged, is refused by name.  A
folder holding a different run is refused, never mixed; a missing
``batch.json`` never means "start fresh": the chunks found are verified
against the new run's identity first.
"""
from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from ..errors import CircuitodeError, EnvironmentFault, environment_fault
from ..output.atomic import remove_stale_temps, write_atomic

__all__ = ["MANIFEST_NAME", "ChunkStore", "ForeignChunkError", "fingerprint_text"]

MANIFEST_NAME = "batch.json"
_FORMAT = "circuitode-batch/2"
_IDENTITY_KEY = "__identity__"
_CHECKSUM_KEY = "__checksum__"


class ForeignChunkError(EnvironmentFault):
    """A chunk file in the folder does not belong to this batch at this position, or is
    damaged (exit 4: the folder's content, not the input, is wrong)."""


def _checksum(arrays: Mapping[str, np.ndarray]) -> str:
    """SHA-256 over each array's name, dtype, shape and bytes, in name order."""
    digest = hashlib.sha256()
    for name in sorted(arrays):
        a = np.ascontiguousarray(arrays[name])
        digest.update(f"{name}|{a.dtype.str}|{a.shape}|".encode())
        digest.update(a.tobytes())
    return digest.hexdigest()


def fingerprint_text(text: str | bytes) -> str:
    """SHA-256 hex digest of a netlist's text (or any identifying bytes)."""
    if isinstance(text, str):
        text = text.encode("utf-8")
    return hashlib.sha256(text).hexdigest()


class ChunkStore:
    """Finished chunks of one batch in one folder.

    Parameters
    ----------
    folder : the output folder (created when missing).
    fingerprint : JSON-serialisable mapping that identifies the run; a folder whose
        stored fingerprint differs is refused with a CircuitodeError naming the
        fields that differ.
    """

    def __init__(self, folder: str | os.PathLike, fingerprint: Mapping[str, Any],
                 ranges: Mapping[int, tuple[int, int]] | None = None):
        self.folder = Path(folder)
        self.fingerprint = json.loads(json.dumps(dict(fingerprint)))
        self.identity = fingerprint_text(json.dumps({"format": _FORMAT, **self.fingerprint}, sort_keys=True))
        self.ranges = dict(ranges or {})
        self.chunk_dir = self.folder / "chunks"
        self._open()

    # -- set-up -----------------------------------------------------------
    def _open(self) -> None:
        try:
            self.chunk_dir.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise environment_fault(exc, f"create the output folder {self.folder}") from None
        remove_stale_temps(self.chunk_dir)
        remove_stale_temps(self.folder)
        manifest = self.folder / MANIFEST_NAME
        wanted = {"format": _FORMAT, **self.fingerprint}
        if manifest.exists():
            try:
                stored = json.loads(manifest.read_text(encoding="utf-8"))
                if not isinstance(stored, dict):
                    raise ValueError
            except (OSError, ValueError):
                raise CircuitodeError(
                    f"{manifest} is not a readable batch description; choose another --out "
                    "folder or delete this one"
                ) from None
            differ = sorted(k for k in set(stored) | set(wanted) if stored.get(k) != wanted.get(k))
            if differ:
                raise CircuitodeError(
                    f"the folder {self.folder} holds a different batch (differs in: "
                    f"{', '.join(differ)}); results are never mixed — choose another --out "
                    "folder or delete this one"
                )
        else:
            self.finished()  # chunks without a manifest must prove they belong to this batch
            write_atomic(manifest, json.dumps(wanted, indent=2, sort_keys=True).encode())

    # -- chunks -----------------------------------------------------------
    def path(self, chunk: int) -> Path:
        return self.chunk_dir / f"chunk_{chunk:06d}.npz"

    def finished(self) -> set[int]:
        """Indices of the chunks on disk, each verified (identity, position, checksum).

        Raises
        ------
        ForeignChunkError : a chunk file belongs to another batch or position, or is damaged.
        """
        out = set()
        for p in sorted(self.chunk_dir.glob("chunk_*.npz")):
            try:
                index = int(p.stem.split("_", 1)[1])
            except ValueError:
                continue
            self.read(index)
            out.add(index)
        return out

    def write(self, chunk: int, arrays: Mapping[str, np.ndarray]) -> Path:
        """Write one chunk's arrays with the batch identity and a checksum (atomically)."""
        arrays = {k: np.asarray(v) for k, v in arrays.items()}
        identity = {"batch": self.identity, "chunk": int(chunk)}
        if chunk in self.ranges:
            identity["samples"] = list(self.ranges[chunk])
        stamped = {**arrays, _IDENTITY_KEY: np.array(json.dumps(identity, sort_keys=True))}
        stamped[_CHECKSUM_KEY] = np.array(_checksum(stamped))
        return write_atomic(self.path(chunk), lambda fh: np.savez(fh, **stamped))

    def read(self, chunk: int) -> dict[str, np.ndarray]:
        """The arrays of one finished chunk, after checking it belongs here.

        Raises
        ------
        ForeignChunkError : naming the file and what does not match.
        """
        path = self.path(chunk)
        redo = (f"delete {path} to have it computed again, or choose another --out folder "
                "(results of different batches are never mixed)")
        try:
            with np.load(path, allow_pickle=False) as data:
                arrays = {k: data[k] for k in data.files}
        except OSError as exc:
            raise environment_fault(exc, f"read the chunk file {path}") from None
        except Exception:  # noqa: BLE001 - any undecodable content is a damaged file
            raise ForeignChunkError(f"error: the chunk file {path} is damaged and cannot be read\n"
                                    f"  what to do: {redo}") from None
        stored_sum = str(arrays.pop(_CHECKSUM_KEY, ""))
        if _IDENTITY_KEY not in arrays:
            raise ForeignChunkError(f"error: the chunk file {path} carries no batch identity (written by an older "
                                    f"version or another program)\n  what to do: {redo}")
        if stored_sum != _checksum(arrays):
            raise ForeignChunkError(f"error: the chunk file {path} is damaged (its checksum does not match)\n"
                                    f"  what to do: {redo}")
        try:
            identity = json.loads(str(arrays.pop(_IDENTITY_KEY)))
        except ValueError:
            raise ForeignChunkError(f"error: the chunk file {path} has an unreadable identity\n"
                                    f"  what to do: {redo}") from None
        if identity.get("batch") != self.identity:
            raise ForeignChunkError(f"error: the chunk file {path} belongs to another batch (another netlist, "
                                    f"seed, sampler, sample count or settings)\n  what to do: {redo}")
        if identity.get("chunk") != chunk:
            raise ForeignChunkError(f"error: the chunk file {path} holds chunk {identity.get('chunk')} of this batch, "
                                    f"not chunk {chunk} (it was copied or renamed)\n  what to do: {redo}")
        expected = self.ranges.get(chunk)
        if expected is not None and identity.get("samples") != list(expected):
            raise ForeignChunkError(f"error: the chunk file {path} holds samples {identity.get('samples')}, not "
                                    f"{list(expected)}\n  what to do: {redo}")
        return arrays
