"""A disk cache of traced phase envelopes, one small JSON file per composition.

Tracing a natural gas's phase envelope with CoolProp takes about a second (1.0-1.4 s for
the demo gas on the project's two-core machine, regression value (own output)), most of
loading a case. The traced points depend only on the composition and the CoolProp
version, so they are kept in the user's cache folder (``platformdirs.user_cache_dir``;
``TRAINOPT_CACHE_DIR`` moves it) and read back in about a millisecond.

- The key is a SHA-256 of the component names, the mole fractions written to 17
  significant digits, the CoolProp version and :data:`FORMAT`: a new composition or a
  new CoolProp traces afresh.
- A file that cannot be read, or does not hold what it should, is ignored and rebuilt.
- Files are written whole or not at all, and a folder that cannot be written only costs
  the speed (:mod:`trainopt.physics.disk_cache`).
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Callable
from pathlib import Path

from trainopt.physics.disk_cache import ENV_VAR, cache_folder, write_atomically

__all__ = ["ENV_VAR", "FORMAT", "cache_folder", "cache_key", "cache_path", "cached_envelope"]

FORMAT = 1
"""Version of the file layout; part of the key."""

Traced = tuple[list[float], list[float]] | None
"""Temperatures [K] and pressures [Pa] along the envelope, or None when tracing failed."""


def cache_key(names: tuple[str, ...], fractions: tuple[float, ...], version: str) -> str:
    """SHA-256 hex digest naming a composition's envelope under a CoolProp version."""
    text = json.dumps({"names": list(names), "fractions": [f"{x:.17g}" for x in fractions],
                       "coolprop": version, "format": FORMAT}, sort_keys=True)
    return hashlib.sha256(text.encode()).hexdigest()


def cache_path(names, fractions, version: str) -> Path:
    """The file of one composition's envelope."""
    return cache_folder() / f"envelope-{cache_key(names, fractions, version)[:32]}.json"


def _read(path: Path, key: str) -> tuple[bool, Traced]:
    """(found, envelope); found is False for a missing, unreadable or foreign file."""
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        if data.get("key") != key:
            return False, None
        if data["failed"]:
            return True, None
        t = [float(v) for v in data["temperature"]]
        p = [float(v) for v in data["pressure"]]
    except (OSError, ValueError, KeyError, TypeError, AttributeError):
        return False, None
    if len(t) != len(p) or len(t) < 4 or not all(math.isfinite(v) for v in t + p):
        return False, None
    return True, (t, p)


def _write(path: Path, key: str, traced: Traced) -> None:
    data = {"key": key, "failed": traced is None,
            "temperature": [] if traced is None else list(traced[0]),
            "pressure": [] if traced is None else list(traced[1])}
    write_atomically(path, lambda handle: json.dump(data, handle))


def cached_envelope(names: tuple[str, ...], fractions: tuple[float, ...], version: str,
                    trace: Callable[[], Traced]) -> Traced:
    """A composition's traced envelope: from the cache, or traced now and stored.

    Parameters
    ----------
    names, fractions : tuple
        Component names and mole fractions [-] of the (hydrocarbon) mixture.
    version : str
        CoolProp's version string.
    trace : callable
        Traces the envelope: returns (temperatures [K], pressures [Pa]) or None.
    """
    key = cache_key(names, fractions, version)
    path = cache_path(names, fractions, version)
    found, traced = _read(path, key)
    if found:
        return traced
    traced = trace()
    if traced is not None:
        traced = ([float(v) for v in traced[0]], [float(v) for v in traced[1]])
    _write(path, key, traced)
    return traced
