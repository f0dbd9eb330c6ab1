"""The schedule's files and command: complete files moved into place, never overwritten, HTML
self-contained and rendered by a real headless browser (Debian's chromium).

References: the HTML is checked for self-containment (no external resources) and rendered by
chromium; the JSON is parsed back by the standard library. The demo data is invented.
"""

import html
import json
import os
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
import typer
from typer.testing import CliRunner

from trainopt.cli.schedule import register
from trainopt.station.result import CAUTION

DEMO = Path(__file__).resolve().parents[2] / "cases" / "demo"
CASE, WEEK = DEMO / "station.yaml", DEMO / "forecast" / "week.csv"


@pytest.fixture(scope="module")
def app():
    cli = typer.Typer()

    @cli.callback()
    def _root() -> None:
        """Test app."""

    register(cli)
    return cli


@pytest.fixture(scope="module")
def run(app, tmp_path_factory):
    out = tmp_path_factory.mktemp("schedule") / "out"
    result = CliRunner().invoke(app, ["schedule", str(CASE), str(WEEK), "--hours", "4",
                                      "--trip-reserve", "90 %", "--out", str(out), "--json"])
    return result, out


def test_schedule_command_writes_every_file_and_json(run):
    result, out = run
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["trip_reserve_share"] == pytest.approx(0.9, rel=1e-12)
    assert len(data["periods"]) == 4 * 4  # 4 periods x 4 units
    assert {r["way"] for r in data["comparison"]} >= {"schedule", "hour-by-hour optimum",
                                                       "keep initial commitment",
                                                       "schedule without trip reserve"}
    for name in ("schedule.csv", "starts.csv", "comparison.csv", "trip_check.csv",
                 "schedule.json", "schedule.png", "schedule.html"):
        assert (out / name).stat().st_size > 0, name
    assert not list(out.parent.glob(".schedule-*"))  # the temporary folder is gone


def test_schedule_command_never_overwrites(app, run):
    _, out = run
    before = {p.name: p.stat().st_mtime_ns for p in out.iterdir()}
    again = CliRunner().invoke(app, ["schedule", str(CASE), str(WEEK), "--hours", "4",
                                     "--out", str(out)])
    assert again.exit_code == 2
    assert "exists already" in again.output
    assert "Traceback" not in again.output
    assert before == {p.name: p.stat().st_mtime_ns for p in out.iterdir()}


def test_bad_trip_reserve_in_one_line(app, tmp_path):
    bad = CliRunner().invoke(app, ["schedule", str(CASE), str(WEEK), "--trip-reserve", "150 %"])
    assert bad.exit_code == 2
    assert "trip_reserve" in bad.output
    assert "Traceback" not in bad.output


def test_html_is_self_contained_with_the_caution(run):
    text = (run[1] / "schedule.html").read_text(encoding="utf-8")
    assert text.count(html.escape(CAUTION)) >= 2  # top and bottom (and in the summary)
    assert "anti-surge controller&#x27;s response are not modelled" in text
    assert "<script" not in text
    assert "http://" not in text
    assert "https://" not in text
    assert "data:image/png;base64," in text


def test_html_renders_in_headless_chromium(run, tmp_path):
    browser = next((p for p in ("/usr/bin/chromium", "/usr/bin/chromium-browser")
                    if Path(p).is_file()), shutil.which("chromium"))
    if browser is None and os.environ.get("CI") == "true":
        pytest.fail("CI must install Debian's chromium for the render check")
    if browser is None:
        pytest.skip("Debian's chromium is not installed (apt-get install -y chromium)")
    shot = tmp_path / "shot.png"
    subprocess.run([browser, "--headless", "--no-sandbox", "--disable-gpu",
                    "--disable-background-networking", "--disable-component-update",
                    "--disable-sync", "--no-first-run", f"--user-data-dir={tmp_path / 'p'}",
                    "--window-size=1200,2000", f"--screenshot={shot}",
                    (run[1] / "schedule.html").as_uri()],
                   check=True, capture_output=True, timeout=120)
    from matplotlib.image import imread

    pixels = imread(shot)
    assert pixels.shape[0] >= 1000
    # a blank page is one colour; text, tables and the picture give many
    assert len(np.unique(pixels.reshape(-1, pixels.shape[-1])[:, :3], axis=0)) > 50
