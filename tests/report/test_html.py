"""The self-contained HTML report, the tables on disk, and the two commands.

The report is checked for what makes it self-contained (embedded PNGs that decode, no
scripts, no links to fetch), for the caution, for refusing to overwrite, and, where Debian's
``chromium`` is installed, by rendering it in a real headless browser and checking that the
screenshot is not blank.
"""

import base64
import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import typer
import yaml
from typer.testing import CliRunner

from trainopt.cli.studies import register
from trainopt.errors import InputError
from trainopt.report.html import write_html
from trainopt.report.tables import audit_tables, write_tables
from trainopt.station.result import CAUTION
from trainopt.studies.audit import Binning, audit_history
from trainopt.studies.envelope import envelope_study
from trainopt.studies.history_reader import read_history

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "cases" / "demo" / "station.yaml"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), file signature


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """Six hours at the demo's own conditions, two units running, some recycle."""
    folder = tmp_path_factory.mktemp("report")
    times = pd.date_range("2024-05-01", periods=6, freq="h", tz="UTC")
    table = pd.DataFrame({"when": times.strftime("%Y-%m-%d %H:%M:%S+00:00"),
                          "ps": 44.0, "ts": 22.0, "pd": 66.0,
                          "a": [120, 125, 130, 135, 110, 105.0], "ar": [0, 0, 0, 0, 0, 5.0],
                          "c": [200, 205, 210, 215, 190, 170.0], "cr": [0, 0, 0, 0, 10, 20.0]})
    for u in "BD":
        table[u.lower()], table[u.lower() + "r"] = 0.0, 0.0
    table.to_csv(folder / "history.csv", index=False)
    mapping = {"time": {"column": "when"},
               "station": {"suction_pressure": {"column": "ps", "unit": "bar"},
                           "suction_temperature": {"column": "ts", "unit": "degC"},
                           "discharge_pressure": {"column": "pd", "unit": "bar"}},
               "units": {u: {"flow": {"column": u.lower(), "unit": "kg/s"},
                             "recycle": {"column": u.lower() + "r", "unit": "kg/s"}}
                         for u in "ABCD"}}
    (folder / "columns.yaml").write_text(yaml.safe_dump(mapping), encoding="utf-8")
    return folder / "history.csv", folder / "columns.yaml"


@pytest.fixture(scope="module")
def audit(demo_case, files):
    history = read_history(*files, demo_case)
    return audit_history(demo_case, history, binning=Binning(min_rows=1), workers=1,
                         progress=False)


@pytest.fixture(scope="module")
def study(demo_case):
    return envelope_study(demo_case, offline=["B", "D"], points=4,
                          sweep="discharge_pressure=64 bar:68 bar:4 bar", workers=1,
                          progress=False)


@pytest.fixture(scope="module")
def report(tmp_path_factory, demo_case, study, audit):
    path = tmp_path_factory.mktemp("html") / "report.html"
    return write_html(path, case=demo_case, envelope=study, audit=audit)


def test_report_is_self_contained(report, demo_case):
    text = report.read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>")
    caution = CAUTION.replace("'", "&#x27;")
    assert caution in text[:3000]
    assert text.rstrip().endswith(caution + "</div>\n</body></html>")
    assert "<script" not in text
    assert "http://" not in text
    assert "https://" not in text
    images = re.findall(r'src="data:image/png;base64,([^"]+)"', text)
    # turndown, least power, envelope, power over time, recycle by month, one map per unit
    assert len(images) == 5 + len(demo_case.trains)
    for image in images:
        assert base64.b64decode(image).startswith(PNG_SIGNATURE)


def test_report_refuses_to_overwrite(report, demo_case, study):
    with pytest.raises(InputError, match="exists already.*overwrite=True"):
        write_html(report, case=demo_case, envelope=study)
    before = report.stat().st_size
    write_html(report, case=demo_case, envelope=study, overwrite=True)
    assert report.stat().st_size < before  # now the envelope alone


def test_tables_to_csv_and_excel(tmp_path, audit):
    tables = audit_tables(audit)
    written = write_tables(tables, tmp_path / "csv")
    monthly = pd.read_csv(written["monthly_by_unit"], comment="#")
    assert set(monthly["unit"]) == {"A", "B", "C", "D"}
    for path in written.values():  # every CSV ends with the shared caution
        assert path.read_text(encoding="utf-8").splitlines()[-1] == f"# {CAUTION}"
    hours = pd.read_csv(written["hours"], comment="#")
    assert "time_UTC" in hours
    assert len(hours) == 6
    # the audited energy in the tables is the audit's own total
    np.testing.assert_allclose(monthly["recycle_MWh"].sum(),
                               audit.totals()["recycle_energy_MWh"], rtol=1e-12)
    book = write_tables(tables, tmp_path / "xlsx", excel=True)
    sheets = pd.read_excel(book["workbook"], sheet_name=None)
    assert "monthly_by_unit" in sheets
    assert list(sheets)[0] == "caution"  # the workbook opens on the caution
    assert sheets["caution"]["caution"].tolist() == [CAUTION]
    assert "unit_hours" not in sheets
    assert book["unit_hours"].suffix == ".csv"
    with pytest.raises(InputError, match="exists already"):
        write_tables(tables, tmp_path / "csv")


def _chromium() -> str | None:
    for name in ("/usr/bin/chromium", "/usr/bin/chromium-browser"):
        if Path(name).is_file():
            return name
    return shutil.which("chromium")


def test_report_renders_in_headless_chromium(report, tmp_path):
    browser = _chromium()
    if browser is None and os.environ.get("CI") == "true":
        pytest.fail("CI must install Debian's chromium (.ci/run does) for the render check")
    if browser is None:
        pytest.skip("Debian's chromium is not installed (apt-get install -y chromium); "
                    "the headless render check needs it")
    shot = tmp_path / "shot.png"
    subprocess.run([browser, "--headless", "--no-sandbox", "--disable-gpu",
                    "--disable-background-networking", "--disable-component-update",
                    "--disable-sync", "--no-first-run", f"--user-data-dir={tmp_path / 'p'}",
                    "--window-size=1200,2400", f"--screenshot={shot}", report.as_uri()],
                   check=True, capture_output=True, timeout=120)
    from matplotlib.image import imread

    pixels = imread(shot)
    assert pixels.shape[0] >= 1000
    assert pixels.shape[1] >= 1000
    # a blank page is one colour; text, tables and figures give many
    assert len(np.unique(pixels.reshape(-1, pixels.shape[-1])[:, :3], axis=0)) > 50


@pytest.fixture(scope="module")
def app():
    cli = typer.Typer()

    @cli.callback()
    def _root() -> None:
        """Test app."""

    register(cli)
    return cli


def test_audit_command(app, files, tmp_path):
    result = CliRunner().invoke(app, ["audit", str(DEMO), str(files[0]), "--columns",
                                      str(files[1]), "--out", str(tmp_path), "--workers", "1",
                                      "--quiet"])
    assert result.exit_code == 0, result.output
    assert "Rows read 6, audited 6" in result.output
    assert (tmp_path / "audit.html").is_file()
    assert (tmp_path / "unit_hours.csv").is_file()
    again = CliRunner().invoke(app, ["audit", str(DEMO), str(files[0]), "--columns",
                                     str(files[1]), "--out", str(tmp_path), "--quiet"])
    assert again.exit_code == 2
    assert "exists already" in again.output
    assert "Traceback" not in again.output


def test_commands_report_bad_input_in_one_line(app, files, tmp_path):
    bad = tmp_path / "columns.yaml"
    mapping = yaml.safe_load(files[1].read_text(encoding="utf-8"))
    mapping["units"]["C"]["flow"]["column"] = "cc"
    bad.write_text(yaml.safe_dump(mapping), encoding="utf-8")
    result = CliRunner().invoke(app, ["audit", str(DEMO), str(files[0]), "--columns",
                                      str(bad), "--out", str(tmp_path / "o"), "--quiet"])
    assert result.exit_code == 2
    assert "units.C.flow.column: no column 'cc'" in result.output
    envelope = CliRunner().invoke(app, ["envelope", str(DEMO), "--sweep", "speed=1:2:3",
                                        "--out", str(tmp_path / "e")])
    assert envelope.exit_code == 2
    assert "--sweep: cannot read" in envelope.output


def test_envelope_command(app, tmp_path):
    # --offline takes a comma-separated list, as --service does
    result = CliRunner().invoke(app, ["envelope", str(DEMO), "--offline", "B,D",
                                      "--service", "A", "--points", "3", "--out",
                                      str(tmp_path), "--excel", "--quiet"])
    assert result.exit_code == 0, result.output
    assert "all available" in result.output
    assert CAUTION in result.output
    assert (tmp_path / "envelope.html").is_file()
    assert (tmp_path / "tables.xlsx").is_file()


def test_envelope_refuses_a_unit_both_offline_and_in_service(app, tmp_path):
    out = tmp_path / "e"
    result = CliRunner().invoke(app, ["envelope", str(DEMO), "--service", "A,C", "--offline",
                                      "A", "--out", str(out), "--quiet"])
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [
        "error: --service: 'A,C' includes A, which --offline takes out of service; drop it "
        "from --offline or from --service"]
    assert not out.exists()


def test_service_sets_refuse_a_unit_taken_offline(demo_case):
    from trainopt.studies.envelope import service_sets

    with pytest.raises(InputError, match="service set: A is also taken offline"):
        service_sets(demo_case, offline=["A"], named=[["A", "C"]])


def test_studies_refuse_an_out_that_is_a_file_before_any_work(app, files, tmp_path):
    taken = tmp_path / "taken"
    taken.write_text("keep me")
    for args in (["envelope", str(DEMO)],
                 ["audit", str(DEMO), str(files[0]), "--columns", str(files[1])]):
        result = CliRunner().invoke(app, [*args, "--out", str(taken / "sub"), "--quiet"])
        assert result.exit_code == 2
        assert result.stderr.splitlines() == [
            f"error: --out: {taken} is a file, not a folder; give a folder path"]
    assert taken.read_text() == "keep me"
