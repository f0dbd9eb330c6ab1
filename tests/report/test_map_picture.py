"""Map pictures and the fit report the command line writes."""

from pathlib import Path

import matplotlib
import pandas as pd

from trainopt.caution import CAUTION
from trainopt.machines.maps import load_map
from trainopt.report.map_picture import plot_map, write_fit_report

GASLIB = Path(__file__).parents[1] / "data" / "gaslib"
DEMO = Path(__file__).parents[2] / "cases" / "demo" / "maps"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def test_fit_report_of_a_demo_map(tmp_path):
    paths = write_fit_report(DEMO / "motor_unit.yaml", tmp_path / "out")
    assert set(paths) == {"report", "picture", "points", "lines"}
    assert paths["picture"].read_bytes()[:8] == PNG_SIGNATURE
    points = pd.read_csv(paths["points"], comment="#")
    assert len(points) == 40  # 5 speed lines of 8 invented points
    assert {"speed [rpm]", "flow [m3/s]", "head [kJ/kg]", "head_error"} <= set(points.columns)
    lines = pd.read_csv(paths["lines"], comment="#")
    assert lines["speed [rpm]"].tolist() == [8000, 8750, 9500, 10250, 11000]
    report = paths["report"].read_text()
    assert "three_term speed dependence" in report
    assert "Residuals" in report
    assert CAUTION in report
    for kind in ("points", "lines"):
        assert paths[kind].read_text().splitlines()[-1] == f"# {CAUTION}"


def test_report_of_a_published_coefficient_map(tmp_path):
    paths = write_fit_report(GASLIB / "gaslib135_coefficients.yaml", tmp_path)
    assert set(paths) == {"report", "picture"}
    assert "nothing fitted" in paths["report"].read_text()


def test_plot_does_not_touch_the_pyplot_backend():
    before = matplotlib.get_backend()
    figure = plot_map(load_map(DEMO / "worn_unit.yaml"), control_line_offset=0.15)
    axes = figure.axes[0]
    assert "kJ/kg" in axes.get_ylabel()
    assert "m³/s" in axes.get_xlabel()
    labels = [text.get_text() for text in figure.legends[0].get_texts()]
    assert "surge control line (15 % of surge flow)" in labels
    assert matplotlib.get_backend() == before
