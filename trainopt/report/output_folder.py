"""Writing output files the same way in every command: checked first, complete or not at all.

One rule for every command that writes files (``optimize``/``evaluate --out``, ``fit-map``,
``envelope``, ``audit`` and any later one):

1. **Check before the work.** :meth:`OutputFolder.check` runs before any solve: the folder
   (or the nearest folder above it that exists) must be a writable folder, not a file, and
   none of the files the command may write may exist already unless the user said
   ``--force`` (``overwrite=True``). Each refusal is one :class:`~trainopt.errors.InputError`
   naming the option and the fix.
2. **Write into a temporary folder.** Files are written under :attr:`OutputFolder.stage`
   (or :meth:`OutputFolder.path` for one file), a hidden folder inside the destination (or
   in the nearest existing folder above it), and moved into place by
   :meth:`OutputFolder.commit` only when all are complete. A failure on the way removes the
   temporary folder: no half-written output is left, and nothing the user had is touched.
3. **Safe file names.** :func:`safe_name` turns a unit name (which may hold ``/``, spaces or
   other characters a file system refuses) into a file name of letters, digits, ``.``, ``-``
   and ``_``.
4. **Files not written are never touched.** Other files in the destination stay as they are.
5. **The caution goes in every file.** :func:`write_csv` ends each CSV with the caution as a
   ``#`` comment line (read with ``pandas.read_csv(path, comment="#")``); Excel workbooks get a
   ``caution`` sheet, JSON a ``caution`` key.

Usage::

    folder = OutputFolder(out, overwrite=force, option="--out")
    folder.check(["result.json", "units.csv"])      # before solving
    ...                                             # solve
    with folder.writing():                          # commit on success, discard on error
        folder.path("result.json").write_text(...)  # a path in the temporary folder
    written = folder.written                        # name -> final Path

or, step by step, ``folder.path(name)`` for each file then ``folder.commit()``, and
``folder.discard()`` on failure.
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import tempfile
from collections.abc import Iterable, Iterator
from pathlib import Path

from trainopt.errors import InputError

__all__ = ["OutputFolder", "safe_name", "write_csv"]

_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")


def safe_name(name: str) -> str:
    """A file-name-safe form of a unit (or map) name.

    Every run of characters other than ASCII letters, digits, ``.``, ``-`` and ``_`` becomes
    one ``_``; leading dots are dropped (no hidden files, no ``..``); an empty result is
    ``"unnamed"``.

    Parameters
    ----------
    name : str

    Returns
    -------
    str
    """
    text = _UNSAFE.sub("_", str(name)).lstrip(".")
    return text or "unnamed"


def _existing_ancestor(path: Path) -> Path:
    """The path itself, or the nearest folder above it that exists."""
    path = path.absolute()
    while not path.exists() and path != path.parent:
        path = path.parent
    return path


class OutputFolder:
    """A destination folder written in one piece (see the module docstring for the rule).

    Parameters
    ----------
    target : str or Path
        The destination folder; created (with its parents) on commit if missing.
    overwrite : bool
        Replace files of the same names (``--force``); otherwise they are refused.
    option : str
        The option the user gave the folder with, named in messages (``--out``).
    """

    def __init__(self, target: str | Path, *, overwrite: bool = False, option: str = "--out"):
        self.target = Path(target)
        self.overwrite = overwrite
        self.option = option
        self.written: dict[str, Path] = {}
        self._stage: Path | None = None

    def check(self, names: Iterable[str] = ()) -> None:
        """Refuse now what would fail later: a file in the way, no write access, old files.

        Parameters
        ----------
        names : iterable of str
            File names (relative to the folder) the command may write.

        Raises
        ------
        InputError
            Naming the option, the path and the fix.
        """
        target = self.target
        base = _existing_ancestor(target)
        if not base.is_dir():
            what = target if base == target.absolute() else base
            raise InputError(self.option, f"{what} is a file, not a folder",
                             "give a folder path")
        if not os.access(base, os.W_OK | os.X_OK) or not self._can_create(base):
            raise InputError(self.option, f"cannot write in {base}",
                             "choose a folder you may write to")
        if self.overwrite or not target.is_dir():
            return
        for name in names:
            if (target / name).exists():
                raise InputError(self.option, f"{target / name} exists already",
                                 "pass --force to replace it or choose another folder")

    @staticmethod
    def _can_create(base: Path) -> bool:
        """Whether a file can really be made in ``base`` (access bits lie for root)."""
        try:
            fd, probe = tempfile.mkstemp(prefix=".trainopt-probe-", dir=base)
        except OSError:
            return False
        os.close(fd)
        os.unlink(probe)
        return True

    @property
    def stage(self) -> Path:
        """The temporary folder (made on first use); write files under it."""
        if self._stage is None:
            self.check()
            home = self.target if self.target.is_dir() else _existing_ancestor(self.target)
            self._stage = Path(tempfile.mkdtemp(prefix=".trainopt-partial-", dir=home))
        return self._stage

    def path(self, name: str) -> Path:
        """Where to write the file ``name`` now (inside the temporary folder).

        Parameters
        ----------
        name : str
            File name relative to the destination; pass it through :func:`safe_name` if it
            is built from a user's names.
        """
        return self.stage / name

    def commit(self) -> dict[str, Path]:
        """Move every file written in the temporary folder into the destination.

        Returns
        -------
        dict of str to Path
            File name (relative) -> final path, also kept in :attr:`written`.

        Raises
        ------
        InputError
            If a file appeared at a destination name meanwhile and ``overwrite`` is off
            (nothing is moved then).
        """
        if self._stage is None:
            return {}
        stage, self._stage = self._stage, None
        try:
            names = sorted(p.relative_to(stage).as_posix() for p in stage.rglob("*")
                           if p.is_file())
            if not self.overwrite:
                for name in names:
                    if (self.target / name).exists():
                        raise InputError(self.option, f"{self.target / name} exists already",
                                         "pass --force to replace it or choose another folder")
            self.target.mkdir(parents=True, exist_ok=True)
            for name in names:
                final = self.target / name
                final.parent.mkdir(parents=True, exist_ok=True)
                os.replace(stage / name, final)
                self.written[name] = final
        except OSError as exc:
            raise InputError(self.option, f"cannot write {self.target}: {exc.strerror}",
                             "check the folder and free space") from None
        finally:
            shutil.rmtree(stage, ignore_errors=True)
        return dict(self.written)

    def discard(self) -> None:
        """Remove the temporary folder and everything in it (after a failure)."""
        if self._stage is not None:
            shutil.rmtree(self._stage, ignore_errors=True)
            self._stage = None

    @contextlib.contextmanager
    def writing(self) -> Iterator[OutputFolder]:
        """Context: yields the folder; commits on success, discards on any error.

        An ``OSError`` while writing becomes one :class:`InputError` line.
        """
        try:
            yield self
        except OSError as exc:
            self.discard()
            raise InputError(self.option, f"cannot write in {self.target}: {exc.strerror}",
                             "check the folder and free space") from None
        except BaseException:
            self.discard()
            raise
        self.commit()


def write_csv(frame, path: str | Path, **to_csv) -> Path:
    """Write a table as CSV with the caution as its last line, a ``#`` comment.

    Read it back with ``pandas.read_csv(path, comment="#")``.

    Parameters
    ----------
    frame : pandas.DataFrame
    path : str or Path
    **to_csv
        Passed to :meth:`pandas.DataFrame.to_csv` (``index`` defaults to False).

    Returns
    -------
    Path
    """
    from trainopt.caution import CAUTION

    path = Path(path)
    to_csv.setdefault("index", False)
    with path.open("w", encoding="utf-8", newline="") as handle:
        frame.to_csv(handle, **to_csv)
        handle.write(f"# {CAUTION}\n")
    return path
