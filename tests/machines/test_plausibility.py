"""A map written in the wrong unit is warned about, naming the likely slip.

Typical ranges (common practice): flow coefficient phi = Q / (pi/4 D² u2) about 0.01-0.15,
impeller tip speed u2 = pi D N about 150-350 m/s. The demo maps (cases/demo/maps, INVENTED)
and the GasLib maps (published open data, tests/data/gaslib/README.md) are plausible and load
silently; copies with a wrong unit label warn.
"""

import warnings
from pathlib import Path

import pytest
from typer.testing import CliRunner

from trainopt.cli.app import app
from trainopt.machines.maps import (
    MapUnitWarning,
    flow_coefficient_and_tip_speed,
    load_map,
)

ROOT = Path(__file__).parents[2]
DEMO = ROOT / "cases" / "demo" / "maps"
GASLIB = ROOT / "tests" / "data" / "gaslib"


def relabelled(folder: Path, old: str, new: str, *, scale_speed: float = 1.0, meta_extra=""):
    """A copy of the demo motor map with its header cell ``old`` replaced by ``new``."""
    lines = (DEMO / "motor_unit.csv").read_text().splitlines()
    out = []
    for line in lines:
        if line.startswith("speed ["):
            line = line.replace(old, new)
        elif line and line[0].isdigit() and scale_speed != 1.0:
            speed, rest = line.split(",", 1)
            line = f"{float(speed) * scale_speed!r},{rest}"
        out.append(line)
    (folder / "m.csv").write_text("\n".join(out) + "\n")
    meta = (DEMO / "motor_unit.yaml").read_text().replace("table: motor_unit.csv", "table: m.csv")
    (folder / "m.yaml").write_text(meta + meta_extra)
    return folder / "m.yaml"


@pytest.mark.parametrize("path", [DEMO / "motor_unit.yaml", DEMO / "gas_turbine_unit.yaml",
                                  DEMO / "worn_unit.yaml", GASLIB / "gaslib135.yaml",
                                  GASLIB / "gaslib135_coefficients.yaml"])
def test_plausible_maps_load_silently(path):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        m = load_map(path)
    phi, _, _ = flow_coefficient_and_tip_speed(m)
    assert 0.01 <= phi <= 0.15  # inside the typical range (common practice)


def test_flows_in_m3_s_labelled_m3_h_warn(tmp_path):
    path = relabelled(tmp_path, "flow [m3/s]", "flow [m3/h]")
    with pytest.warns(MapUnitWarning, match="m3/s written under an m3/h label") as record:
        load_map(path)
    assert "\n" not in str(record[0].message)
    assert "flow coefficient" in str(record[0].message)


def test_speeds_in_rev_per_s_labelled_rpm_warn_with_a_stated_diameter(tmp_path):
    # 0.45 m at 11000 rpm: u2 = pi 0.45 11000 / 60 = 259 m/s, plausible; the same numbers
    # divided by 60 under an rpm label give 4.3 m/s
    path = relabelled(tmp_path, "speed [rpm]", "speed [rpm]", scale_speed=1 / 60,
                      meta_extra="impeller_diameter: 0.45 m\n")
    with pytest.warns(MapUnitWarning, match=r"tip speed 4\.3\d* m/s.*1/s \(rev/s\) written "
                      "under an rpm label"):
        load_map(path)
    good = relabelled(tmp_path, "speed [rpm]", "speed [rpm]",
                      meta_extra="impeller_diameter: 0.45 m\n")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        load_map(good)


def test_cli_shows_the_warning_as_one_line(tmp_path):
    path = relabelled(tmp_path, "flow [m3/s]", "flow [m3/h]")
    result = CliRunner().invoke(app, ["fit-map", str(path), "--out", str(tmp_path / "out")])
    assert result.exit_code == 0, result.stderr
    lines = [line for line in result.stderr.splitlines() if line.startswith("warning:")]
    assert len(lines) == 1, result.stderr
    assert "m3/s written under an m3/h label" in lines[0]
    assert "MapUnitWarning" not in result.stderr
