"""Finished chunks on disk, so an interrupted batch resumes without loss.

Layout of an output folder::

    DIR/batch.json              what this folder holds (the run's fingerprint)
    DIR/chunks/chunk_000012.npz one file per finished chunk

A chunk file is written under a temporary name and renamed into place
(``os.replace`` is atomic on one file system), so a chunk file either exists
whole or not at all.  Rerunning the same command finds the finished chunks
and skips them.  A folder holding a different run (another netlist, seed,
sampler, sample count, chunking, overrides or method) is refused, never mixed.
"""
from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from ..errors import CircuitodeError

__all__ = ["MANIFEST_NAME", "ChunkStore", "fingerprint_text"]

MANIFEST_NAME = "batch.json"
_FORMAT = "circuitode-batch/1"


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

    def __init__(self, folder: str | os.PathLike, fingerprint: Mapping[str, Any]):
        self.folder = Path(folder)
        self.fingerprint = json.loads(json.dumps(dict(fingerprint)))
        self.chunk_dir = self.folder / "chunks"
        self._open()

    # -- set-up -----------------------------------------------------------
    def _open(self) -> None:
        try:
            self.chunk_dir.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise CircuitodeError(f"cannot create the output folder {self.folder}: {exc.strerror}") from None
        manifest = self.folder / MANIFEST_NAME
        wanted = {"format": _FORMAT, **self.fingerprint}
        if manifest.exists():
            try:
                stored = json.loads(manifest.read_text(encoding="utf-8"))
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
            self._atomic_write_bytes(manifest, json.dumps(wanted, indent=2, sort_keys=True).encode())

    # -- chunks -----------------------------------------------------------
    def path(self, chunk: int) -> Path:
        return self.chunk_dir / f"chunk_{chunk:06d}.npz"

    def finished(self) -> set[int]:
        """Indices of chunks already on disk."""
        out = set()
        for p in self.chunk_dir.glob("chunk_*.npz"):
            try:
                out.add(int(p.stem.split("_", 1)[1]))
            except ValueError:
                continue
        return out

    def write(self, chunk: int, arrays: Mapping[str, np.ndarray]) -> Path:
        """Write one chunk's arrays (write to a temporary file, then rename atomically)."""
        target = self.path(chunk)
        tmp = target.with_name(f".{target.name}.{os.getpid()}.tmp")
        with open(tmp, "wb") as fh:
            np.savez(fh, **{k: np.asarray(v) for k, v in arrays.items()})
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
        return target

    def read(self, chunk: int) -> dict[str, np.ndarray]:
        """The arrays of one finished chunk."""
        with np.load(self.path(chunk), allow_pickle=False) as data:
            return {k: data[k] for k in data.files}

    # -- helpers ----------------------------------------------------------
    @staticmethod
    def _atomic_write_bytes(target: Path, data: bytes) -> None:
        tmp = target.with_name(f".{target.name}.{os.getpid()}.tmp")
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
