"""Words on screen: the demand in the user's unit, absolute pressures, a legend, solver details.

The figures are the program's own; here only their wording is checked: the demand shown in
the unit the user wrote beside kg/s, pressures marked absolute, each short column title
spelled out, and the solver's internals kept for ``--verbose``.
"""

import re
from pathlib import Path

import pytest
from typer.testing import CliRunner

import trainopt
from trainopt.cli.app import app
from trainopt.report.terminal import EXPLAIN, LEGEND, demand_words, format_result
from trainopt.station.result import StationResult

PAIR = Path(__file__).parents[1] / "data" / "station_small" / "gaslib135_pair.yaml"


@pytest.fixture(scope="module")
def pair_case():
    return trainopt.load_case(PAIR)


@pytest.fixture(scope="module")
def pair_result(pair_case):
    return trainopt.optimize(pair_case, demand="150 kg/s", baselines=False)


def test_demand_in_the_unit_the_user_wrote(pair_case):
    result = trainopt.optimize(pair_case, demand="11 MMSCMD", baselines=False)
    kg_s = f"{result.demand_kg_s:.2f} kg/s"
    assert demand_words(result, "11 MMSCMD") == f"11 MMSCMD ({kg_s})"
    text = format_result(result, demand_text="11 MMSCMD")
    assert f"demand 11 MMSCMD ({kg_s})" in text.splitlines()[1]


def test_demand_in_kg_s_is_not_repeated(pair_result):
    assert demand_words(pair_result, "150 kg/s") == "150.00 kg/s"


def test_the_case_files_demand_is_the_default():
    case = trainopt.load_case(Path(__file__).parents[2] / "cases" / "demo" / "station.yaml")
    assert case.extra["demand"] == "44 MMSCMD"  # as cases/demo/station.yaml writes it
    result = StationResult.infeasible(case, case.demand_mass_flow(), "(not solved)",
                                      "shaft_power")
    assert demand_words(result) == f"44 MMSCMD ({case.demand_mass_flow():.2f} kg/s)"


def test_pressures_are_labelled_absolute(pair_result):
    header = format_result(pair_result).splitlines()[1]
    assert re.search(r"Suction \d+ kPa absolute, .*discharge \d+ kPa absolute", header)


def test_a_legend_spells_out_the_short_titles(pair_result):
    text = format_result(pair_result)
    assert set(LEGEND) <= set(text.splitlines())
    for short in ("Hp", "eta_p", "T2", "SCL"):
        assert f"{short} " in LEGEND[0]
    explained = format_result(pair_result, explain=True)
    for title, words in EXPLAIN.items():
        if f" {title}" in text.splitlines()[3]:  # a title in this table's header row
            assert f"  {title}: {words}" in explained


def test_solver_details_only_when_verbose(pair_result):
    assert "Piecewise objective" not in format_result(pair_result)
    assert "Piecewise objective" in format_result(pair_result, verbose=True)


def test_cli_options_for_words():
    runner = CliRunner()
    plain = runner.invoke(app, ["optimize", str(PAIR), "--demand", "150 kg/s"])
    assert plain.exit_code == 0, plain.output
    assert "formulation" not in plain.stdout
    verbose = runner.invoke(app, ["optimize", str(PAIR), "--demand", "150 kg/s", "--verbose",
                                  "--explain"])
    assert verbose.exit_code == 0, verbose.output
    assert "formulation" in verbose.stdout
    assert f"  shaft kW: {EXPLAIN['shaft kW']}" in verbose.stdout
