"""The user's cache folder and the one way trainopt writes a file into it.

Two caches live there: traced phase envelopes (:mod:`trainopt.physics.envelope_cache`) and
memos of CoolProp states (:mod:`trainopt.physics.state_memo`). Both follow the same rules:

- The folder is ``platformdirs.user_cache_dir("trainopt")`` (``~/.cache/trainopt`` on
  Linux); the environment variable ``TRAINOPT_CACHE_DIR`` moves it.
- A file is written to a temporary name in the same folder and renamed over the final one
  (:func:`os.replace`, atomic on POSIX and Windows), so a reader never sees half a file.
- A folder that cannot be written only costs the speed: nothing is raised.
- Deleting the folder at any time is safe; everything in it is rebuilt on demand.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable
from pathlib import Path

ENV_VAR = "TRAINOPT_CACHE_DIR"
"""Environment variable naming the cache folder (default: the user's cache folder)."""


def cache_folder() -> Path:
    """The cache folder (created on the first write)."""
    named = os.environ.get(ENV_VAR)
    if named:
        return Path(named)
    import platformdirs

    return Path(platformdirs.user_cache_dir("trainopt", appauthor=False))


def write_atomically(path: Path, write: Callable[[object], None], binary: bool = False) -> bool:
    """Write a cache file whole or not at all.

    Parameters
    ----------
    path : pathlib.Path
        Final name of the file.
    write : callable
        Called with an open file handle (text, UTF-8, or binary) to write the content.
    binary : bool, optional
        Open the handle in binary mode.

    Returns
    -------
    bool
        True if the file was written; False when the folder cannot be written.
    """
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{path.stem}-", suffix=".tmp", dir=path.parent)
        try:
            with os.fdopen(fd, "wb" if binary else "w",
                           **({} if binary else {"encoding": "utf-8"})) as handle:
                write(handle)
            os.replace(tmp, path)
        except BaseException:
            Path(tmp).unlink(missing_ok=True)
            raise
    except OSError:
        return False  # a read-only or full cache folder only costs the speed
    return True
