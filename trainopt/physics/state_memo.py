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


class DiskMemo:
    """Answers of one kind for one gas: fixed-width float inputs to float outputs.

    Build it with :func:`memo_for`, so that every gas object of one composition shares it.
    In memory it keeps at most twice :data:`MAX_ENTRIES` answers (the most recent).

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
        self._answers: dict[tuple, tuple] | None = None
        self._facts: dict[str, float] = {}
        self._found = False
        self._new: dict[tuple, tuple] = {}
        self._new_facts: dict[str, float] = {}
        self._queued = False

    @property
    def path(self):
        """The memo's file in the cache folder."""
        return cache_folder() / f"{self.kind}-{self.key[:32]}.npz"

    def _loaded(self) -> dict[tuple, tuple]:
        if self._answers is None:
            self._found, self._answers, self._facts = _read(self.path, self.key, self.shape)
        return self._answers

    @property
    def on_disk(self) -> bool:
        """True when an earlier process left a readable file for this gas."""
        self._loaded()
        return self._found

    def get(self, inputs: tuple[float, ...]) -> tuple[float, ...] | None:
        """The stored answer to exactly these inputs, or None."""
        return self._loaded().get(inputs)

    def put(self, inputs: tuple[float, ...], outputs: tuple[float, ...]) -> None:
        """Keep an answer (written to disk when the process ends)."""
        answers = self._loaded()
        answers[inputs] = outputs
        self._new[inputs] = outputs
        if len(answers) > 2 * MAX_ENTRIES:  # keep the most recent; amortised O(1) a call
            self._answers = dict(list(answers.items())[-MAX_ENTRIES:])
            self._new = dict(list(self._new.items())[-MAX_ENTRIES:])
        self._pending()

    def fact(self, name: str) -> float | None:
        """A named value stored with the memo (e.g. ``"molar_mass"``), or None."""
        self._loaded()
        return self._facts.get(name)

    def set_fact(self, name: str, value: float) -> None:
        """Keep a named value with the memo."""
        self._loaded()
        self._facts[name] = value
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
        _, answers, facts = _read(path, self.key, self.shape)
        answers.update(self._new)
        facts.update(self._new_facts)
        items = list(answers.items())[-MAX_ENTRIES:]
        n_in, n_out = self.shape
        inputs = np.array([k for k, _ in items], float).reshape(len(items), n_in)
        outputs = np.array([v for _, v in items], float).reshape(len(items), n_out)
        names = sorted(facts)
        written = write_atomically(path, lambda handle: np.savez(
            handle, key=np.array(self.key), inputs=inputs, outputs=outputs,
            fact_names=np.array(names, dtype=str),
            fact_values=np.array([facts[n] for n in names], float)), binary=True)
        if written:
            self._new.clear()
            self._new_facts.clear()
        self._queued = False
        return written


def _read(path, key: str, shape: tuple[int, int]) -> tuple[bool, dict, dict]:
    """(found, answers, facts); found is False for a missing, unreadable or foreign file."""
    try:
        with open(path, "rb") as handle, np.load(handle, allow_pickle=False) as data:
            if str(data["key"]) != key:
                return False, {}, {}
            inputs, outputs = data["inputs"], data["outputs"]
            names, values = data["fact_names"], data["fact_values"]
    except (OSError, ValueError, KeyError, EOFError, TypeError, AttributeError,
            zipfile.BadZipFile):
        return False, {}, {}
    n_in, n_out = shape
    if (inputs.ndim != 2 or outputs.ndim != 2 or inputs.shape != (len(outputs), n_in)
            or outputs.shape[1] != n_out or names.shape != values.shape):
        return False, {}, {}
    answers = dict(zip(map(tuple, inputs.tolist()), map(tuple, outputs.tolist()), strict=True))
    return True, answers, dict(zip(names.tolist(), values.tolist(), strict=True))


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
