"""The disk cache of phase envelopes: same envelope back, rebuilt when corrupt, atomic.

The gas is the lean "Gulf Coast" gas of AGA Report No. 8 (1994) from ``conftest.py``; the
envelope itself is CoolProp's (HEOS with GERG-2008 parameters), so the check here is that
the cached one is the traced one to the last bit, not a value of our own.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from trainopt.physics import dew_point
from trainopt.physics.envelope_cache import (
    ENV_VAR,
    cache_folder,
    cache_key,
    cache_path,
    cached_envelope,
)
from trainopt.physics.gas import Gas

NAMES, FRACTIONS = ("ethane", "methane", "propane"), (0.06, 0.9, 0.04)


@pytest.fixture
def folder(tmp_path, monkeypatch):
    monkeypatch.setenv(ENV_VAR, str(tmp_path))
    return tmp_path


def _tracer(result, calls):
    def trace():
        calls.append(1)
        return result
    return trace


def test_the_variable_moves_the_folder(folder):
    assert cache_folder() == folder


def test_second_call_reads_the_file_instead_of_tracing(folder):
    calls = []
    traced = ([200.0, 250.0, 260.0, 230.0], [1e5, 4e6, 6e6, 8e6])
    assert cached_envelope(NAMES, FRACTIONS, "v1", _tracer(traced, calls)) == traced
    assert cached_envelope(NAMES, FRACTIONS, "v1", _tracer(traced, calls)) == traced
    assert len(calls) == 1
    assert [p.name for p in folder.iterdir()] == [cache_path(NAMES, FRACTIONS, "v1").name]


def test_a_new_version_or_composition_traces_afresh(folder):
    calls = []
    traced = ([200.0, 250.0, 260.0, 230.0], [1e5, 4e6, 6e6, 8e6])
    cached_envelope(NAMES, FRACTIONS, "v1", _tracer(traced, calls))
    cached_envelope(NAMES, FRACTIONS, "v2", _tracer(traced, calls))
    cached_envelope(NAMES, (0.07, 0.89, 0.04), "v1", _tracer(traced, calls))
    assert len(calls) == 3
    assert cache_key(NAMES, FRACTIONS, "v1") != cache_key(NAMES, FRACTIONS, "v2")


@pytest.mark.parametrize("text", ["", "{not json", '{"key": "other"}', "[1, 2]",
                                  None])
def test_a_corrupt_file_is_ignored_and_rebuilt(folder, text):
    path = cache_path(NAMES, FRACTIONS, "v1")
    if text is None:  # right key, arrays of different lengths
        text = json.dumps({"key": cache_key(NAMES, FRACTIONS, "v1"), "failed": False,
                           "temperature": [1.0, 2.0], "pressure": [1.0]})
    path.write_text(text)
    calls = []
    traced = ([200.0, 250.0, 260.0, 230.0], [1e5, 4e6, 6e6, 8e6])
    assert cached_envelope(NAMES, FRACTIONS, "v1", _tracer(traced, calls)) == traced
    assert len(calls) == 1
    assert json.loads(path.read_text())["temperature"] == traced[0]
    assert not list(folder.glob(".envelope-*"))  # no temporary file left behind


def test_a_failed_trace_is_remembered(folder):
    calls = []
    assert cached_envelope(NAMES, FRACTIONS, "v1", _tracer(None, calls)) is None
    assert cached_envelope(NAMES, FRACTIONS, "v1", _tracer(None, calls)) is None
    assert len(calls) == 1


def test_an_unwritable_folder_still_returns_the_envelope(tmp_path, monkeypatch):
    blocker = tmp_path / "file"
    blocker.write_text("")
    monkeypatch.setenv(ENV_VAR, str(blocker / "below"))
    traced = ([200.0, 250.0, 260.0, 230.0], [1e5, 4e6, 6e6, 8e6])
    assert cached_envelope(NAMES, FRACTIONS, "v1", lambda: traced) == traced


def test_the_gas_envelope_from_the_cache_equals_coolprops_trace(folder, aga8_gulf_coast_gas):
    comp = dict(aga8_gulf_coast_gas.components)
    dew_point.envelope.cache_clear()
    first = Gas.from_composition(comp).envelope
    assert list(folder.glob("envelope-*.json"))
    dew_point.envelope.cache_clear()
    second = Gas.from_composition(comp).envelope
    np.testing.assert_array_equal(first.temperature, second.temperature)
    np.testing.assert_array_equal(first.pressure, second.pressure)
    assert second.cricondenbar == first.cricondenbar
