"""The ``trainopt calibrate`` command and its written report (real files, real browser-free HTML).

History: the INVENTED synthetic history of trainopt.studies.calibration_synthetic (demo data,
known wear). Checked here: the command writes the calibrated case, the HTML and the CSVs; the
case loads and the optimiser takes it; nothing is overwritten without --force; bad options
give one line and exit status 2.
"""

import html
import re

import pandas as pd
import pytest
import yaml
from typer.testing import CliRunner

from tests.conftest import DEMO_STATION
from trainopt.case.loading import load_case
from trainopt.caution import CAUTION
from trainopt.cli.app import app
from trainopt.machines.degradation import Degradation
from trainopt.station.split import optimize
from trainopt.studies.calibration_synthetic import synthetic_history

TRUE = {"A": Degradation(0.96, 0.95), "B": Degradation(0.98, 0.97),
        "C": Degradation(0.95, 0.93), "D": Degradation(0.92, 0.90)}
"""Invented wear (demo data)."""


@pytest.fixture(scope="module")
def files(demo_case, tmp_path_factory):
    folder = tmp_path_factory.mktemp("history")
    frame, mapping = synthetic_history(demo_case, TRUE, 24 * 8, seed=11)
    frame.to_csv(folder / "history.csv", index=False)
    (folder / "columns.yaml").write_text(yaml.safe_dump(mapping))
    return folder / "history.csv", folder / "columns.yaml"


def run(*args):
    return CliRunner().invoke(app, ["calibrate", *map(str, args)])


@pytest.fixture(scope="module")
def written(files, tmp_path_factory):
    out = tmp_path_factory.mktemp("calibrated") / "out"
    result = run(DEMO_STATION, files[0], "--columns", files[1], "--out", out,
                 "--wash-cost", "40000")
    assert result.exit_code == 0, result.output
    return out, result.output


def test_writes_case_report_and_tables(written):
    out, output = written
    assert CAUTION in output
    assert re.search(r"D: head 0\.9\d+ ± 0\.00\d+", output)
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted(["case.yaml", "calibration.html", "excluded.csv", "factors.csv",
                            "points.csv", "trend.csv", "wear_monthly.csv",
                            "wear_payback.csv"])
    text = (out / "calibration.html").read_text()
    assert text.count("data:image/png;base64,") >= 9  # trend + a map and residuals per unit
    assert html.escape(CAUTION) in text
    payback = pd.read_csv(out / "wear_payback.csv", comment="#")
    # a wash restoring several % of efficiency on a multi-MW unit pays back within months
    assert (payback["wash_payback_months"] > 0).all()
    assert (payback["wash_payback_months"] < 24).all()
    wear = pd.read_csv(out / "wear_monthly.csv", comment="#")
    assert (wear["extra_shaft_kW"] > 0).all()


def test_calibrated_case_is_taken_by_the_optimiser(written):
    out, _ = written
    case = load_case(out / "case.yaml")
    data = yaml.safe_load((out / "case.yaml").read_text())
    assert "group" not in data["units"][0]  # A and B were calibrated apart
    assert set(data["units"][3]["calibration"]) >= {"head_factor", "efficiency_factor",
                                                    "period", "points"}
    result = optimize(case)
    assert result.total_shaft_power > 0


def test_existing_output_is_not_replaced_without_force(files, written):
    out, _ = written
    before = (out / "case.yaml").read_text()
    result = run(DEMO_STATION, files[0], "--columns", files[1], "--out", out)
    assert result.exit_code == 2
    assert "exists already" in result.output
    assert (out / "case.yaml").read_text() == before


@pytest.mark.parametrize(("option", "value", "message"), [
    ("--steady-hours", "three", "--steady-hours: cannot read the duration"),
    ("--wash-cost", "-5", "--wash-cost: -5 is not a positive cost"),
    ("--since", "someday", "--since: cannot read the date"),
])
def test_bad_options_give_one_line(files, tmp_path, option, value, message):
    result = run(DEMO_STATION, files[0], "--columns", files[1], "--out", tmp_path / "x",
                 option, value)
    assert result.exit_code == 2
    assert message in result.output
    assert "Traceback" not in result.output
    assert not (tmp_path / "x").exists()


@pytest.mark.parametrize(("options", "message"), [
    (["--wash-cost", "40000 kW"], "--wash-cost: '40000 kW' is not a cost in USD, the case's "
     "currency (economics.currency); give e.g. 40000 or '40000 USD'"),
    (["--overhaul-cost", "lots"], "--overhaul-cost: cannot read 'lots' as a cost; give e.g."),
    (["--until", "2020-01-01"], "--until: no history row lies in the period: 2020-01-01 00:00 "
     "UTC is before the history's first row; give dates between 2023-01-01 00:00 UTC and"),
    (["--since", "2030-01-01"], "--since: no history row lies in the period: 2030-01-01 00:00 "
     "UTC is after the history's last row; give dates between"),
    (["--since", "2023-01-05", "--until", "2023-01-03"], "--since/--until: no history row "
     "lies in the period: --since 2023-01-05 00:00 UTC is after --until 2023-01-03 00:00 "
     "UTC; swap them"),
])
def test_new_user_mistakes_give_one_line_naming_field_and_fix(files, tmp_path, options,
                                                               message):
    result = run(DEMO_STATION, files[0], "--columns", files[1], "--out", tmp_path / "x",
                 *options)
    assert result.exit_code == 2
    assert result.output.strip().startswith(f"error: {message}"), result.output
    assert len(result.output.strip().splitlines()) == 1, result.output
    assert not (tmp_path / "x").exists()


def test_unwritable_out_is_refused_before_the_work(files, tmp_path):
    blocker = tmp_path / "a_file"
    blocker.write_text("mine\n")
    result = run(DEMO_STATION, files[0], "--columns", files[1], "--out", blocker / "sub")
    assert result.exit_code == 2
    assert result.output.strip() == (f"error: --out: {blocker} is a file, not a folder; "
                                     "give a folder path")
    assert blocker.read_text() == "mine\n"
    # /proc takes no new folders, even for root (Linux)
    result = run(DEMO_STATION, files[0], "--columns", files[1], "--out", "/proc/trainopt")
    assert result.exit_code == 2
    assert result.output.strip() == ("error: --out: cannot write in /proc; choose a folder "
                                     "you may write to")


def test_columns_file_naming_a_missing_column_is_named(files, tmp_path):
    mapping = yaml.safe_load(files[1].read_text())
    mapping["units"]["C"]["discharge_temperature"]["column"] = "C_T2"
    columns = tmp_path / "columns.yaml"
    columns.write_text(yaml.safe_dump(mapping))
    result = run(DEMO_STATION, files[0], "--columns", columns, "--out", tmp_path / "x")
    assert result.exit_code == 2
    line = result.output.strip()
    assert len(line.splitlines()) == 1
    assert line.startswith(f"error: {columns}: units.C.discharge_temperature.column: no "
                           "column 'C_T2' in history.csv;")
    assert not (tmp_path / "x").exists()
