"""Map input: our CSV + YAML format, units, published-coefficient maps, and refused input."""

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose

from trainopt.errors import InputError
from trainopt.machines.maps import CompressorMap, HeadBasis, MapTable, PointKind, read_map_source

GASLIB = Path(__file__).parents[1] / "data" / "gaslib"

HEADER = "speed [rpm],flow [m3/s],head [kJ/kg],efficiency [-],point"
# A small invented map: three speed lines of four points (not data of any machine).
GOOD_ROWS = [
    "9000,3.0,60.0,0.78,surge", "9000,3.6,58.0,0.82,", "9000,4.2,54.0,0.81,",
    "9000,4.8,47.0,0.74,stonewall",
    "10000,3.3,74.0,0.78,surge", "10000,4.0,71.5,0.82,", "10000,4.7,66.5,0.81,",
    "10000,5.3,58.0,0.74,stonewall",
    "11000,3.6,89.5,0.77,surge", "11000,4.4,86.5,0.81,", "11000,5.1,80.5,0.80,",
    "11000,5.8,70.0,0.73,stonewall",
]


def write_map(folder: Path, rows, header=HEADER, meta="basis: polytropic\ntable: a.csv\n"):
    """Write a.csv (two comment lines, header on line 3, rows from line 4) and a.yaml."""
    text = "# test map\n# invented\n" + header + "\n" + "\n".join(rows) + "\n"
    (folder / "a.csv").write_text(text)
    (folder / "a.yaml").write_text(meta)
    return folder / "a.yaml"


def refused(path) -> str:
    with pytest.raises(InputError) as info:
        read_map_source(path)
    message = str(info.value)
    assert "\n" not in message, "errors are one line"
    return message


def test_good_map_reads_in_si(tmp_path):
    table = read_map_source(write_map(tmp_path, GOOD_ROWS))
    assert isinstance(table, MapTable)
    assert table.basis is HeadBasis.POLYTROPIC
    assert len(table.speed_lines) == 3
    first = table.points.iloc[0]
    # 9000 rpm = 150 rev/s and 60 kJ/kg = 60000 J/kg by definition; exact to rounding
    assert_allclose([first.speed, first.flow, first["head"]], [150.0, 3.0, 60000.0], rtol=1e-15)
    assert first.kind is PointKind.SURGE
    assert first.line == 4


def test_units_in_the_header_are_converted(tmp_path):
    header = "speed [rev/s],flow [m3/h],head [ft*lbf/lb],efficiency [%],point"
    rows = [f"150,{q * 3600},{h / 2.98906692},{e * 100},{k}"
            for q, h, e, k in [(3.0, 60000, 0.78, "surge"), (3.6, 58000, 0.82, ""),
                               (4.2, 54000, 0.81, "")]]
    table = read_map_source(write_map(tmp_path, rows, header=header))
    # 1 ft*lbf/lb = 0.3048 m * 9.80665 m/s² = 2.98906692 J/kg exactly; 1 m3/h = 1/3600 m3/s
    assert_allclose(table.points.flow, [3.0, 3.6, 4.2], rtol=1e-14)
    assert_allclose(table.points["head"], [60000, 58000, 54000], rtol=1e-14)
    assert_allclose(table.points.efficiency, [0.78, 0.82, 0.81], rtol=1e-14)


def test_csv_path_finds_its_yaml(tmp_path):
    write_map(tmp_path, GOOD_ROWS)
    assert isinstance(read_map_source(tmp_path / "a.csv"), MapTable)


def test_gaslib135_in_our_format_equals_the_published_points():
    original = pd.read_csv(GASLIB / "gaslib135_compressor_map_points.csv")
    table = read_map_source(GASLIB / "gaslib135.yaml")
    ours = table.points
    # same rows in the same order; unit factors are exact (1/60, 1000), so rtol 1e-15
    assert_allclose(ours.speed * 60, original.speed_rpm, rtol=1e-15)
    assert_allclose(ours.flow, original.volume_flow_m3_s, rtol=1e-15)
    assert_allclose(ours["head"] / 1e3, original.adiabatic_head_kJ_kg, rtol=1e-15)
    assert_allclose(ours.efficiency, original.adiabatic_efficiency, rtol=1e-15)
    assert (ours.kind == PointKind.SURGE).sum() == 9
    stonewall = ours[ours.kind == PointKind.STONEWALL]
    assert len(stonewall) == 9
    assert (stonewall.efficiency == 0.59).all()
    assert table.basis is HeadBasis.ISENTROPIC


def test_coefficient_map_file_builds_a_map():
    compressor_map = read_map_source(GASLIB / "gaslib135_coefficients.yaml")
    assert isinstance(compressor_map, CompressorMap)
    # speed range from the JSON file: 3419 and 11999 rpm
    assert_allclose(compressor_map.speed_range, (3419 / 60, 11999 / 60), rtol=1e-15)


# refused input: each a one-line error naming file:line:column ----------------------------


def test_speed_line_with_one_point(tmp_path):
    rows = GOOD_ROWS[:4] + ["10000,3.3,74.0,0.78,surge"] + GOOD_ROWS[8:]
    message = refused(write_map(tmp_path, rows))
    assert f"{tmp_path / 'a.csv'}:8:speed" in message
    assert "has 1 point(s); at least 3 are needed" in message


def test_speed_line_with_two_points(tmp_path):
    rows = GOOD_ROWS[:4] + ["10000,3.3,74.0,0.78,surge", "10000,5.3,58.0,0.74,"] + GOOD_ROWS[8:]
    assert f"{tmp_path / 'a.csv'}:8:speed" in refused(write_map(tmp_path, rows))


def test_head_rising_with_flow_right_of_surge_is_read(tmp_path):
    # real speed lines may rise from the surge point to their peak: read, not refused
    rows = list(GOOD_ROWS)
    rows[1] = "9000,3.6,60.5,0.82,"  # above 60.0 at the surge point 3.0 m3/s
    table = read_map_source(write_map(tmp_path, rows))
    assert_allclose(table.points["head"].iloc[1], 60.5e3)


def test_crossing_speed_lines(tmp_path):
    rows = list(GOOD_ROWS)
    rows[6] = "10000,4.7,47.5,0.81,"  # the 9000 rpm line gives 48.2 kJ/kg at 4.7 m3/s
    rows[7] = "10000,5.3,40.0,0.74,stonewall"
    message = refused(write_map(tmp_path, rows))
    assert f"{tmp_path / 'a.csv'}:7:head" in message  # 4.8 m3/s, 9000 rpm, now above 10000 rpm
    assert "the speed lines at 9000 rpm and 10000 rpm cross" in message


@pytest.mark.parametrize("value", ["1.02", "0", "-0.5"])
def test_efficiency_outside_zero_one(tmp_path, value):
    rows = list(GOOD_ROWS)
    rows[1] = f"9000,3.6,58.0,{value},"
    message = refused(write_map(tmp_path, rows))
    assert f"{tmp_path / 'a.csv'}:5:efficiency" in message
    assert "not in (0, 1]" in message


def test_efficiency_in_percent_above_100(tmp_path):
    header = HEADER.replace("[-]", "[%]")
    rows = [r.replace(",0.", ",") for r in GOOD_ROWS]  # 0.78 -> 78 (%)
    rows[1] = "9000,3.6,58.0,101,"
    assert f"{tmp_path / 'a.csv'}:5:efficiency" in refused(write_map(tmp_path, rows, header=header))


def test_negative_flow(tmp_path):
    rows = list(GOOD_ROWS)
    rows[0] = "9000,-3.0,60.0,0.78,surge"
    message = refused(write_map(tmp_path, rows))
    assert f"{tmp_path / 'a.csv'}:4:flow" in message
    assert "not positive" in message


@pytest.mark.parametrize("column", ["speed", "flow", "head", "efficiency"])
def test_missing_unit_in_header(tmp_path, column):
    header = {"speed": "speed,flow [m3/s],head [kJ/kg],efficiency [-],point",
              "flow": "speed [rpm],flow,head [kJ/kg],efficiency [-],point",
              "head": "speed [rpm],flow [m3/s],head,efficiency [-],point",
              "efficiency": "speed [rpm],flow [m3/s],head [kJ/kg],efficiency,point"}[column]
    message = refused(write_map(tmp_path, GOOD_ROWS, header=header))
    assert f"{tmp_path / 'a.csv'}:3:{column}" in message
    assert "has no unit" in message


def test_wrong_kind_of_unit(tmp_path):
    header = HEADER.replace("[kJ/kg]", "[bar]")
    message = refused(write_map(tmp_path, GOOD_ROWS, header=header))
    assert f"{tmp_path / 'a.csv'}:3:head" in message


def test_unknown_column_and_bad_cell(tmp_path):
    header = HEADER + ",pressure [bar]"
    assert f"{tmp_path / 'a.csv'}:3:pressure [bar]" in refused(
        write_map(tmp_path, [r + ",1" for r in GOOD_ROWS], header=header))
    rows = list(GOOD_ROWS)
    rows[3] = "9000,4.8,4 7.0,0.74,stonewall"
    assert f"{tmp_path / 'a.csv'}:7:head" in refused(write_map(tmp_path, rows))
    rows = list(GOOD_ROWS)
    rows[3] = "9000,4.8,47.0,0.74,choke"
    assert f"{tmp_path / 'a.csv'}:7:point" in refused(write_map(tmp_path, rows))


def test_surge_point_must_be_the_lowest_flow(tmp_path):
    rows = list(GOOD_ROWS)
    rows[0], rows[1] = "9000,3.0,60.0,0.78,", "9000,3.6,58.0,0.82,surge"
    assert f"{tmp_path / 'a.csv'}:5:point" in refused(write_map(tmp_path, rows))
    rows[1] = "9000,3.6,58.0,0.82,"
    message = refused(write_map(tmp_path, rows))
    assert f"{tmp_path / 'a.csv'}:4:point" in message
    assert "no surge point" in message


def test_stonewall_on_some_lines_only(tmp_path):
    rows = list(GOOD_ROWS)
    rows[7] = "10000,5.3,58.0,0.74,"
    message = refused(write_map(tmp_path, rows))
    assert f"{tmp_path / 'a.csv'}:8:point" in message
    assert "no stonewall point" in message


def test_metadata_errors_name_yaml_line_and_column(tmp_path):
    message = refused(write_map(tmp_path, GOOD_ROWS, meta="table: a.csv\nbasis: adiabatic\n"))
    assert f"{tmp_path / 'a.yaml'}:2:1" in message
    assert "adiabatic" in message
    message = refused(write_map(tmp_path, GOOD_ROWS, meta="basis: polytropic\ntable: a.csv\n"
                                                          "speeds: 3\n"))
    assert f"{tmp_path / 'a.yaml'}:3:1" in message
    assert "unknown key" in message
    message = refused(write_map(tmp_path, GOOD_ROWS, meta="basis: [polytropic\ntable: a.csv\n"))
    assert f"{tmp_path / 'a.yaml'}:" in message
    assert "not valid YAML" in message
    message = refused(write_map(tmp_path, GOOD_ROWS, meta="basis: polytropic\ntable: a.csv\n"
                                                          "fit:\n  speed_dependance: fan_law\n"))
    assert f"{tmp_path / 'a.yaml'}:3:1" in message
    meta = ("basis: polytropic\ntable: a.csv\ntest_conditions:\n"
            "  suction_pressure: 45\n")
    assert f"{tmp_path / 'a.yaml'}:4:3" in refused(write_map(tmp_path, GOOD_ROWS, meta=meta))


def test_coefficient_map_with_minimum_speed_above_maximum(tmp_path):
    text = (GASLIB / "gaslib135_coefficients.yaml").read_text()
    text = text.replace("speed_min: 3419 rpm", "speed_min: 12500 rpm")
    (tmp_path / "c.yaml").write_text(text)
    message = refused(tmp_path / "c.yaml")
    line = 1 + text.splitlines().index("  speed_min: 12500 rpm")
    assert f"{tmp_path / 'c.yaml'}:{line}:3" in message
    assert "speed_min" in message


def test_test_conditions_are_kept(tmp_path):
    meta = ("basis: isentropic\ntable: a.csv\ntest_conditions:\n  gas: natural gas\n"
            "  suction_pressure: 45 bar\n  suction_temperature: 25 degC\n")
    table = read_map_source(write_map(tmp_path, GOOD_ROWS, meta=meta))
    conditions = table.test_conditions
    # 45 bar = 4.5e6 Pa and 25 degC = 298.15 K by definition
    assert_allclose([conditions.suction_pressure, conditions.suction_temperature],
                    [4.5e6, 298.15], rtol=1e-12)
    assert conditions.gas == "natural gas"
    assert np.isnan(read_map_source(GASLIB / "gaslib135.yaml").points.efficiency.iloc[0])
