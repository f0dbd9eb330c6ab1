"""The README's calibration example on the bundled demo history, end to end, on its first week.

History: cases/demo/history/wear_history.csv, INVENTED demo data made by the seeded
cases/demo/history/make_wear_history.py from a known wear (its ``WEAR``); nothing measured.
Checked here: the README line names files that exist; the file is what the script makes;
the command runs as written on a copy of the demo case (so that the calibrated case's map
paths are relative and must resolve from its new folder); the factors it recovers are the
invented ones within three of their stated standard errors (a 99.7 % band each); the rows a
field test leaves out are counted by reason; the calibrated case is taken by the optimiser.
"""

import importlib.util
import shutil

import numpy as np
import pandas as pd
import pytest
import yaml
from typer.testing import CliRunner

from tests.conftest import DEMO_STATION
from trainopt.case.loading import load_case
from trainopt.cli.app import app
from trainopt.station.split import optimize

REPO = DEMO_STATION.parents[2]
HISTORY = DEMO_STATION.parent / "history"
EXAMPLE = ("trainopt calibrate cases/demo/station.yaml cases/demo/history/wear_history.csv "
           "--columns cases/demo/history/wear_columns.yaml --out out/calibration")


def _script():
    spec = importlib.util.spec_from_file_location("make_wear_history",
                                                  HISTORY / "make_wear_history.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_readme_example_names_the_bundled_files():
    assert EXAMPLE in (REPO / "README.md").read_text(encoding="utf-8")
    for name in EXAMPLE.split()[2:]:
        if name.startswith("cases/"):
            assert (REPO / name).is_file(), name
    assert (HISTORY / "wear_history.csv").stat().st_size < 2e6


def test_bundled_history_is_what_the_seeded_script_makes():
    frame, mapping = _script().make()
    stored = pd.read_csv(HISTORY / "wear_history.csv")
    assert list(stored.columns) == list(frame.columns)
    numbers = frame.columns.drop("timestamp")
    np.testing.assert_allclose(stored[numbers].to_numpy(float),
                               frame[numbers].to_numpy(float), rtol=1e-12)
    assert (stored["timestamp"] == frame["timestamp"]).all()
    assert yaml.safe_load((HISTORY / "wear_columns.yaml").read_text()) == mapping


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    """The README command on a copy of the demo (maps, gas) with --until a week in."""
    root = tmp_path_factory.mktemp("demo_run")
    demo = root / "cases" / "demo"
    shutil.copytree(DEMO_STATION.parent / "maps", demo / "maps")
    for name in ("station.yaml", "gas.yaml"):
        shutil.copy(DEMO_STATION.parent / name, demo / name)
    out = root / "out" / "calibration"
    args = EXAMPLE.split()[2:]
    args[args.index("cases/demo/station.yaml")] = str(demo / "station.yaml")
    args = [str(REPO / a) if a.startswith("cases/demo/history") else a for a in args]
    args[args.index("out/calibration")] = str(out)
    result = CliRunner().invoke(app, ["calibrate", *args, "--until", "2023-01-08",
                                      "--wash-cost", "40000 USD"])
    assert result.exit_code == 0, result.output
    return out, result.output


def test_recovers_the_invented_wear_within_its_uncertainty(demo_run):
    out, _ = demo_run
    factors = pd.read_csv(out / "factors.csv", comment="#").set_index("unit")
    for unit, (head, efficiency) in _script().WEAR.items():
        for name, true in (("head_factor", head), ("efficiency_factor", efficiency)):
            error = factors.loc[unit, name] - true
            se = factors.loc[unit, f"{name}_se"]
            assert 0 < se < 0.005, (unit, name, se)  # a week holds some 50-80 points
            assert abs(error) <= 3 * se, (unit, name, error, se)
        assert factors.loc[unit, "points"] >= 40


def test_rows_a_field_test_leaves_out_are_counted(demo_run):
    out, _ = demo_run
    excluded = pd.read_csv(out / "excluded.csv", comment="#")
    reasons = set(excluded["reason"])
    assert "recycle valve open, recycle flow unknown" in reasons
    assert "outside the map's tested speed range (extrapolation refused)" in reasons
    assert any(r.startswith("not steady") for r in reasons)
    # a week of 24 x 90 rows: the rest are outside --until
    after = excluded[excluded["reason"] == "outside the --since/--until period"]
    assert (after["rows"] == 24 * 90 - 24 * 7 - 1).all()


def test_calibrated_case_loads_from_its_folder_and_is_optimised(demo_run, monkeypatch):
    out, _ = demo_run
    data = yaml.safe_load((out / "case.yaml").read_text())
    # maps and gas stay where they were, named relative to the new case file
    assert data["gas"]["file"] == "../../cases/demo/gas.yaml"
    assert data["units"][0]["map"] == "../../cases/demo/maps/motor_unit.yaml"
    monkeypatch.chdir(REPO)  # another working folder: the paths follow the case file
    case = load_case(out / "case.yaml")
    as_new = load_case(DEMO_STATION)
    for unit, train in zip(data["units"], case.trains, strict=True):
        factor = unit["calibration"]["head_factor"]
        assert factor == pytest.approx(_script().WEAR[train.name][0], abs=0.01)
        worn, new = (c.train(train.name).sections[0].compressor_map for c in (case, as_new))
        speed = 0.5 * (new.speed_min + new.speed_max)
        flow = 1.2 * new.surge_flow_at_speed(speed)
        # the worn map is the as-new one times the factor (no flow factor fitted)
        assert worn.head(flow, speed) == pytest.approx(factor * new.head(flow, speed),
                                                       rel=1e-9)
    payback = pd.read_csv(out / "wear_payback.csv", comment="#")
    assert (payback["wash_payback_months"] > 0).all()
    assert optimize(case).total_shaft_power > 0
