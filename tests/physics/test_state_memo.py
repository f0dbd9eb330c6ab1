"""The disk memo of CoolProp answers: the same numbers back, without loading CoolProp.

The gas is the lean "Gulf Coast" gas of AGA Report No. 8 (1994) from ``conftest.py``. The
reference values are CoolProp's own (HEOS, GERG-2008 parameters), computed in a first
process; the check is that a second process gets them back to the last bit without
importing CoolProp, and that a damaged, foreign or unwritable file only costs the speed.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np
import pytest

from tests.conftest import AGA8_GULF_COAST_GAS_PERCENT
from trainopt.physics import state_memo
from trainopt.physics.disk_cache import ENV_VAR
from trainopt.physics.gas import Gas
from trainopt.physics.state_memo import DiskMemo

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

_PROBE = """
import json, sys
from trainopt.physics.gas import Gas
gas = Gas.from_composition({composition!r})
gas.check_gas_phase(6.0e6, 295.15)
states = [gas.state(p, t) for p, t in [(4.4e6, 295.15), (6.6e6, 330.0), (101325.0, 288.15)]]
print(json.dumps({{"coolprop_loaded": "CoolProp" in sys.modules,
                   "molar_mass": gas.molar_mass,
                   "states": [[s.density, s.enthalpy, s.entropy, s.cp, s.speed_of_sound]
                              for s in states]}}))
"""


def _probe(folder) -> dict:
    env = {**os.environ, ENV_VAR: str(folder), "PYTHONPATH": ROOT}
    code = _PROBE.format(composition={k: f"{v} %" for k, v in
                                      AGA8_GULF_COAST_GAS_PERCENT.items()})
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         env=env, cwd=ROOT, timeout=300, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def test_a_second_process_gets_coolprops_numbers_without_loading_coolprop(tmp_path):
    first = _probe(tmp_path)
    second = _probe(tmp_path)
    assert first["coolprop_loaded"] is True
    assert second["coolprop_loaded"] is False
    assert second["states"] == first["states"]  # bit for bit: float64 kept as float64
    assert second["molar_mass"] == first["molar_mass"]
    assert sorted(p.name.split("-")[0] for p in tmp_path.iterdir()) == [
        "dew", "envelope", "states"]


@pytest.fixture
def folder(tmp_path, monkeypatch):
    monkeypatch.setenv(ENV_VAR, str(tmp_path))
    return tmp_path


def _memo(fractions=(0.9, 0.1)) -> DiskMemo:
    return DiskMemo("states", {"backend": "HEOS", "names": ["methane", "ethane"],
                               "fractions": [f"{x:.17g}" for x in fractions]}, 2, 3)


def test_answers_and_facts_come_back_from_the_file(folder):
    memo = _memo()
    memo.put((1e6, 300.0), (1.0, 2.0, 3.0))
    memo.set_fact("molar_mass", 0.0175)
    assert memo.flush() is True
    again = _memo()
    assert again.on_disk
    assert again.get((1e6, 300.0)) == (1.0, 2.0, 3.0)
    assert again.get((1e6, 300.0000001)) is None
    assert again.fact("molar_mass") == 0.0175
    assert _memo((0.8, 0.2)).on_disk is False  # another gas, another file


def test_a_new_coolprop_version_starts_afresh(folder, monkeypatch):
    memo = _memo()
    memo.put((1e6, 300.0), (1.0, 2.0, 3.0))
    memo.flush()
    monkeypatch.setattr(state_memo, "coolprop_version", lambda: "0.0-other")
    assert _memo().on_disk is False


def test_two_processes_writing_keep_both_answers(folder):
    a, b = _memo(), _memo()
    a.get((0.0, 0.0))
    b.get((0.0, 0.0))  # both read the (missing) file before either writes
    a.put((1e6, 300.0), (1.0, 2.0, 3.0))
    b.put((2e6, 310.0), (4.0, 5.0, 6.0))
    a.flush()
    b.flush()
    merged = _memo()
    assert merged.get((1e6, 300.0)) == (1.0, 2.0, 3.0)
    assert merged.get((2e6, 310.0)) == (4.0, 5.0, 6.0)


def test_the_file_keeps_the_most_recent_answers(folder, monkeypatch):
    monkeypatch.setattr(state_memo, "MAX_ENTRIES", 3)
    memo = _memo()
    for i in range(5):
        memo.put((float(i), 300.0), (float(i), 0.0, 0.0))
    memo.flush()
    kept = _memo()
    assert [kept.get((float(i), 300.0)) is not None for i in range(5)] == [
        False, False, True, True, True]


@pytest.mark.parametrize("damage", ["text", "empty", "truncated"])
def test_a_damaged_file_is_ignored_and_rewritten(folder, damage):
    memo = _memo()
    if damage == "truncated":  # a whole file cut short: the start of a zip, no directory
        whole = _memo((0.5, 0.5))
        whole.put((1.0, 2.0), (1.0, 2.0, 3.0))
        whole.flush()
        content = whole.path.read_bytes()[:100]
    else:
        content = b"not a zip file" if damage == "text" else b""
    memo.path.parent.mkdir(parents=True, exist_ok=True)
    memo.path.write_bytes(content)
    assert memo.on_disk is False
    memo.put((1e6, 300.0), (1.0, 2.0, 3.0))
    assert memo.flush() is True
    assert _memo().get((1e6, 300.0)) == (1.0, 2.0, 3.0)


def test_a_file_of_the_wrong_shape_is_ignored(folder):
    memo = _memo()
    np.save(folder / "plain.npy", np.zeros(3))
    (folder / "plain.npy").replace(memo.path)  # one array, not an archive
    assert memo.on_disk is False
    memo = _memo()
    np.savez(memo.path, key=np.array(memo.key), inputs=np.zeros((2, 5)),
             outputs=np.zeros((2, 3)), fact_names=np.array([], str), fact_values=np.zeros(0))
    assert memo.on_disk is False


@pytest.mark.skipif(hasattr(os, "geteuid") and os.geteuid() == 0,
                    reason="the superuser writes into read-only folders")
def test_a_read_only_folder_costs_only_the_speed(folder):
    folder.chmod(0o500)
    try:
        memo = _memo()
        memo.put((1e6, 300.0), (1.0, 2.0, 3.0))
        assert memo.flush() is False
        assert memo.get((1e6, 300.0)) == (1.0, 2.0, 3.0)
    finally:
        folder.chmod(0o700)


def test_a_folder_that_is_a_file_costs_only_the_speed(tmp_path, monkeypatch):
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("x")
    monkeypatch.setenv(ENV_VAR, str(blocker))
    memo = _memo()
    memo.put((1e6, 300.0), (1.0, 2.0, 3.0))
    assert memo.flush() is False
    assert memo.get((1e6, 300.0)) == (1.0, 2.0, 3.0)


def test_states_from_the_memo_equal_coolprops_in_process(folder):
    """Within one process the memo returns the GasState CoolProp gave the first time."""
    gas = Gas.from_composition({"methane": 0.9, "ethane": 0.06, "propane": 0.04})
    first = gas.state(5.0e6, 300.0)
    assert gas.state(5.0e6, 300.0) == first
    import CoolProp.CoolProp as CP

    rho = CP.PropsSI("Dmass", "P", 5.0e6, "T", 300.0,
                     "HEOS::Methane[0.9]&Ethane[0.06]&Propane[0.04]")
    assert first.density == pytest.approx(rho, rel=1e-9)  # CoolProp, phase left to it


def test_one_memo_per_gas_in_a_process(folder):
    identity = {"backend": "HEOS", "names": ["methane"], "fractions": ["1"]}
    assert state_memo.memo_for("states", identity, 2, 3) is state_memo.memo_for(
        "states", dict(identity), 2, 3)
    assert state_memo.memo_for("dew", identity, 1, 2) is not state_memo.memo_for(
        "states", identity, 2, 3)


def test_memory_keeps_the_most_recent_answers(folder, monkeypatch):
    monkeypatch.setattr(state_memo, "MAX_ENTRIES", 3)
    memo = _memo()
    for i in range(10):
        memo.put((float(i), 300.0), (float(i), 0.0, 0.0))
    assert memo.get((9.0, 300.0)) == (9.0, 0.0, 0.0)
    assert memo.get((0.0, 300.0)) is None
    assert len(memo._answers) <= 2 * 3


def test_the_folder_keeps_the_most_recently_written_files(folder, monkeypatch):
    monkeypatch.setattr(state_memo, "MAX_FILES", 2)
    paths = []
    for i, fractions in enumerate([(0.9, 0.1), (0.8, 0.2), (0.7, 0.3)]):
        memo = _memo(fractions)
        memo.put((1e6, 300.0), (1.0, 2.0, 3.0))
        memo.flush()
        os.utime(memo.path, (1_000_000 + i, 1_000_000 + i))
        paths.append(memo.path)
    (folder / "envelope-kept.json").write_text("{}")
    assert state_memo.prune(folder) == 1
    assert [p.exists() for p in paths] == [False, True, True]
    assert (folder / "envelope-kept.json").exists()


def test_rows_sharing_a_hash_are_told_apart(folder, monkeypatch):
    monkeypatch.setattr(state_memo, "_hash", lambda rows: np.zeros(len(rows), np.uint64))
    memo = _memo()
    for i in range(3):
        memo.put((1e6 + i, 300.0), (float(i), 0.0, 0.0))
    memo.flush()
    again = _memo()
    assert [again.get((1e6 + i, 300.0)) for i in range(3)] == [
        (0.0, 0.0, 0.0), (1.0, 0.0, 0.0), (2.0, 0.0, 0.0)]
    assert again.get((1e6 + 3, 300.0)) is None
