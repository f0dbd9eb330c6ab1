"""Station case files: SI conversion, defaults, published data, and every refusal in one line.

References: SI definitions (1 bar = 1e5 Pa, 1 MWh = 3.6e9 J, exact); ISO 2533 standard
atmosphere at sea level, 101.325 kPa (exact); API 617 maximum continuous speed = 105 % of
rated speed (common practice); IPCC 2006 Guidelines, Vol. 2, Table 2.2: natural gas
56,100 kg CO2/TJ; the 10 % surge control line offset and 1 % mechanical loss defaults (common
practice); GasLib published compressor fits (tests/data/gaslib/README.md, CC BY 3.0).

``docs/case.md`` carries the schema tables rendered by :func:`trainopt.case.schema.schema_markdown`;
a test keeps them identical. After a schema change, re-render with
``python tests/case/test_loading.py``.
"""

import json
import re
from pathlib import Path

import pytest
import yaml
from numpy.testing import assert_allclose

import trainopt
from trainopt.case.schema import schema_markdown
from trainopt.errors import InputError
from trainopt.machines.train import UnitStatus

ROOT = Path(__file__).parents[2]
SMALL = ROOT / "tests" / "data" / "station_small"
GASLIB = ROOT / "tests" / "data" / "gaslib"
DEMO = ROOT / "cases" / "demo" / "station.yaml"
CASE_DOC = ROOT / "docs" / "case.md"
SCHEMA_START, SCHEMA_END = "<!-- schema: start -->", "<!-- schema: end -->"


def rendered_schema_in_docs() -> str:
    text = CASE_DOC.read_text(encoding="utf-8")
    return text.split(SCHEMA_START, 1)[1].split(SCHEMA_END, 1)[0].strip("\n")


def render_case_docs() -> None:
    """Write the current schema tables into docs/case.md between the markers."""
    text = CASE_DOC.read_text(encoding="utf-8")
    head, rest = text.split(SCHEMA_START, 1)
    tail = rest.split(SCHEMA_END, 1)[1]
    CASE_DOC.write_text(f"{head}{SCHEMA_START}\n{schema_markdown()}\n{SCHEMA_END}{tail}",
                        encoding="utf-8")


# --- fixtures -----------------------------------------------------------------------------


@pytest.fixture(scope="module")
def pair_case():
    return trainopt.load_case(SMALL / "gaslib135_pair.yaml")


def pair_data() -> dict:
    """The GasLib pair case as a dictionary, its map paths made absolute."""
    data = yaml.safe_load((SMALL / "gaslib135_pair.yaml").read_text())
    for unit in data["units"]:
        unit["map"] = str((SMALL / unit["map"]).resolve())
    return data


def write(tmp_path: Path, data: dict, name: str = "case.yaml") -> Path:
    path = tmp_path / name
    path.write_text(yaml.safe_dump(data, sort_keys=False))
    return path


def refused(path: Path) -> str:
    """The one-line message of the InputError that loading raises."""
    with pytest.raises(InputError) as info:
        trainopt.load_case(path)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(f"{path}: ")
    return message.removeprefix(f"{path}: ")


# --- docs ------------------------------------------------------------------------------------


def test_docs_carry_the_current_schema():
    assert rendered_schema_in_docs() == schema_markdown().strip("\n"), (
        "docs/case.md is out of date: run python tests/case/test_loading.py")


def test_every_schema_key_is_in_the_docs():
    from trainopt.case import schema as module

    text = CASE_DOC.read_text(encoding="utf-8")
    schemas = [v for k, v in vars(module).items() if k.endswith("Schema") and k != "_Schema"
               and isinstance(v, type)]
    assert len(schemas) >= 8
    for schema in schemas:
        for key in schema.model_fields:
            assert f"`{key}`" in text, (schema.__name__, key)


# --- SI inside, from the units written in the file -------------------------------------------


def test_demo_case_in_si(demo_case):
    c = demo_case
    assert c.suction_pressure == 44e5  # 44 bar, 1 bar = 1e5 Pa exactly (SI)
    assert c.discharge_pressure == 66e5
    assert_allclose(c.suction_temperature, 295.15, rtol=1e-15)  # 22 degC
    assert_allclose(c.ambient_temperature, 297.15, rtol=1e-15)
    assert [t.name for t in c.trains] == ["A", "B", "C", "D"]
    assert c.objective == "shaft_power"


def test_sea_level_site_has_the_standard_atmosphere(pair_case):
    assert pair_case.atmospheric_pressure == 101_325.0  # ISO 2533 at 0 m, exact


def test_defaults_are_common_practice(pair_case):
    for train in pair_case.trains:
        section = train.sections[0]
        assert section.surge_control_offset == 0.10  # 10 % of surge flow (common practice)
        assert train.mechanical_loss == 0.01  # 1 % of gas power (common practice)
        assert train.status is UnitStatus.AVAILABLE
        assert section.max_discharge_temperature is None
        # speed range: the published map's and the published turbine's, 3419-11999 rpm
        assert_allclose([train.speed_min * 60, train.speed_max * 60], [3419.0, 11999.0],
                        rtol=1e-12)
    assert pair_case.objective == "shaft_power"
    # IPCC 2006 Vol. 2 Table 2.2: natural gas 56,100 kg CO2/TJ = 5.61e-8 kg/J
    assert_allclose(pair_case.economics.co2_fuel, 56_100 / 1e12, rtol=1e-14)


def test_rated_speed_caps_speed_at_105_percent(demo_case):
    # Units A, B, D: rated 10000 rpm, driver and map allow more; API 617 maximum continuous
    # speed is 105 % of rated (common practice): 10500 rpm.
    for name in ("A", "B", "D"):
        assert_allclose(demo_case.train(name).speed_max * 60, 10_500.0, rtol=1e-12)
    # C: rated 6500 rpm -> 6825 rpm, below the driver's 6900 rpm
    assert_allclose(demo_case.train("C").speed_max * 60, 6_825.0, rtol=1e-12)


def test_prices_and_factors_per_joule(demo_case):
    e = demo_case.economics
    assert_allclose(e.fuel_price, 3.8e-9, rtol=1e-14)  # 3.8 per GJ
    assert_allclose(e.electricity_price, 72 / 3.6e9, rtol=1e-14)  # 1 MWh = 3.6e9 J (SI)
    assert_allclose(e.co2_electricity, 0.35 / 3.6e6, rtol=1e-14)  # 1 kWh = 3.6e6 J
    assert e.currency == "USD"


def test_demand_as_mass_flow(pair_case):
    assert pair_case.demand_mass_flow() == 150.0  # '150 kg/s' in the file


def test_gaslib11_test_map_holds_the_published_coefficients():
    # tests/data/station_small/gaslib11_coefficients.yaml copies the "gaslib11" entry of the
    # published file; every number must be the same.
    published = json.loads((GASLIB / "gaslib_published_maps.json").read_text())["gaslib11"]
    ours = yaml.safe_load((SMALL / "gaslib11_coefficients.yaml").read_text())["coefficients"]
    for key, theirs in (("head", "head"), ("efficiency", "eff"), ("surge", "surge"),
                        ("stonewall", "choke")):
        assert ours[key] == published[theirs], key
    assert ours["speed_min"] == f"{published['speed_min_rpm']:g} rpm"
    assert ours["speed_max"] == f"{published['speed_max_rpm']:g} rpm"


def test_test_turbine_holds_the_published_coefficients(pair_case):
    # GasLib-135 gas turbine power function, file GasLib-135.cs (as in
    # tests/machines/test_drivers.py)
    published = [-1164.594258777371, 2.555634634291757, -0.000104977631291941,
                 7.005733212792697, -0.01537367568342418, 6.315034378705861e-07,
                 -0.02328473640875715, 5.109700513125207e-05, -2.098908229218584e-09]
    for train in pair_case.trains:
        assert list(train.driver.power_coefficients) == published


def test_gauge_pressure_with_a_stated_site(tmp_path):
    data = pair_data()
    data["site"] = {"elevation": "0 m", "ambient_temperature": "15 degC"}
    data["suction"]["pressure"] = "48.98675 barg"
    case = trainopt.load_case(write(tmp_path, data))
    # gauge + 101.325 kPa (ISO 2533 at sea level): 4898.675 + 101.325 = 5000 kPa
    assert_allclose(case.suction_pressure, 50e5, rtol=1e-14)


def test_statuses(tmp_path):
    data = pair_data()
    data["units"][0]["status"] = "must_run"
    data["units"][1]["status"] = "offline"
    case = trainopt.load_case(write(tmp_path, data))
    assert [t.status for t in case.trains] == [UnitStatus.MUST_RUN, UnitStatus.OFFLINE]


# --- refusals, each one line naming the key and the fix ------------------------------------------


def test_unknown_top_level_key_quotes_the_schema(tmp_path):
    data = pair_data()
    data["flow"] = "150 kg/s"
    message = refused(write(tmp_path, data))
    assert message.startswith("flow: is not a key of the case schema (docs/case.md)")
    assert "the keys allowed here are name, site, gas, suction, discharge, demand" in message


def test_unknown_nested_key_quotes_the_schema(tmp_path):
    data = pair_data()
    data["units"][1]["surge_margin"] = "12 %"
    message = refused(write(tmp_path, data))
    assert message.startswith("units[1].surge_margin: is not a key of the case schema")
    assert "surge_control_offset" in message  # the key that was meant is offered


def test_missing_key_quotes_its_description(tmp_path):
    data = pair_data()
    del data["suction"]
    message = refused(write(tmp_path, data))
    assert message == "suction: is missing; schema: Suction header."


def test_bare_number_without_unit(tmp_path):
    data = pair_data()
    data["discharge"]["pressure"] = 68
    message = refused(write(tmp_path, data))
    assert message.startswith("discharge.pressure: the bare number 68 has no unit; write it "
                              "with one, e.g. '45 bar'")


def test_demand_without_unit(tmp_path):
    data = pair_data()
    data["demand"] = "150"
    assert refused(write(tmp_path, data)).startswith("demand: '150' has no unit")


def test_gauge_pressure_without_elevation(tmp_path):
    data = pair_data()
    data["site"] = {"ambient_temperature": "15 degC"}  # no elevation, no atmospheric pressure
    data["suction"]["pressure"] = "49 barg"
    assert refused(write(tmp_path, data)) == (
        "suction.pressure: '49 barg' is a gauge pressure but no atmospheric pressure is known; "
        "give site.elevation or site.atmospheric_pressure, or use an absolute unit")


def test_missing_map_file(tmp_path):
    data = pair_data()
    data["units"][1]["map"] = "maps/nowhere.yaml"
    message = refused(write(tmp_path, data))
    assert message == (f"units[1].map: map file {tmp_path / 'maps/nowhere.yaml'} not found; "
                       "check the path")


def test_negative_demand(tmp_path):
    data = pair_data()
    data["demand"] = "-3 kg/s"
    assert refused(write(tmp_path, data)).startswith("demand: -3 kg/s is negative")


def test_duplicate_unit_names(tmp_path):
    data = pair_data()
    data["units"][1]["name"] = "P1"
    assert refused(write(tmp_path, data)) == "units: the name 'P1' is used twice; make names unique"


def test_discharge_not_above_suction(tmp_path):
    data = pair_data()
    data["discharge"]["pressure"] = "45 bar"
    assert refused(write(tmp_path, data)) == (
        "discharge.pressure: 4500 kPa is not above suction 5000 kPa; check the header pressures")


def test_map_and_sections_both_or_neither(tmp_path):
    data = pair_data()
    del data["units"][0]["map"]
    message = refused(write(tmp_path, data))
    assert message.startswith("units[0]: give either 'map' (one section) or 'sections'")


def test_unknown_status(tmp_path):
    data = pair_data()
    data["units"][0]["status"] = "standby"
    message = refused(write(tmp_path, data))
    assert message.startswith("units[0].status: ")
    assert "'available', 'offline' or 'must_run'" in message


def test_unreadable_price(tmp_path):
    data = pair_data()
    data["economics"] = {"fuel_price": "cheap"}
    assert refused(write(tmp_path, data)).startswith(
        "economics.fuel_price: cannot read the price 'cheap'; write a number per energy")


def test_every_refusal_names_a_key_of_the_schema():
    # the key paths used above exist in the schema tables of the docs
    text = rendered_schema_in_docs()
    for key in ("suction", "discharge", "demand", "units", "site", "economics", "status",
                "map", "pressure", "elevation", "fuel_price"):
        assert re.search(rf"\| `{key}` \|", text), key


if __name__ == "__main__":
    render_case_docs()


# --- a gas turbine takes the site's elevation unless it states its own -----------------------

ISA_1500_M_KPA = 84.556  # ISO 2533 standard atmosphere table, 1500 m: 845.56 hPa (from memory)


def test_gas_turbine_takes_the_sites_elevation(tmp_path, write_demo_variant):
    # Power of a gas turbine scales with ambient pressure (docs/drivers.md, common practice).
    demo = yaml.safe_load(DEMO.read_text())
    demo["site"] = {"elevation": "1500 m", "ambient_temperature": "24 degC"}
    turbine = next(u for u in demo["units"] if u["driver"]["kind"] == "gas_turbine")
    del turbine["driver"]["site_elevation"]
    (tmp_path / "site").mkdir()
    high = trainopt.load_case(write_demo_variant(tmp_path / "site", demo)).train("C").driver
    assert_allclose(high.site_elevation, 1500.0, atol=1e-3)
    turbine["driver"]["site_elevation"] = "0 m"  # the driver's own figure wins
    (tmp_path / "own").mkdir()
    sea = trainopt.load_case(write_demo_variant(tmp_path / "own", demo)).train("C").driver
    assert sea.site_elevation == 0.0
    speed, ambient = 6500 / 60, 288.15
    assert_allclose(high.available_shaft_power(speed, ambient)
                    / sea.available_shaft_power(speed, ambient),
                    ISA_1500_M_KPA / 101.325, rtol=1e-4)
    # a site given by its pressure: the elevation of that pressure in the same atmosphere
    del turbine["driver"]["site_elevation"]
    demo["site"] = {"atmospheric_pressure": f"{ISA_1500_M_KPA} kPa",
                    "ambient_temperature": "24 degC"}
    (tmp_path / "pressure").mkdir()
    by_pressure = trainopt.load_case(write_demo_variant(tmp_path / "pressure", demo))
    assert_allclose(by_pressure.train("C").driver.site_elevation, 1500.0, atol=1.0)
