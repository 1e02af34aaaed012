"""Checkpoint store: every finished engine task, written at once to one SQLite file.

Each result is stored under a key that hashes everything that determines it (kind of task,
atomic numbers, exact coordinates, method, basis, charge, multiplicity, basis-function type,
convergence settings and :data:`ENGINE_VERSION`).  A rerun of the same calculation finds its
finished tasks by key and computes only the missing ones; a run killed at any moment loses at
most the tasks in flight, because each result is committed on its own.
"""

from __future__ import annotations

import hashlib
import io
import json
import sqlite3
import time
from collections.abc import Iterable, Mapping
from pathlib import Path

import numpy as np

from vibrapol.engine.optimize import FMAX_HARTREE_BOHR
from vibrapol.engine.polarizability import CPHF_TOL
from vibrapol.engine.scf import SCF_CONV_TOL, SCF_CONV_TOL_GRAD, MethodSpec
from vibrapol.errors import VibrapolError

#: Bump when a change of the engine changes the numbers a task produces; old entries are then
#: simply not found again.
ENGINE_VERSION = "1"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS results (
    key TEXT PRIMARY KEY,
    kind TEXT NOT NULL,
    label TEXT NOT NULL,
    payload BLOB NOT NULL,
    seconds REAL NOT NULL,
    created REAL NOT NULL
);
"""


def task_key(
    kind: str,
    atomic_numbers: np.ndarray,
    coordinates_ang: np.ndarray,
    spec: MethodSpec,
    **extra: object,
) -> str:
    """Hex SHA-256 of everything that determines a task's result.

    Coordinates enter as their exact float64 bytes: a geometry that differs in the last bit is
    a different task.
    """
    import pyscf

    h = hashlib.sha256()
    head = {
        "kind": kind,
        "engine": ENGINE_VERSION,
        "pyscf": pyscf.__version__,
        "method": spec.method,
        "basis": spec.basis,
        "charge": spec.charge,
        "multiplicity": spec.multiplicity,
        "cartesian_d": spec.cartesian_d,
        "conv": [SCF_CONV_TOL, SCF_CONV_TOL_GRAD, CPHF_TOL, FMAX_HARTREE_BOHR],
        "extra": {k: extra[k] for k in sorted(extra)},
    }
    h.update(json.dumps(head, sort_keys=True).encode())
    h.update(np.ascontiguousarray(atomic_numbers, dtype=np.int64).tobytes())
    h.update(np.ascontiguousarray(coordinates_ang, dtype=np.float64).tobytes())
    return h.hexdigest()


def _pack(arrays: Mapping[str, np.ndarray]) -> bytes:
    buf = io.BytesIO()
    np.savez(buf, **{k: np.asarray(v) for k, v in arrays.items()})
    return buf.getvalue()


def _unpack(blob: bytes) -> dict[str, np.ndarray]:
    with np.load(io.BytesIO(blob), allow_pickle=False) as data:
        return {k: data[k] for k in data.files}


class CheckpointStore:
    """A SQLite file of finished tasks (arrays by key).

    Parameters
    ----------
    path : str or Path
        The file; created on first use.  Only the process that runs the calculation writes to
        it (workers send their results back), so there is a single writer.
    fresh : bool
        Delete the file first and start over.

    Raises
    ------
    VibrapolError
        When the file exists but is not a vibrapol checkpoint (or is corrupt).
    """

    def __init__(self, path: str | Path, fresh: bool = False) -> None:
        self.path = Path(path)
        if fresh and self.path.exists():
            self.path.unlink()
        try:
            self._db = sqlite3.connect(self.path)
            # Write-ahead log with NORMAL sync: a commit survives the process being killed at
            # once (the data is in the operating system's hands) without an fsync per task;
            # only a power cut can lose the last few results, never corrupt the file.
            self._db.execute("PRAGMA journal_mode=WAL")
            self._db.execute("PRAGMA synchronous=NORMAL")
            self._db.executescript(_SCHEMA)
            self._db.execute(
                "SELECT key, kind, label, payload, seconds FROM results LIMIT 1"
            ).fetchall()
        except sqlite3.DatabaseError as exc:
            raise VibrapolError(
                f"{self.path}: not a usable vibrapol checkpoint ({exc}); delete it or pass --fresh"
            ) from exc

    def __enter__(self) -> CheckpointStore:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Close the database (finished results are already committed)."""
        self._db.close()

    def put(
        self, key: str, kind: str, label: str, arrays: Mapping[str, np.ndarray], seconds: float
    ) -> None:
        """Store one finished task and commit at once."""
        self._db.execute(
            "INSERT OR REPLACE INTO results VALUES (?, ?, ?, ?, ?, ?)",
            (key, kind, label, _pack(arrays), float(seconds), time.time()),
        )
        self._db.commit()

    def get(self, key: str) -> dict[str, np.ndarray] | None:
        """The arrays stored under ``key``, or None when the task has not finished."""
        row = self._db.execute("SELECT payload FROM results WHERE key = ?", (key,)).fetchone()
        return None if row is None else _unpack(row[0])

    def get_many(self, keys: Iterable[str]) -> dict[str, dict[str, np.ndarray]]:
        """Every stored result among ``keys``."""
        found = {}
        for key in keys:
            value = self.get(key)
            if value is not None:
                found[key] = value
        return found

    def count(self, kind: str | None = None) -> int:
        """Number of stored results (of one kind)."""
        if kind is None:
            return int(self._db.execute("SELECT COUNT(*) FROM results").fetchone()[0])
        return int(
            self._db.execute("SELECT COUNT(*) FROM results WHERE kind = ?", (kind,)).fetchone()[0]
        )


def checkpoint_path_for(output: str | Path) -> Path:
    """The checkpoint beside an output: ``w.modes.json`` → ``w.modes.checkpoint.sqlite``."""
    p = Path(output)
    name = p.name[: -len(".json")] if p.name.endswith(".json") else p.name
    return p.with_name(f"{name}.checkpoint.sqlite")


class StoreRouter:
    """Several checkpoint stores seen as one: each key goes to the store it was assigned to.

    Used when the tasks of several molecules, each with its own checkpoint file, run in one
    batch.
    """

    def __init__(self) -> None:
        self._by_key: dict[str, CheckpointStore] = {}

    def assign(self, keys: Iterable[str], store: CheckpointStore | None) -> None:
        """Route ``keys`` to ``store`` (None: results of these keys are not kept)."""
        for key in keys:
            if store is not None:
                self._by_key[key] = store

    def get(self, key: str) -> dict[str, np.ndarray] | None:
        """The stored arrays of ``key`` in its store, or None."""
        store = self._by_key.get(key)
        return None if store is None else store.get(key)

    def put(
        self, key: str, kind: str, label: str, arrays: Mapping[str, np.ndarray], seconds: float
    ) -> None:
        """Store one finished task in its store (dropped when the key has none)."""
        store = self._by_key.get(key)
        if store is not None:
            store.put(key, kind, label, arrays, seconds)
