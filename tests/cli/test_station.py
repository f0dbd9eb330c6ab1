"""The ``trainopt optimize`` and ``trainopt evaluate`` commands: thin, strict, and tidy on error.

Run in-process (typer's CliRunner) on the GasLib pair test case and the demo station. The
numbers themselves are checked in tests/station/test_split.py and tests/station/test_result.py;
here the
CLI must give the same answer as the Python API, write real files, and refuse bad input with
one line on stderr (exit status 2), no traceback, and no output folder.
"""

import json
from pathlib import Path

import pandas as pd
import pytest
import yaml
from numpy.testing import assert_allclose
from typer.testing import CliRunner

import trainopt
from trainopt.cli.app import app
from trainopt.station.result import CAUTION

ROOT = Path(__file__).parents[2]
SMALL = ROOT / "tests" / "data" / "station_small"
PAIR = SMALL / "gaslib135_pair.yaml"
DEMO = ROOT / "cases" / "demo" / "station.yaml"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), section 5.2


def strict_json(text: str) -> dict:
    """Parse JSON refusing NaN and Infinity, which are not JSON (RFC 8259)."""
    def refuse(name):
        raise ValueError(f"{name} in JSON")
    return json.loads(text, parse_constant=refuse)


def run(*args: str):
    result = CliRunner().invoke(app, [str(a) for a in args])
    if result.exception and not isinstance(result.exception, SystemExit):
        raise result.exception
    return result


def refused(*args: str, out: Path | None = None) -> str:
    """Run a command that must be refused; return its one stderr line without 'error: '."""
    extra = ("--out", str(out)) if out is not None else ()
    result = run(*args, *extra)
    assert result.exit_code == 2, result.output
    assert result.stdout == ""
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    assert "Traceback" not in result.stderr
    assert lines[0].startswith("error: ")
    if out is not None:
        assert not out.exists()  # nothing written, not even the folder
    return lines[0].removeprefix("error: ")


def pair_variant(tmp_path: Path, change) -> Path:
    data = yaml.safe_load(PAIR.read_text())
    for unit in data["units"]:
        unit["map"] = str((SMALL / unit["map"]).resolve())
    change(data)
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False))
    return path


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo") / "result"
    result = run("optimize", DEMO, "--demand", "384 kg/s", "--json", "--out", out)
    return result, out


# --- a real run -------------------------------------------------------------------------------


def test_optimize_json_is_the_python_answer(demo_run):
    result, _ = demo_run
    assert result.exit_code == 0, result.output
    data = strict_json(result.stdout)
    assert data["status"] == "optimal"
    api = trainopt.optimize(trainopt.load_case(DEMO), demand="384 kg/s").to_dict()
    # the CLI is one call of the API: the same split and power (HiGHS is deterministic)
    assert_allclose(data["total_shaft_power_kW"], api["total_shaft_power_kW"], rtol=1e-9)
    assert [u["running"] for u in data["units"]] == [u["running"] for u in api["units"]]
    assert data["caution"] == CAUTION


def test_out_folder_holds_real_files(demo_run):
    result, out = demo_run
    data = strict_json(result.stdout)
    assert strict_json((out / "result.json").read_text()) == data
    table = pd.read_csv(out / "units.csv", comment="#")
    assert (out / "units.csv").read_text().splitlines()[-1] == f"# {CAUTION}"
    assert list(table["name"]) == ["A", "B", "C", "D"]
    assert list(table.columns) == list(data["units"][0])
    assert_allclose(table["shaft_power_kW"].sum(), data["total_shaft_power_kW"], rtol=1e-12)
    running = [u["name"] for u in data["units"] if u["running"]]
    pictures = sorted(p.name for p in out.glob("*.png"))
    assert pictures == sorted(f"map_{n}.png" for n in running)
    for name in pictures:
        content = (out / name).read_bytes()
        assert content.startswith(PNG_SIGNATURE)
        assert len(content) > 10_000  # a drawn map, not an empty canvas


def test_table_output(tmp_path):
    result = run("optimize", PAIR)
    assert result.exit_code == 0
    text = result.stdout
    assert "Case: GasLib-135 pair (test case)" in text
    assert "Against equal flow" in text
    assert text.rstrip().endswith(CAUTION)


def test_evaluate_json_is_the_python_answer():
    result = run("evaluate", PAIR, "--split", "P1=100 kg/s", "--split", "P2=20kg/s",
                 "--demand", "120 kg/s", "--json")
    assert result.exit_code == 0, result.output
    data = strict_json(result.stdout)
    assert data["status"] == "evaluated"
    api = trainopt.evaluate(trainopt.load_case(PAIR), {"P1": 100.0, "P2": 20.0}).to_dict()
    assert_allclose(data["total_shaft_power_kW"], api["total_shaft_power_kW"], rtol=1e-12)
    assert_allclose(data["demand_kg_s"], 120.0, rtol=1e-15)


def test_evaluate_of_a_split_a_unit_cannot_carry(tmp_path):
    out = tmp_path / "out"
    result = run("evaluate", PAIR, "--split", "P1=150 kg/s", "--json", "--out", out)
    assert result.exit_code == 1  # an answer, infeasible: status 1, reason in the JSON
    data = strict_json(result.stdout)
    assert data["status"] == "infeasible"
    assert data["reason"].startswith("P1 cannot carry 150.00 kg/s")
    assert strict_json((out / "result.json").read_text()) == data  # written whole


# --- infeasible answers: status 1, the reason in words, a complete result --------------------


def test_demand_above_capacity(tmp_path):
    out = tmp_path / "out"
    result = run("optimize", PAIR, "--demand", "1000 kg/s", "--out", out)
    assert result.exit_code == 1
    assert "INFEASIBLE: demand of 1000 kg/s is above the station capacity of" in result.stdout
    data = strict_json((out / "result.json").read_text())
    assert data["status"] == "infeasible"
    assert sorted(p.name for p in out.iterdir()) == ["result.json", "units.csv"]


def test_all_units_offline(tmp_path):
    out = tmp_path / "out"
    result = run("optimize", PAIR, "--offline", "P1", "--offline", "P2", "--out", out)
    assert result.exit_code == 1
    assert "INFEASIBLE: no unit is available" in result.stdout
    assert strict_json((out / "result.json").read_text())["status"] == "infeasible"


# --- refused input: one line, status 2, nothing written ---------------------------------------


def test_unknown_unit_offline(tmp_path):
    assert refused("optimize", PAIR, "--offline", "Q", out=tmp_path / "o") == (
        "unit: no unit named 'Q'; use one of P1, P2")


def test_unknown_unit_in_split(tmp_path):
    assert refused("evaluate", PAIR, "--split", "Q=10 kg/s", out=tmp_path / "o") == (
        "split.Q: no unit named 'Q'; use one of P1, P2")


def test_negative_demand(tmp_path):
    assert refused("optimize", PAIR, "--demand", "-5 kg/s", out=tmp_path / "o") == (
        "demand: -5 kg/s is negative; give a throughput of zero or more")


def test_split_that_does_not_add_up_to_the_stated_demand(tmp_path):
    assert refused("evaluate", PAIR, "--split", "P1=100 kg/s", "--split", "P2=20 kg/s",
                   "--demand", "150 kg/s", out=tmp_path / "o") == (
        "split: the shares add up to 120.000 kg/s but the demand is 150.000 kg/s; make the "
        "shares add up to the demand, or state the demand they meet (--demand)")


def test_readme_evaluate_example_runs_as_written():
    # README: trainopt evaluate cases/demo/station.yaml --split A="150 kg/s" --split
    # C="230 kg/s". The demo's case demand is 44 MMSCMD (383.96 kg/s); without --demand the
    # split's own sum, 380 kg/s, is the demand. B and D are stopped, not offline.
    readme = (ROOT / "README.md").read_text("utf-8")
    assert 'trainopt evaluate CASE --split A="150 kg/s" --split C="230 kg/s" ' in readme
    result = run("evaluate", DEMO, "--split", "A=150 kg/s", "--split", "C=230 kg/s", "--json")
    assert result.exit_code == 0, result.output
    data = strict_json(result.stdout)
    assert data["status"] == "evaluated"
    assert_allclose(data["demand_kg_s"], 380.0, rtol=1e-15)
    stopped = {u["name"]: u["status"] for u in data["units"] if not u["running"]}
    assert stopped == {"B": "available", "D": "available"}


def test_demand_without_unit(tmp_path):
    assert refused("optimize", PAIR, "--demand", "300", out=tmp_path / "o").startswith(
        "demand: '300' has no unit; write it with one")


def test_split_without_unit_or_equals(tmp_path):
    assert refused("evaluate", PAIR, "--split", "P1=10", out=tmp_path / "o").startswith(
        "split.P1: '10' has no unit")
    assert refused("evaluate", PAIR, "--split", "P1", out=tmp_path / "o") == (
        "--split: cannot read 'P1'; write NAME=QTY, e.g. A='25 kg/s'")
    assert refused("evaluate", PAIR, "--split", "P1=1 kg/s", "--split", "P1=2 kg/s",
                   out=tmp_path / "o") == "--split: unit 'P1' is given twice"


def test_unknown_objective(tmp_path):
    assert refused("optimize", PAIR, "--objective", "fuel", out=tmp_path / "o").startswith(
        "objective: unknown objective 'fuel'; use one of shaft_power, energy_input, cost")


def test_missing_map_file(tmp_path):
    def change(data):
        data["units"][0]["map"] = "maps/absent.yaml"
    case = pair_variant(tmp_path, change)
    assert refused("optimize", case, out=tmp_path / "o") == (
        f"{case}: units[0].map: map file {tmp_path / 'maps/absent.yaml'} not found; "
        "check the path")


def test_bare_number_in_case(tmp_path):
    def change(data):
        data["suction"]["pressure"] = 50
    case = pair_variant(tmp_path, change)
    assert refused("optimize", case, out=tmp_path / "o").startswith(
        f"{case}: suction.pressure: the bare number 50 has no unit")


def test_unknown_key_in_case(tmp_path):
    def change(data):
        data["suction"]["temprature"] = "15 degC"
    case = pair_variant(tmp_path, change)
    assert refused("optimize", case, out=tmp_path / "o") == (
        f"{case}: suction.temprature: is not a key of the case schema (docs/case.md); "
        "schema: the keys allowed here are pressure, temperature")


def test_gauge_pressure_without_elevation(tmp_path):
    def change(data):
        del data["site"]["elevation"]
        data["discharge"]["pressure"] = "67 barg"
    case = pair_variant(tmp_path, change)
    assert refused("optimize", case, out=tmp_path / "o").startswith(
        f"{case}: discharge.pressure: '67 barg' is a gauge pressure but no atmospheric "
        "pressure is known")


def test_case_file_not_found(tmp_path):
    message = refused("optimize", tmp_path / "none.yaml", out=tmp_path / "o")
    assert str(tmp_path / "none.yaml") in message


def test_out_is_a_file(tmp_path):
    target = tmp_path / "taken"
    target.write_text("keep me")
    result = run("optimize", PAIR, "--out", target)
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [f"error: --out: {target} is a file, not a folder; "
                                          "give a folder path"]
    assert target.read_text() == "keep me"


# --- writing results: checked before the solve, complete or not at all -----------------------


def test_out_below_a_file_is_refused_before_the_solve(tmp_path):
    blocker = tmp_path / "taken"
    blocker.write_text("keep me")
    message = refused("optimize", PAIR, out=blocker / "result")
    assert message == f"--out: {blocker} is a file, not a folder; give a folder path"
    assert blocker.read_text() == "keep me"


def test_out_that_cannot_be_written_is_refused_before_the_solve():
    # /proc/self is a folder no one may create files in (Linux proc(5)), root included.
    message = refused("optimize", PAIR, out=Path("/proc/self/trainopt_result"))
    assert message == "--out: cannot write in /proc/self; choose a folder you may write to"


def test_existing_files_are_kept_unless_forced(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "result.json").write_text("yesterday's result")
    (out / "notes.txt").write_text("mine")
    result = run("optimize", PAIR, "--out", out)
    assert result.exit_code == 2
    assert result.stdout == ""  # refused before any solve
    message = result.stderr.strip()
    assert message == (f"error: --out: {out / 'result.json'} exists already; pass --force "
                       "to replace it or choose another folder")
    assert (out / "result.json").read_text() == "yesterday's result"
    forced = run("optimize", PAIR, "--json", "--out", out, "--force")
    assert forced.exit_code == 0, forced.output
    assert strict_json((out / "result.json").read_text()) == strict_json(forced.stdout)
    assert (out / "notes.txt").read_text() == "mine"  # files not written are not touched
    assert not [p for p in out.iterdir() if p.name.startswith(".")]  # no temporary folder


def test_unit_names_become_safe_file_names(tmp_path):
    def change(data):
        data["units"][0]["name"] = "P/1"
        data["units"][1]["name"] = "P_1"  # the same safe name as "P/1": must not replace it
    case = pair_variant(tmp_path, change)
    out = tmp_path / "out"
    result = run("optimize", case, "--demand", "200 kg/s", "--json", "--out", out)
    assert result.exit_code == 0, result.output
    running = [u["name"] for u in strict_json(result.stdout)["units"] if u["running"]]
    assert running == ["P/1", "P_1"]  # 200 kg/s needs both units of the pair
    assert sorted(p.name for p in out.glob("*.png")) == ["map_P_1-2.png", "map_P_1.png"]
    assert [p for p in out.rglob("*") if p.is_dir()] == []


def test_a_write_failure_keeps_the_answer_on_screen_and_leaves_no_files(tmp_path, monkeypatch):
    import trainopt.report.map_picture as pictures

    def disk_full(*args, **kwargs):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(pictures, "plot_map", disk_full)
    out = tmp_path / "out"
    result = run("optimize", PAIR, "--out", out)
    assert result.exit_code == 2
    assert "Station shaft power" in result.stdout  # the answer was printed first
    assert result.stderr.splitlines() == [
        f"error: --out: cannot write in {out}: No space left on device; check the folder "
        "and free space"]
    assert not out.exists()  # nothing half-written
    assert [p.name for p in tmp_path.iterdir()] == []  # no temporary folder left either


def test_fit_map_keeps_existing_files_unless_forced(tmp_path):
    demo_map = ROOT / "cases" / "demo" / "maps" / "motor_unit.yaml"
    first = run("fit-map", demo_map, "--out", tmp_path)
    assert first.exit_code == 0, first.output
    assert first.stdout.rstrip().endswith(CAUTION)
    report = tmp_path / "motor_unit_fit.txt"
    report.write_text("my notes")
    again = run("fit-map", demo_map, "--out", tmp_path)
    assert again.exit_code == 2
    assert again.stderr.startswith(f"error: --out: {tmp_path / 'motor_unit_fit.txt'} "
                                   "exists already")
    assert report.read_text() == "my notes"
    assert run("fit-map", demo_map, "--out", tmp_path, "--force").exit_code == 0
    assert CAUTION in report.read_text()


# --- options that contradict or list units ----------------------------------------------------


def test_offline_takes_a_comma_separated_list(tmp_path):
    result = run("optimize", PAIR, "--offline", "P1,P2")
    assert result.exit_code == 1
    assert "INFEASIBLE: no unit is available" in result.stdout
    assert refused("optimize", PAIR, "--offline", ",", out=tmp_path / "o") == (
        "--offline: ',' names no unit; write e.g. 'A,C'")
