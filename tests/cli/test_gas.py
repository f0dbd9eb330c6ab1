"""Tests of ``trainopt gas``: table and JSON output, and one-line errors with exit status 2."""

import json
from pathlib import Path

import pytest
from numpy.testing import assert_allclose
from typer.testing import CliRunner

from trainopt.caution import CAUTION
from trainopt.cli.app import app
from trainopt.physics.compression import compress
from trainopt.physics.gas import CompositionWarning

DEMO_GAS = Path(__file__).resolve().parents[2] / "cases" / "demo" / "gas.yaml"
runner = CliRunner()


def write_gas(path, composition):
    lines = ["composition:"] + [f"  {name}: {x!r}" for name, x in composition.items()]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture
def gulf_coast_file(tmp_path, aga8_gulf_coast_composition):
    """AGA 8 Gulf Coast gas (see conftest) as a gas file."""
    return write_gas(tmp_path / "gulf_coast.yaml", aga8_gulf_coast_composition)


def run(*args):
    return runner.invoke(app, ["gas", *map(str, args)])


def assert_one_line_error(result, expected_start):
    assert result.exit_code == 2, result.output
    assert result.stdout == ""
    assert result.stderr.startswith("error: " + expected_start), result.stderr
    assert result.stderr.count("\n") == 1
    assert "Traceback" not in result.stderr


def test_json_matches_the_python_api(gulf_coast_file, aga8_gulf_coast_gas):
    result = run(gulf_coast_file, "-p", "45 bar", "-t", "25 degC", "--to", "75 bar", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    c = compress(aga8_gulf_coast_gas, 45e5, 298.15, 75e5, 0.80)
    # The CLI is one call of the Python API: the same floats, 1e-12 for the JSON round trip.
    assert_allclose(data["compressibility"], c.suction.compressibility, rtol=1e-12)
    assert_allclose(data["polytropic_head_kJ_kg"], c.polytropic_head / 1e3, rtol=1e-12)
    assert_allclose(data["discharge_temperature_C"], c.discharge.temperature - 273.15,
                    rtol=1e-12)
    assert_allclose(data["specific_power_kW_per_kg_s"], c.specific_work / 1e3, rtol=1e-12)
    assert data["pressure_kPa"] == 4500.0
    assert data["method"] == "schultz"
    assert data["equation_of_state"] == "GERG2008"


def test_gauge_pressure_uses_the_stated_atmosphere(gulf_coast_file):
    result = run(gulf_coast_file, "-p", "45 barg", "-t", "77 degF", "--atmospheric",
                 "89.875 kPa", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    # 45 barg + 89.875 kPa (ISO 2533 at 1000 m) = 4589.875 kPa; 77 degF = 25 degC (SP 811).
    # 1e-12: exact arithmetic on exact definitions.
    assert_allclose(data["pressure_kPa"], 4589.875, rtol=1e-12)
    assert_allclose(data["temperature_C"], 25.0, atol=1e-12)


def test_json_has_null_where_there_is_no_dew_point(gulf_coast_file):
    # 100 bar is above this gas's cricondenbar (67 bar): no dew point, written as null
    # (JSON has no NaN).
    result = run(gulf_coast_file, "-p", "100 bar", "-t", "25 degC", "--json")
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout)["dew_temperature_C"] is None


def test_json_carries_the_shared_caution(gulf_coast_file):
    data = json.loads(run(gulf_coast_file, "-p", "45 bar", "-t", "25 degC", "--json").stdout)
    assert data["caution"] == CAUTION


@pytest.mark.parametrize("command", ["gas", "optimize", "evaluate", "fit-map", "envelope",
                                     "audit"])
def test_every_command_help_carries_the_caution(command):
    result = runner.invoke(app, [command, "--help"], terminal_width=400)
    assert result.exit_code == 0, result.output
    # rich wraps the epilog to the terminal's width: compare word by word
    assert " ".join(CAUTION.split()) in " ".join(result.stdout.split())


def test_table_on_the_bundled_demo_gas():
    result = run(DEMO_GAS, "-p", "45 bar", "-t", "25 degC", "--to", "75 bar", "--eos", "pr")
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    assert lines[0] == f"Gas from {DEMO_GAS}"
    blank = lines.index("")
    rows = dict(line.split(None, 1) for line in lines[2:blank])
    assert lines[blank + 1:] == [CAUTION]  # the shared caution closes the table
    assert rows["equation_of_state"] == "PENG_ROBINSON"
    assert rows["pressure_ratio"] == "1.66667"  # 75 / 45, printed to 6 digits
    assert float(rows["polytropic_head_kJ_kg"]) > 0.0


def test_fractions_off_by_half_a_percent_warn_and_run(tmp_path):
    # A methane-ethane binary summing to 1.005 (its phase envelope takes 0.1 s, not 2 s).
    path = write_gas(tmp_path / "gas.yaml", {"methane": 0.905, "ethane": 0.1})
    with pytest.warns(CompositionWarning, match="sum to 1.0050; normalised to 1"):
        result = run(path, "-p", "45 bar", "-t", "25 degC", "--json")
    assert result.exit_code == 0, result.output
    # Normalised: 0.905/1.005 and 0.1/1.005 of CoolProp's molar masses (PropsSI "M").
    expected = (0.905 * 16.0428 + 0.1 * 30.06904) / 1.005
    # 1e-12: CoolProp's molar masses of methane and ethane, 16.0428 and 30.06904 g/mol.
    assert_allclose(json.loads(result.stdout)["molar_mass_g_mol"], expected, rtol=1e-12)


@pytest.mark.parametrize(
    ("args", "expected"),
    [
        (["-p", "-5 bar", "-t", "25 degC"], "--pressure: '-5 bar' is not above zero absolute"),
        (["-p", "0 bar", "-t", "25 degC"], "--pressure: '0 bar' is not above zero absolute"),
        (["-p", "45", "-t", "25 degC"], "--pressure: '45' has no unit; write it with one"),
        (["-p", "45 bar", "-t", "25"], "--temperature: '25' has no unit"),
        (["-p", "45 bar", "-t", "25 degC", "--to", "30 bar"],
         "discharge_pressure: 3000.0 kPa is not above the suction pressure 4500.0 kPa"),
        (["-p", "45 bar", "-t", "25 degC", "--to", "75 bar", "--efficiency", "1.2"],
         "efficiency: 1.2 is outside (0, 1]"),
        (["-p", "45 barg", "-t", "25 degC", "--atmospheric", "1013"],
         "--atmospheric: '1013' has no unit"),
        (["-p", "45 bar", "-t", "25 degC", "--eos", "vdw"],
         "--eos: unknown equation of state 'vdw'; use 'gerg' or 'pr'"),
    ],
)
def test_bad_options_give_one_line_and_status_2(gulf_coast_file, args, expected):
    assert_one_line_error(run(gulf_coast_file, *args), expected)


def test_state_below_the_dew_point_gives_the_dew_point(gulf_coast_file, aga8_gulf_coast_gas):
    dew = aga8_gulf_coast_gas.dew_temperature(44e5) - 273.15
    result = run(gulf_coast_file, "-p", "44 bar", "-t", "-40 degC")
    assert_one_line_error(
        result, "suction state: -40.0 degC at 4400 kPa is inside or within 3 K of the "
        f"two-phase region; the hydrocarbon dew point at this pressure is {dew:.1f} degC")


def test_fractions_summing_to_0_9_give_one_line(tmp_path, aga8_gulf_coast_composition):
    composition = dict(aga8_gulf_coast_composition)
    composition["methane"] -= 0.1
    path = write_gas(tmp_path / "short.yaml", composition)
    assert_one_line_error(run(path, "-p", "45 bar", "-t", "25 degC"),
                          f"{path}: composition: mole fractions sum to 0.9000")


def test_unknown_component_gives_one_line(tmp_path):
    path = write_gas(tmp_path / "odd.yaml", {"methane": 0.95, "ethylene": 0.05})
    assert_one_line_error(run(path, "-p", "45 bar", "-t", "25 degC"),
                          f"{path}: composition.ethylene: unknown component 'ethylene'")


def test_missing_and_malformed_files_give_one_line(tmp_path):
    assert_one_line_error(run(tmp_path / "none.yaml", "-p", "45 bar", "-t", "25 degC"),
                          f"{tmp_path / 'none.yaml'}: file not found")
    bad = tmp_path / "bad.yaml"
    bad.write_text("composition:\n  methane: [0.9\n", encoding="utf-8")
    assert_one_line_error(run(bad, "-p", "45 bar", "-t", "25 degC"), f"{bad}:3:1: not valid YAML")

