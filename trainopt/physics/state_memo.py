"""CoolProp's answers kept on disk, so a rerun need not load CoolProp at all.

CoolProp parses its whole fluid library (over a hundred fluids held as JSON) the first time
a process asks for any state: 1.5-1.7 s on the project's two-core machine (regression value
(own output), ``benchmarks/speed_targets.py`` prints it), more than half the wall time of a
``trainopt optimize`` run. A shift engineer reruns the same case many times a day, and a
rerun asks for the same states. A :class:`DiskMemo` keeps every answer CoolProp gave,
keyed by its exact inputs; a later process asking for the same inputs gets the same numbers
back (CoolProp's own float64 values, bit for bit) without loading CoolProp. New inputs go
to CoolProp as before and join the memo.

- One file per gas (backend, component names, mole fractions to 17 digits) and kind of
  answer, named by a SHA-256 that also holds CoolProp's installed version (read from the
  package metadata, which does not load the library) and :data:`FORMAT`: a new CoolProp
  starts afresh.
- The file is a NumPy ``.npz`` of inputs, outputs and a few named facts (such as the molar
  mass); it is read at the first question and written when the process ends, merged with
  what other processes wrote meanwhile and cut to the :data:`MAX_ENTRIES` most recent.
- A file that cannot be read or does not hold what it should is ignored and rewritten;
  files are written whole or not at all, and a cache folder that cannot be written only
  costs the speed (:mod:`trainopt.physics.disk_cache`).
"""

from __future__ import annotations

import atexit
import hashlib
import json
import zipfile
from functools import lru_cache

import numpy as np

from trainopt.physics.disk_cache import cache_folder, write_atomically

FORMAT = 1
"""Version of the file layout; part of the key."""

MAX_ENTRIES = 20_000
"""Most answers one file keeps (the most recent); about 2 MB for gas states."""

MAX_FILES = 100
"""Most memo files the cache folder keeps; the least recently written go first."""

_PENDING: list[DiskMemo] = []
_SHARED: dict[str, DiskMemo] = {}


@lru_cache(maxsize=1)
def coolprop_version() -> str:
    """CoolProp's installed version, read without loading the library."""
    from importlib import metadata

    try:
        return metadata.version("CoolProp")
    except metadata.PackageNotFoundError:
        return "unknown"


def memo_for(kind: str, identity: dict, n_inputs: int, n_outputs: int) -> DiskMemo:
    """The process's one :class:`DiskMemo` for a kind and gas (read from disk once).

    Parameters are those of :class:`DiskMemo`.
    """
    memo = DiskMemo(kind, identity, n_inputs, n_outputs)
    return _SHARED.setdefault(memo.key, memo)


class _Table:
    """Answers read from a file: rows in file order, found by a sorted hash of the inputs.

    Looking up a row costs a binary search (a few microseconds), and reading a full file of
    :data:`MAX_ENTRIES` answers a few milliseconds, where building a Python dict of it took
    45 ms.
    """

    def __init__(self, inputs: np.ndarray, outputs: np.ndarray):
        self.inputs, self.outputs = inputs, outputs
        hashes = _hash(inputs)
        self.order = np.argsort(hashes, kind="stable")
        self.hashes = hashes[self.order]

    def find(self, key: tuple[float, ...]) -> int | None:
        """Row of exactly these inputs, or None."""
        wanted = _hash(np.array([key], float))[0]
        i = int(np.searchsorted(self.hashes, wanted))
        while i < len(self.hashes) and self.hashes[i] == wanted:
            row = int(self.order[i])
            if tuple(self.inputs[row].tolist()) == key:
                return row
            i += 1
        return None


def _hash(rows: np.ndarray) -> np.ndarray:
    """A 64-bit hash of each row's float64 bits (FNV-1a style mixing; collisions checked)."""
    bits = np.ascontiguousarray(rows, dtype=float).view(np.uint64)
    out = np.full(len(bits), 0xCBF29CE484222325, dtype=np.uint64)
    for column in bits.T:
        out = (out ^ column) * np.uint64(0x100000001B3)
    return out


class DiskMemo:
    """Answers of one kind for one gas: fixed-width float inputs to float outputs.

    Build it with :func:`memo_for`, so that every gas object of one composition shares it.
    In memory it keeps the file's answers as arrays, and at most twice :data:`MAX_ENTRIES`
    answers asked for or added in this process (the most recent).

    Parameters
    ----------
    kind : str
        What the answers are (``"states"``, ``"dew"``); starts the file name.
    identity : dict
        JSON-ready description of the gas (backend, names, fractions).
    n_inputs, n_outputs : int
        Number of floats in a key and in an answer.
    """

    def __init__(self, kind: str, identity: dict, n_inputs: int, n_outputs: int):
        text = json.dumps({"kind": kind, "format": FORMAT, "coolprop": coolprop_version(),
                           **identity}, sort_keys=True)
        self.kind = kind
        self.key = hashlib.sha256(text.encode()).hexdigest()
        self.shape = (n_inputs, n_outputs)
        self._disk: _Table | None = None
        self._facts: dict[str, float] = {}
        self._found = False
        self._answers: dict[tuple, tuple] = {}
        self._new: dict[tuple, tuple] = {}
        self._new_facts: dict[str, float] = {}
        self._queued = False

    @property
    def path(self):
        """The memo's file in the cache folder."""
        return cache_folder() / f"{self.kind}-{self.key[:32]}.npz"

    def _loaded(self) -> _Table:
        if self._disk is None:
            self._found, self._disk, self._facts = _read(self.path, self.key, self.shape)
        return self._disk

    @property
    def on_disk(self) -> bool:
        """True when an earlier process left a readable file for this gas."""
        self._loaded()
        return self._found

    def get(self, inputs: tuple[float, ...]) -> tuple[float, ...] | None:
        """The stored answer to exactly these inputs, or None."""
        known = self._answers.get(inputs)
        if known is None:
            table = self._loaded()
            row = table.find(inputs)
            if row is not None:
                known = tuple(table.outputs[row].tolist())
                _remember(self._answers, inputs, known)
        return known

    def put(self, inputs: tuple[float, ...], outputs: tuple[float, ...]) -> None:
        """Keep an answer (written to disk when the process ends)."""
        _remember(self._answers, inputs, outputs)
        _remember(self._new, inputs, outputs)
        self._pending()

    def fact(self, name: str) -> float | None:
        """A named value stored with the memo (e.g. ``"molar_mass"``), or None."""
        self._loaded()
        return self._new_facts.get(name, self._facts.get(name))

    def set_fact(self, name: str, value: float) -> None:
        """Keep a named value with the memo."""
        self._new_facts[name] = value
        self._pending()

    def _pending(self) -> None:
        if not self._queued:
            self._queued = True
            _PENDING.append(self)

    def flush(self) -> bool:
        """Write what this process added, merged with the file as it is now.

        Returns
        -------
        bool
            True if a file was written (False when nothing was new or the folder is
            read-only).
        """
        if not (self._new or self._new_facts):
            return False
        path = self.path
        _, table, facts = _read(path, self.key, self.shape)
        facts = {**facts, **self._new_facts}
        keep = np.ones(len(table.inputs), bool)
        for key in self._new:  # an answer found again replaces the file's row
            row = table.find(key)
            if row is not None:
                keep[row] = False
        n_in, n_out = self.shape
        added_in = np.array(list(self._new), float).reshape(len(self._new), n_in)
        added_out = np.array(list(self._new.values()), float).reshape(len(self._new), n_out)
        inputs = np.concatenate([table.inputs[keep], added_in])[-MAX_ENTRIES:]
        outputs = np.concatenate([table.outputs[keep], added_out])[-MAX_ENTRIES:]
        names = sorted(facts)
        written = write_atomically(path, lambda handle: np.savez(
            handle, key=np.array(self.key), inputs=inputs, outputs=outputs,
            fact_names=np.array(names, dtype=str),
            fact_values=np.array([facts[n] for n in names], float)), binary=True)
        if written:
            self._new.clear()
            self._new_facts.clear()
            self._facts = facts
        self._queued = False
        return written


def _remember(answers: dict, inputs: tuple, outputs: tuple) -> None:
    """Add to a bounded dict, keeping the most recent; amortised O(1) a call."""
    answers[inputs] = outputs
    if len(answers) > 2 * MAX_ENTRIES:
        recent = list(answers.items())[-MAX_ENTRIES:]
        answers.clear()
        answers.update(recent)


def _read(path, key: str, shape: tuple[int, int]) -> tuple[bool, _Table, dict]:
    """(found, answers, facts); found is False for a missing, unreadable or foreign file."""
    n_in, n_out = shape
    nothing = (False, _Table(np.empty((0, n_in)), np.empty((0, n_out))), {})
    try:
        with open(path, "rb") as handle, np.load(handle, allow_pickle=False) as data:
            if str(data["key"]) != key:
                return nothing
            inputs, outputs = data["inputs"], data["outputs"]
            names, values = data["fact_names"], data["fact_values"]
    except (OSError, ValueError, KeyError, EOFError, TypeError, AttributeError,
            zipfile.BadZipFile):
        return nothing
    if (inputs.ndim != 2 or outputs.ndim != 2 or inputs.shape != (len(outputs), n_in)
            or outputs.shape[1] != n_out or names.shape != values.shape
            or inputs.dtype != float or outputs.dtype != float):
        return nothing
    return True, _Table(inputs, outputs), dict(zip(names.tolist(), values.tolist(), strict=True))


def prune(folder) -> int:
    """Delete the least recently written memo files beyond :data:`MAX_FILES`.

    Returns
    -------
    int
        Number of files deleted.
    """
    try:
        files = sorted(folder.glob("*.npz"), key=lambda path: path.stat().st_mtime)
    except OSError:
        return 0
    gone = 0
    for path in files[:max(0, len(files) - MAX_FILES)]:
        try:
            path.unlink()
            gone += 1
        except OSError:
            pass  # another process removed or is replacing it
    return gone


@atexit.register
def flush_all() -> None:
    """Write every memo that gained answers in this process, then prune (run at exit)."""
    written = False
    while _PENDING:
        written = _PENDING.pop().flush() or written
    if written:
        prune(cache_folder())
