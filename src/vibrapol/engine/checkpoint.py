"""Checkpoint store: every finished engine task, written at once to one SQLite file.

Each result is stored under a key that hashes everything that determines it (kind of task,
atomic numbers, exact coordinates, method, basis, charge, multiplicity, basis-function type,
convergence settings and :data:`ENGINE_VERSION`).  A rerun of the same calculation finds its
finished tasks by key and computes only the missing ones; a run killed at any moment loses at
most the tasks in flight, because each result is committed on its own.  Every row carries the
SHA-256 of its content, checked when it is read: a damaged row is named in a warning and computed
again; a file that fails SQLite's own integrity check is refused with one line and left alone.
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import io
import json
import sqlite3
import time
import warnings
from collections.abc import Iterable, Mapping
from pathlib import Path

import numpy as np
from numpy.typing import ArrayLike

from vibrapol.engine.optimize import FMAX_HARTREE_BOHR
from vibrapol.engine.polarizability import CPHF_TOL
from vibrapol.engine.runlock import run_lock
from vibrapol.engine.scf import SCF_CONV_TOL, SCF_CONV_TOL_GRAD, MethodSpec
from vibrapol.errors import VibrapolError, VibrapolWarning

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
    created REAL NOT NULL,
    sha256 TEXT
);
"""


class CheckpointWarning(VibrapolWarning):
    """Stored results were found damaged and are computed again."""


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
    # Added only when used, so that the keys of earlier runs in vacuum stay valid.
    solvent = getattr(spec, "solvent", None)
    if solvent is not None:
        head["solvent"] = solvent.key()
    from vibrapol.engine.ecp import ecp_core_electrons

    ecp = ecp_core_electrons(spec.basis, atomic_numbers)
    if ecp:
        head["ecp"] = ecp
    if spec.density_fit:  # absent when off, so that exact runs keep their earlier keys
        head["density_fit"] = spec.auxbasis or "pyscf-default"
    h.update(json.dumps(head, sort_keys=True).encode())
    h.update(np.ascontiguousarray(atomic_numbers, dtype=np.int64).tobytes())
    h.update(np.ascontiguousarray(coordinates_ang, dtype=np.float64).tobytes())
    return h.hexdigest()


def _pack(arrays: Mapping[str, ArrayLike]) -> bytes:
    buf = io.BytesIO()
    # numpy's stub types **kwds alongside allow_pickle: bool, which no str-keyed dict can match
    np.savez(buf, **{k: np.asarray(v) for k, v in arrays.items()})  # type: ignore[arg-type]
    return buf.getvalue()


def _unpack(blob: bytes) -> dict[str, np.ndarray]:
    with np.load(io.BytesIO(blob), allow_pickle=False) as data:
        return {k: data[k] for k in data.files}


def _digest(key: str, kind: str, payload: bytes) -> str:
    """SHA-256 of a row's key, kind and payload: a changed byte in any of them shows."""
    h = hashlib.sha256()
    for part in (key.encode(), b"\0", kind.encode(), b"\0", payload):
        h.update(part)
    return h.hexdigest()


def _is_disk_full(exc: BaseException) -> bool:
    if isinstance(exc, OSError):
        return exc.errno in (errno.ENOSPC, errno.EDQUOT)
    return isinstance(exc, sqlite3.DatabaseError) and "disk is full" in str(exc).lower()


class CheckpointStore:
    """A SQLite file of finished tasks (arrays by key), each row with its own checksum.

    Parameters
    ----------
    path : str or Path
        The file; created on first use.  Only the process that runs the calculation writes to
        it (workers send their results back), so there is a single writer; while the store is
        open it holds the run lock of the file (:mod:`vibrapol.engine.runlock`), so a second
        process on the same file is refused.
    fresh : bool
        Delete the file (and its SQLite journal files) first and start over.

    Raises
    ------
    VibrapolError
        When the file exists but is not a vibrapol checkpoint or fails SQLite's integrity
        check (the file is left as it is; the message says how to start afresh), or another
        run holds its lock.

    Notes
    -----
    Each row stores the SHA-256 of its key, kind and payload.  A row whose checksum does not
    match (or whose payload cannot be read) is reported once, with its label, by a
    :class:`CheckpointWarning`, treated as missing and so computed again; the new result
    replaces it.
    """

    def __init__(self, path: str | Path, fresh: bool = False) -> None:
        self.path = Path(path)
        self.damaged: list[str] = []  # labels of rows found damaged (and recomputed)
        lock = run_lock(self.path)
        lock.__enter__()
        self._lock: contextlib.AbstractContextManager[Path] | None = lock
        try:
            self._open(fresh)
        except BaseException:
            lock.__exit__(None, None, None)
            raise

    def _open(self, fresh: bool) -> None:
        if fresh:
            for suffix in ("", "-wal", "-shm", "-journal"):
                extra = self.path.with_name(self.path.name + suffix)
                if extra.exists():
                    extra.unlink()
        try:
            self._db = sqlite3.connect(self.path)
        except sqlite3.DatabaseError as exc:
            raise self._unusable(exc) from exc
        try:
            # Write-ahead log with NORMAL sync: a commit survives the process being killed at
            # once (the data is in the operating system's hands) without an fsync per task;
            # only a power cut can lose the last few results, never corrupt the file.
            self._db.execute("PRAGMA journal_mode=WAL")
            self._db.execute("PRAGMA synchronous=NORMAL")
            check = [r[0] for r in self._db.execute("PRAGMA quick_check(5)").fetchall()]
            if check != ["ok"]:
                raise sqlite3.DatabaseError("; ".join(map(str, check)))
            self._db.executescript(_SCHEMA)
            columns = {r[1] for r in self._db.execute("PRAGMA table_info(results)")}
            if "sha256" not in columns:  # written by an earlier vibrapol: rows unsummed
                self._db.execute("ALTER TABLE results ADD COLUMN sha256 TEXT")
                self._db.commit()
            self._db.execute(
                "SELECT key, kind, label, payload, seconds, sha256 FROM results LIMIT 1"
            ).fetchall()
        except sqlite3.DatabaseError as exc:
            self._db.close()
            if _is_disk_full(exc):
                raise self.disk_full("opening it") from exc
            raise self._unusable(exc) from exc

    def _unusable(self, exc: BaseException) -> VibrapolError:
        said = " ".join(str(exc).split())  # SQLite's report may span lines
        said = said if len(said) <= 120 else said[:117] + "..."
        return VibrapolError(
            f"{self.path}: damaged or not a vibrapol checkpoint (SQLite: {said}); it was left "
            "as it is: move it away (or pass --fresh, which deletes it) to start afresh"
        )

    def disk_full(self, doing: str) -> VibrapolError:
        """The one-line error of a full disk while ``doing`` something with this store."""
        return VibrapolError(
            f"{self.path}: no space left on the device while {doing}; every task finished "
            "before is kept in this checkpoint: free some space and rerun the same command "
            "to resume"
        )

    def __enter__(self) -> CheckpointStore:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Close the database (finished results are already committed) and release the lock."""
        try:
            self._db.close()
        finally:
            if self._lock is not None:
                self._lock.__exit__(None, None, None)
                self._lock = None

    def _write(self, row: tuple) -> None:
        self._db.execute("INSERT OR REPLACE INTO results VALUES (?, ?, ?, ?, ?, ?, ?)", row)
        self._db.commit()

    def put(
        self, key: str, kind: str, label: str, arrays: Mapping[str, ArrayLike], seconds: float
    ) -> None:
        """Store one finished task and commit at once.

        Raises
        ------
        VibrapolError
            When the disk is full (the rows committed before are kept).
        """
        payload = _pack(arrays)
        row = (key, kind, label, payload, float(seconds), time.time(), _digest(key, kind, payload))
        try:
            self._write(row)
        except (OSError, sqlite3.DatabaseError) as exc:
            if not _is_disk_full(exc):
                raise
            with contextlib.suppress(sqlite3.Error):
                self._db.rollback()
            raise self.disk_full(f"saving the result of {label}") from exc

    def get(self, key: str) -> dict[str, np.ndarray] | None:
        """The arrays stored under ``key``, or None.

        None when the task has not finished or its row is damaged (a
        :class:`CheckpointWarning` then names it).
        """
        try:
            row = self._db.execute(
                "SELECT kind, label, payload, sha256 FROM results WHERE key = ?", (key,)
            ).fetchone()
        except sqlite3.DatabaseError as exc:
            self._report_damaged(f"row {key[:12]}", exc)
            return None
        if row is None:
            return None
        kind, label, payload, digest = row
        if digest is not None and digest != _digest(key, kind, bytes(payload)):
            self._report_damaged(label, "checksum mismatch")
            return None
        try:
            return _unpack(payload)
        except Exception as exc:  # noqa: BLE001 - any unreadable payload is a damaged row
            self._report_damaged(label, exc)
            return None

    def _report_damaged(self, label: str, reason: object) -> None:
        self.damaged.append(label)
        warnings.warn(
            f"{self.path}: stored result of {label} is damaged ({reason}); computing it again",
            CheckpointWarning,
            stacklevel=3,
        )

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
        self, key: str, kind: str, label: str, arrays: Mapping[str, ArrayLike], seconds: float
    ) -> None:
        """Store one finished task in its store (dropped when the key has none)."""
        store = self._by_key.get(key)
        if store is not None:
            store.put(key, kind, label, arrays, seconds)
