"""Shared fixtures: published gas compositions and the gases built from them.

Each composition is named after its published source. Building a :class:`Gas` is cheap
(CoolProp states are cached per composition), but the phase envelope used by the
dew-point check costs 1-2 s for a lean gas and about 8 s for the NIST test gas, once per
composition and process; so the gases here are session-scoped and tests that need a
dew point use the lean gas, never the NIST one.
"""

import os
from pathlib import Path

import pytest

from trainopt.physics.gas import EquationOfState, Gas

# NIST's AGA8/GERG-2008 reference code (E. W. Lemmon, NIST, github.com/usnistgov/AGA8;
# GERG-2008 as in AGA Report No. 8 Part 2, 2017): the test gas of the example program in
# GERG2008.cpp, mole fractions [-].
NIST_GERG2008_TEST_GAS = {
    "methane": 0.77824, "nitrogen": 0.02, "carbon dioxide": 0.06, "ethane": 0.08,
    "propane": 0.03, "isobutane": 0.0015, "n-butane": 0.003, "isopentane": 0.0005,
    "n-pentane": 0.00165, "n-hexane": 0.00215, "n-heptane": 0.00088, "n-octane": 0.00024,
    "n-nonane": 0.00015, "n-decane": 0.00009, "hydrogen": 0.004, "oxygen": 0.005,
    "carbon monoxide": 0.002, "water": 0.0001, "hydrogen sulfide": 0.0025, "helium": 0.007,
    "argon": 0.001,
}

# AGA Report No. 8 (1994), "Gulf Coast" example gas, mole per cent: a lean pipeline gas.
AGA8_GULF_COAST_GAS_PERCENT = {
    "methane": 96.5222, "nitrogen": 0.2595, "carbon dioxide": 0.5956, "ethane": 1.8186,
    "propane": 0.4596, "isobutane": 0.0977, "n-butane": 0.1007, "isopentane": 0.0473,
    "n-pentane": 0.0324, "n-hexane": 0.0664,
}


@pytest.fixture(scope="session", autouse=True)
def envelope_cache_folder(tmp_path_factory):
    """Envelopes and gas-state memos are kept in a folder of this test session, not the user's.

    The memos are written before the folder is given back, so that nothing this session
    computed lands in the user's cache when the process ends.
    """
    from trainopt.physics.state_memo import flush_all

    folder = tmp_path_factory.mktemp("cache")
    before = os.environ.get("TRAINOPT_CACHE_DIR")
    os.environ["TRAINOPT_CACHE_DIR"] = str(folder)
    yield folder
    flush_all()
    if before is None:
        os.environ.pop("TRAINOPT_CACHE_DIR", None)
    else:
        os.environ["TRAINOPT_CACHE_DIR"] = before


@pytest.fixture
def nist_gerg2008_test_gas_composition():
    """Mole fractions of NIST's GERG-2008 test gas (a fresh dict each test)."""
    return dict(NIST_GERG2008_TEST_GAS)


@pytest.fixture(scope="session")
def nist_gerg2008_test_gas():
    """NIST's GERG-2008 test gas with CoolProp's GERG-2008 mixture model."""
    return Gas.from_composition(NIST_GERG2008_TEST_GAS)


@pytest.fixture
def aga8_gulf_coast_composition():
    """Mole fractions of AGA 8's Gulf Coast gas (a fresh dict each test)."""
    return {name: percent / 100.0 for name, percent in AGA8_GULF_COAST_GAS_PERCENT.items()}


@pytest.fixture(scope="session")
def aga8_gulf_coast_gas():
    """AGA 8's Gulf Coast gas, GERG-2008 mixture model: the lean pipeline gas of the tests."""
    return Gas.from_composition({k: v / 100.0 for k, v in AGA8_GULF_COAST_GAS_PERCENT.items()})


@pytest.fixture(scope="session")
def aga8_gulf_coast_gas_peng_robinson():
    """AGA 8's Gulf Coast gas with the Peng-Robinson equation of state."""
    return Gas.from_composition({k: v / 100.0 for k, v in AGA8_GULF_COAST_GAS_PERCENT.items()},
                                EquationOfState.PENG_ROBINSON)


@pytest.fixture(scope="session")
def write_demo_variant():
    """Write a variant of a demo case (a dict) to a folder, its map and gas paths resolved.

    Call ``write_demo_variant(folder, data)``: the variant's ``gas`` and every ``map`` (of
    units and of sections) point at ``cases/demo``; returns the case file's path. For tests
    of bad input and of case layouts built on the invented demo data.
    """
    import yaml

    demo = Path(__file__).parents[1] / "cases" / "demo"

    def write(folder: Path, data: dict) -> Path:
        data = yaml.safe_load(yaml.safe_dump(data))
        data["gas"] = {"file": str(demo / "gas.yaml")}
        for unit in data["units"]:
            if "map" in unit:
                unit["map"] = str(demo / unit["map"])
            for section in unit.get("sections") or []:
                section["map"] = str(demo / section["map"])
        path = folder / "case.yaml"
        path.write_text(yaml.safe_dump(data))
        return path

    return write


DEMO_STATION = Path(__file__).resolve().parents[1] / "cases" / "demo" / "station.yaml"
"""The invented demo station (demo data, not a reference)."""


@pytest.fixture(scope="session")
def demo_case():
    """The demo station's case, loaded once for the whole run."""
    import trainopt

    return trainopt.load_case(DEMO_STATION)


@pytest.fixture(scope="session")
def demo_station(demo_case):
    """The demo station reduced at its case's conditions, once for the whole run."""
    from trainopt.station.reduced import Station

    return Station(demo_case)
