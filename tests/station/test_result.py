"""The result table and its JSON: every number recomputed from outside references.

A unit of the GasLib pair (tests/data/station_small) at 75 kg/s is recomputed by hand from:

- the GasLib-135 published fit (Schmidt, M. et al. (2017), Data 2(4):40,
  doi:10.3390/data2040040, CC BY 3.0; see tests/data/gaslib/README.md): isentropic head and
  efficiency polynomials, surge and choke lines, speed range 3419-11999 rpm, and the
  GasLib-135 gas-turbine power polynomial (file GasLib-135.cs);
- CoolProp directly (HEOS, GERG-2008 parameters) for the AGA Report No. 8 (1994) Gulf Coast
  gas: densities, isentropic enthalpy rise, discharge temperature;
- Schultz's polytropic head, as in ASME PTC 10-1997 (Schultz, J. M. (1962), "The polytropic
  analysis of centrifugal compressors", J. Eng. Power 84(1):69-82);
- ISO 13443 standard reference conditions (15 degC, 101.325 kPa) for standard volumes;
- IPCC 2006 Guidelines Vol. 2 Table 2.2 (natural gas, 56,100 kg CO2/TJ) for the demo's fuel.

The margins are checked against their definitions in docs/results.md.
"""

import json
import math
import re
from pathlib import Path

import CoolProp.CoolProp as CP
import pytest
from numpy.testing import assert_allclose

import trainopt
from trainopt.machines.drivers import DEFAULT_MECHANICAL_EFFICIENCY
from trainopt.report.terminal import _COLUMNS, format_result
from trainopt.station.result import CAUTION

ROOT = Path(__file__).parents[2]
SMALL = ROOT / "tests" / "data" / "station_small"
DEMO = ROOT / "cases" / "demo" / "station.yaml"
RESULTS_DOC = ROOT / "docs" / "results.md"

# GasLib-135 published fit and turbine (tests/data/gaslib/gaslib_published_maps.json and
# GasLib-135.cs, as in tests/dispatch/test_reduction.py and tests/machines/test_drivers.py)
HEAD = [0.0, 0.006036379698308192, 0.0, 0.0, 0.0, 0.0, -5.073208950952076,
        0.000105700661533296, 0.0]
EFFICIENCY = [0.8947892693126072, -2.253341057317449e-05, 1.182214108900868e-09,
              0.03138877123712933, 3.778377088492774e-05, -2.560258490628826e-09,
              -0.1717399853222829, 1.266950676067393e-05, -1.727197034470033e-10]
SURGE = [-30.94688134523292, 272.156073693881]
CHOKE = [-10.46632784940412, 7.562249000768589]
TURBINE = [-1164.594258777371, 2.555634634291757, -0.000104977631291941,
           7.005733212792697, -0.01537367568342418, 6.315034378705861e-07,
           -0.02328473640875715, 5.109700513125207e-05, -2.098908229218584e-09]
SPEED_RANGE_RPM = (3419.0, 11999.0)
AGA8_GULF_COAST = {"Methane": 96.5222, "Nitrogen": 0.2595, "CarbonDioxide": 0.5956,
                   "Ethane": 1.8186, "Propane": 0.4596, "IsoButane": 0.0977, "n-Butane": 0.1007,
                   "Isopentane": 0.0473, "n-Pentane": 0.0324, "n-Hexane": 0.0664}
P1, T1, P2, AMBIENT_C = 50e5, 288.15, 68e5, 15.0  # the pair case's headers and site

# the keys the design requires, with the units their names carry
REQUIRED_KEYS = ["status", "reason", "total_shaft_power_kW", "total_recycle_kg_s",
                 "suction_pressure_kPa", "suction_temperature_C", "discharge_pressure_kPa",
                 "units"]
REQUIRED_UNIT_KEYS = ["name", "running", "net_mass_flow_kg_s", "recycle_kg_s", "speed_rpm",
                      "inlet_volume_flow_m3_h", "polytropic_head_kJ_kg", "polytropic_efficiency",
                      "shaft_power_kW", "discharge_temperature_C", "surge_margin_pct",
                      "control_line_margin_pct", "stonewall_margin_pct",
                      "driver_power_margin_pct"]


def poly(c, n, q):
    """GasLib layout, n [1/min], q [m³/s] (or t [degC] for the turbine)."""
    return (c[0] + c[1] * n + c[2] * n**2 + (c[3] + c[4] * n + c[5] * n**2) * q
            + (c[6] + c[7] * n + c[8] * n**2) * q**2)


@pytest.fixture(scope="module")
def gas():
    state = CP.AbstractState("HEOS", "&".join(AGA8_GULF_COAST))
    total = sum(AGA8_GULF_COAST.values())
    state.set_mole_fractions([v / total for v in AGA8_GULF_COAST.values()])
    state.specify_phase(CP.iphase_gas)  # far from the dew line; skips two-phase checks
    return state


@pytest.fixture(scope="module")
def pair_result():
    case = trainopt.load_case(SMALL / "gaslib135_pair.yaml")
    return trainopt.optimize(case, demand=150.0)


@pytest.fixture(scope="module")
def demo_result():
    return trainopt.optimize(trainopt.load_case(DEMO), demand=384.0)


@pytest.fixture(scope="module")
def by_hand(gas):
    """The P1 unit at 75 kg/s, from the published polynomials and CoolProp."""
    m = 75.0
    gas.update(CP.PT_INPUTS, P1, T1)
    h1, s1, rho1 = gas.hmass(), gas.smass(), gas.rhomass()
    gas.update(CP.PSmass_INPUTS, P2, s1)
    h2s, rho2s = gas.hmass(), gas.rhomass()
    q = m / rho1
    head_kj = (h2s - h1) / 1e3
    # the speed where the published head surface gives the head: c2 n + (c7 + c8 n) q^2 = H
    n = (head_kj - HEAD[6] * q**2) / (HEAD[1] + HEAD[7] * q**2)
    eta_s = poly(EFFICIENCY, n, q)
    work = (h2s - h1) / eta_s
    gas.update(CP.HmassP_INPUTS, h1 + work, P2)
    t2, rho2 = gas.T(), gas.rhomass()
    # Schultz (1962): volume exponents of the actual and isentropic paths, factor f
    n_v = math.log(P2 / P1) / math.log(rho2 / rho1)
    n_s = math.log(P2 / P1) / math.log(rho2s / rho1)
    f = (h2s - h1) / (n_s / (n_s - 1) * (P2 / rho2s - P1 / rho1))
    polytropic_head = f * n_v / (n_v - 1) * (P2 / rho2 - P1 / rho1)
    # speed line meets the published choke line H = c1 + c2 q: (c7 + c8 n) q^2 - c2 q
    # + (c2h n - c1) = 0, the positive root
    a, b, c = HEAD[6] + HEAD[7] * n, -CHOKE[1], HEAD[1] * n - CHOKE[0]
    q_choke = (-b - math.sqrt(b * b - 4 * a * c)) / (2 * a)
    q_surge = (head_kj - SURGE[0]) / SURGE[1]  # surge flow at the same head
    available = 1e3 * poly(TURBINE, n, AMBIENT_C) * DEFAULT_MECHANICAL_EFFICIENCY
    gas.update(CP.PT_INPUTS, 101_325.0, 288.15)  # ISO 13443 reference conditions
    rho_std = gas.rhomass()
    return {"m": m, "q": q, "n": n, "head_kj": head_kj, "eta_s": eta_s, "work": work,
            "t2": t2, "polytropic_head": polytropic_head, "q_choke": q_choke,
            "q_surge": q_surge, "available": available, "rho_std": rho_std}


def unit_entry(result, name):
    return next(u for u in result.to_dict()["units"] if u["name"] == name)


# --- the JSON ------------------------------------------------------------------------------


def test_json_has_every_required_key(pair_result, demo_result):
    for result in (pair_result, demo_result):
        data = result.to_dict()
        for key in REQUIRED_KEYS:
            assert key in data, key
        assert data["status"] == "optimal"
        assert data["reason"] == ""
        for unit in data["units"]:
            for key in REQUIRED_UNIT_KEYS:
                assert key in unit, key
        # strict JSON: no NaN or infinity anywhere (non-numbers are null)
        text = json.dumps(data, allow_nan=False)
        assert json.loads(text) == data
        assert data["caution"] == CAUTION


def test_header_values_in_their_units(pair_result):
    data = pair_result.to_dict()
    assert_allclose(data["suction_pressure_kPa"], 5000.0, rtol=1e-15)  # 50 bar
    assert_allclose(data["discharge_pressure_kPa"], 6800.0, rtol=1e-15)  # 68 bar
    assert_allclose(data["suction_temperature_C"], 15.0, atol=1e-12)
    assert_allclose(data["ambient_temperature_C"], 15.0, atol=1e-12)
    assert data["demand_kg_s"] == 150.0
    units = data["units"]
    assert_allclose(data["total_shaft_power_kW"], sum(u["shaft_power_kW"] for u in units),
                    rtol=1e-15)
    assert data["total_recycle_kg_s"] == 0.0
    assert data["objective"] == "shaft_power"


def test_unit_against_published_map_and_coolprop(pair_result, by_hand):
    u = unit_entry(pair_result, "P1")
    ref = by_hand
    assert u["running"] is True
    assert_allclose(u["net_mass_flow_kg_s"], 75.0, atol=1e-3)  # equal sharing, see test_station
    scale = u["through_mass_flow_kg_s"] / ref["m"]  # carry the 1e-5 split difference along
    # the same states through two code paths: round-off, 1e-9
    assert_allclose(u["inlet_volume_flow_m3_h"], ref["q"] * 3600 * scale, rtol=1e-9)
    assert_allclose(u["isentropic_head_kJ_kg"], ref["head_kj"], rtol=1e-9)
    # speed from the published head surface (the solver's 1e-9 plus the split difference)
    assert_allclose(u["speed_rpm"], ref["n"], rtol=1e-5)
    assert_allclose(u["isentropic_efficiency"], ref["eta_s"], rtol=1e-5)
    # shaft power: m (h2s - h1) / eta_s plus the 1 % mechanical loss (case default)
    assert_allclose(u["gas_power_kW"], ref["m"] * ref["work"] / 1e3, rtol=1e-4)
    assert_allclose(u["shaft_power_kW"], ref["m"] * ref["work"] * 1.01 / 1e3, rtol=1e-4)
    # discharge temperature and Schultz's polytropic head from CoolProp states
    assert_allclose(u["discharge_temperature_C"], ref["t2"] - 273.15, atol=1e-3)  # K
    assert_allclose(u["polytropic_head_kJ_kg"], ref["polytropic_head"] / 1e3, rtol=1e-5)
    assert_allclose(u["polytropic_efficiency"], ref["polytropic_head"] / ref["work"], rtol=1e-5)
    # both efficiencies describe the same work: H_p / eta_p = H_s / eta_s (identity)
    assert_allclose(u["polytropic_head_kJ_kg"] / u["polytropic_efficiency"],
                    u["isentropic_head_kJ_kg"] / u["isentropic_efficiency"], rtol=1e-9)
    assert_allclose(u["net_standard_flow_MMSCMD"],
                    u["net_mass_flow_kg_s"] / ref["rho_std"] * 86_400 / 1e6, rtol=1e-9)


def test_margins_are_their_definitions(pair_result, by_hand):
    u = unit_entry(pair_result, "P1")
    ref = by_hand
    q = u["inlet_volume_flow_m3_h"] / 3600
    n = u["speed_rpm"]
    # margins per docs/results.md, from the published surge and choke lines; the inputs
    # carry the 1e-5 of the point above
    assert_allclose(u["surge_margin_pct"], 100 * (q / ref["q_surge"] - 1), rtol=1e-5)
    assert_allclose(u["control_line_margin_pct"], 100 * (q / (1.10 * ref["q_surge"]) - 1),
                    rtol=1e-5)
    assert_allclose(u["stonewall_margin_pct"], 100 * (1 - q / ref["q_choke"]), rtol=1e-4)
    lo, hi = SPEED_RANGE_RPM
    assert_allclose(u["speed_min_margin_pct"], 100 * (n - lo) / lo, rtol=1e-12)
    assert_allclose(u["speed_max_margin_pct"], 100 * (hi - n) / hi, rtol=1e-12)
    assert_allclose(u["available_power_kW"], ref["available"] / 1e3, rtol=1e-5)
    assert_allclose(u["driver_power_margin_pct"],
                    100 * (u["available_power_kW"] - u["shaft_power_kW"])
                    / u["available_power_kW"], rtol=1e-12)
    assert u["discharge_temperature_margin_K"] is None  # no limit in the case
    assert u["least_flow_limit"] == "surge control line"
    assert u["largest_flow_limit"] == "maximum speed"


def test_co2_and_cost_of_the_demo(demo_result):
    data = demo_result.to_dict()
    c = unit_entry(demo_result, "C")  # gas turbine: fuel at 3.8 /GJ, 56.1 kg/GJ (IPCC 2006)
    a = unit_entry(demo_result, "A")  # motor: electricity at 72 /MWh, 0.35 kg/kWh
    # W x kg/J x 3600 s/h / 1000 kg/t; W x /J x 3600 s/h (1 GJ = 1e9 J, 1 kWh = 3.6e6 J)
    assert_allclose(c["co2_t_h"], c["driver_input_kW"] * 1e3 * 56.1e-9 * 3.6, rtol=1e-12)
    assert_allclose(c["cost_per_h"], c["driver_input_kW"] * 1e3 * 3.8e-9 * 3600, rtol=1e-12)
    assert_allclose(a["co2_t_h"], a["driver_input_kW"] * 1e3 * 0.35 / 3.6e6 * 3.6, rtol=1e-12)
    assert_allclose(a["cost_per_h"], a["driver_input_kW"] * 1e3 * 72 / 3.6e9 * 3600,
                    rtol=1e-12)
    running = [u for u in data["units"] if u["running"]]
    assert_allclose(data["total_co2_t_h"], sum(u["co2_t_h"] for u in running), rtol=1e-14)
    assert_allclose(data["total_driver_input_kW"], sum(u["driver_input_kW"] for u in running),
                    rtol=1e-14)
    # the discharge-temperature limit of 120 degC
    assert_allclose(c["discharge_temperature_margin_K"], 120.0 - c["discharge_temperature_C"],
                    rtol=1e-12)
    assert data["currency"] == "USD"


def test_stopped_units_are_listed(demo_result):
    data = demo_result.to_dict()
    assert [u["name"] for u in data["units"]] == ["A", "B", "C", "D"]
    stopped = [u for u in data["units"] if not u["running"]]
    assert {u["name"] for u in stopped} == {"B", "D"}
    for u in stopped:
        assert u["shaft_power_kW"] is None
        assert u["surge_margin_pct"] is None


def test_infeasible_result_json(pair_result):
    case = pair_result.case
    result = trainopt.optimize(case, demand=1e4, baselines=False)
    data = result.to_dict()
    for key in REQUIRED_KEYS:
        assert key in data
    assert data["status"] == "infeasible"
    assert "capacity" in data["reason"]
    assert [u["running"] for u in data["units"]] == [False, False]
    json.dumps(data, allow_nan=False)


def test_evaluated_split_is_not_called_optimal(pair_result):
    result = trainopt.evaluate(pair_result.case, {"P1": 100.0, "P2": 20.0})
    assert result.to_dict()["status"] == "evaluated"


def test_solver_block(pair_result):
    solver = pair_result.to_dict()["solver"]
    assert set(solver["breakpoint_error_W"]) == {"P1", "P2"}
    assert solver["convex"] == {"P1": False, "P2": False}  # see tests/dispatch/test_reduction.py
    assert solver["piecewise_objective"] >= pair_result.total_shaft_power * (1 - 1e-3)


# --- the text table ---------------------------------------------------------------------------


def test_table_shows_every_unit_and_the_caution(demo_result):
    text = format_result(demo_result)
    assert CAUTION in text
    for _, title, _ in _COLUMNS:
        assert title in text
    rows = {line.split()[0]: line for line in text.splitlines() if re.match(r"^\s*[ABCD]\s", line)}
    assert set(rows) == {"A", "B", "C", "D"}
    assert "stopped" in rows["B"]
    assert f"{unit_entry(demo_result, 'C')['shaft_power_kW']:.0f}" in rows["C"]
    assert "Against equal margin" in text


def test_infeasible_table_says_why(pair_result):
    result = trainopt.optimize(pair_result.case, demand=1e4, baselines=False)
    text = format_result(result)
    assert f"INFEASIBLE: {result.reason}" in text
    assert CAUTION in text


# --- docs/results.md documents every key -----------------------------------------------------


def documented() -> set[str]:
    return set(re.findall(r"`([A-Za-z_][A-Za-z0-9_]*)`", RESULTS_DOC.read_text("utf-8")))


def test_every_json_key_is_documented(pair_result, demo_result):
    keys = documented()
    for result in (pair_result, demo_result):
        data = result.to_dict()
        missing = {k for k in data if k not in keys}
        missing |= {k for u in data["units"] for k in u if k not in keys}
        missing |= {k for k in data["solver"] if k not in keys}
        for group in ("baselines", "baselines_all_units"):
            missing |= {k for b in data[group].values() for k in b if k not in keys}
            missing |= {k for k in data[group] if k not in keys}
        assert not missing, sorted(missing)


def test_every_table_column_is_documented():
    text = RESULTS_DOC.read_text("utf-8")
    for key, title, _ in _COLUMNS:
        assert f"`{key}`" in text, key
        assert f"`{title}`" in text, title


def test_units_in_key_names_match_the_docs():
    # each documented key ending in a unit suffix says that unit in its row
    text = RESULTS_DOC.read_text("utf-8")
    suffixes = {"_kW": "kW", "_kPa": "kPa", "_C": "°C", "_kg_s": "kg/s", "_pct": "%",
                "_rpm": "rpm", "_m3_h": "m³/h", "_kJ_kg": "kJ/kg", "_K": "K", "_t_h": "t/h"}
    rows = [line for line in text.splitlines() if line.startswith("| `")]
    assert len(rows) > 40
    for row in rows:
        key = row.split("`")[1]
        for suffix, unit in suffixes.items():
            if key.endswith(suffix):
                assert f"| {unit} |" in row, row
                break
