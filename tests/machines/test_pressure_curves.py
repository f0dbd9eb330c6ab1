"""Vendor curves of pressure ratio or discharge pressure against flow, turned into head.

Reference: three speed lines of the GasLib-135 published points (tests/data/gaslib/README.md;
Schmidt, M. et al. (2017), Data 2(4):40, doi:10.3390/data2040040, CC BY 3.0; cite Pfetsch,
M. et al. (2012), ZIB-Report 12-41), isentropic heads. Each head is turned into a discharge
pressure here with CoolProp directly (HEOS, methane by its reference equation of state
(Setzmann, U., Wagner, W. (1991), J. Phys. Chem. Ref. Data 20(6):1061) as the stated test gas,
50 bar and 15 degC at the inlet; test choices): the p2 where
h(p2, s1) - h1 equals the head, by SciPy's brentq. Read back as a pressure-ratio curve, the
map must recover the published heads.
"""

from pathlib import Path

import CoolProp.CoolProp as CP
import pandas as pd
import pytest
from numpy.testing import assert_allclose
from scipy.optimize import brentq

from trainopt.errors import InputError
from trainopt.machines.maps import fit_map_file
from trainopt.report.map_picture import write_fit_report

GASLIB = Path(__file__).parents[1] / "data" / "gaslib"
TEST_GAS = {"Methane": 100.0}  # a stated test gas: pure methane (fast, exact reference EOS)
P1, T1 = 50e5, 288.15
SPEEDS = ("3419", "7708.999999999999", "11999")


@pytest.fixture(scope="module")
def points():
    lines = (GASLIB / "gaslib135.csv").read_text().splitlines()
    rows = [line.split(",") for line in lines if line.startswith(SPEEDS)]
    frame = pd.DataFrame(rows, columns=["speed", "flow", "head", "efficiency", "point"])
    state = CP.AbstractState("HEOS", "&".join(TEST_GAS))
    total = sum(TEST_GAS.values())
    state.set_mole_fractions([v / total for v in TEST_GAS.values()])
    state.update(CP.PT_INPUTS, P1, T1)
    h1, s1 = state.hmass(), state.smass()

    def rise(p2, head):
        state.update(CP.PSmass_INPUTS, p2, s1)
        return state.hmass() - h1 - head

    frame["ratio"] = [brentq(rise, P1 * 1.0001, P1 * 4, args=(float(h) * 1e3,), xtol=1e-6)
                      / P1 for h in frame["head"]]
    return frame


def write(folder: Path, frame: pd.DataFrame, conditions=True) -> Path:
    text = ["speed [rpm],flow [m3/s],pressure_ratio [-],efficiency [-],point"]
    text += [f"{r.speed},{r.flow},{r.ratio!r},{r.efficiency},{r.point}"
             for r in frame.itertuples()]
    (folder / "pr.csv").write_text("\n".join(text) + "\n")
    gas = "\n".join(f"    {k}: {v / 100!r}" for k, v in TEST_GAS.items())
    meta = "basis: isentropic\ntable: pr.csv\n"
    if conditions:
        meta += (f"test_conditions:\n  suction_pressure: 50 bar\n  suction_temperature: 15 degC"
                 f"\n  gas:\n{gas}\n")
    (folder / "pr.yaml").write_text(meta)
    return folder / "pr.yaml"


def test_pressure_ratio_curve_recovers_the_published_heads(tmp_path, points):
    fit = fit_map_file(write(tmp_path, points))
    # trainopt's gas model against CoolProp directly: the same equation of state; the
    # tolerance is brentq's xtol of 1 Pa on p2 (about 1e-6 of the head)
    assert_allclose(fit.conversion["head"], points["head"].astype(float) * 1e3, rtol=2e-6)
    assert_allclose(fit.conversion["pressure_ratio"], points["ratio"], rtol=1e-12)
    assert "pressure ratio" in fit.conversion_note
    assert "isentropic head" in fit.conversion_note
    paths = write_fit_report(tmp_path / "pr.yaml", tmp_path / "out")
    assert "Heads converted from pressure ratio" in paths["report"].read_text()
    assert paths["conversion"].exists()


def test_pressure_curve_without_test_conditions_is_refused(tmp_path, points):
    with pytest.raises(InputError, match=r"pr\.csv:1:pressure_ratio: a curve of pressure "
                       "ratio needs the test's inlet state"):
        fit_map_file(write(tmp_path, points, conditions=False))
