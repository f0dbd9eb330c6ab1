"""Series trains: textbook minimum work, brute force, fixed speed ratios, shared driver.

References: the textbook minimum-work result for two-stage compression with perfect
intercooling (Cengel, Y. A., Boles, M. A., Thermodynamics: An Engineering Approach,
McGraw-Hill, chapter 7, "multistage compression with intercooling"; section number from
memory), CoolProp states through :func:`trainopt.physics.compression.compress` and
``compress_to_head`` (independent of the gas table), and brute force (dense grids of
speed, interstage pressure and split). The demo cases are invented data, used only as test
beds for these methods, never as reference numbers.
"""

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
import yaml
from numpy.testing import assert_allclose
from typer.testing import CliRunner

import trainopt
from trainopt import InputError
from trainopt.cli.app import app
from trainopt.dispatch.series_reduction import train_conditions
from trainopt.machines.drivers import driver_from_dict
from trainopt.machines.maps import load_map, map_from_coefficients
from trainopt.machines.section_operation import boundary_lines, head_polynomial, required_head
from trainopt.machines.train import Cooler, Section, SectionDrive, Train
from trainopt.machines.train_operation import (
    TrainConditions,
    gas_table_for,
    operate_separate_train,
    operate_shaft_train,
    operate_train,
)
from trainopt.physics.compression import HeadBasis, compress, compress_to_head
from trainopt.physics.gas import Gas
from trainopt.station.reduced import Station

ROOT = Path(__file__).parents[2]
DEMO = ROOT / "cases" / "demo"


@pytest.fixture(scope="module")
def trains_yaml():
    return yaml.safe_load((DEMO / "trains.yaml").read_text())


@pytest.fixture(scope="module")
def trains_case():
    return trainopt.load_case(DEMO / "trains.yaml")


@pytest.fixture(scope="module")
def trains_station(trains_case):
    return Station(trains_case)


# building blocks ---------------------------------------------------------------------

def test_boundary_splines_match_the_maps_root_search():
    cmap = load_map(DEMO / "maps" / "motor_unit.yaml")
    lines = boundary_lines(cmap)
    heads = np.linspace(46e3, 80e3, 9)  # inside the surge heads of the tested speeds
    # 1e-6: cubic splines through 97 points of a smooth line (regression value (own output) 4e-9).
    assert_allclose(lines.surge_flow(heads), cmap.surge_flow_at_head(heads), rtol=1e-6)
    heads = np.linspace(27e3, 52e3, 9)
    assert_allclose(lines.stonewall_flow(heads), cmap.stonewall_flow_at_head(heads), rtol=1e-6)
    assert np.isnan(lines.surge_flow(200e3))


def test_required_head_polynomial_matches_the_table(trains_station):
    table = train_conditions(trains_station).table
    coefficients = required_head(table, HeadBasis.POLYTROPIC, 31e5, 293.15, 47e5)
    eta = np.linspace(0.45, 1.0, 23)
    direct = table.compress(31e5, 293.15, 47e5, eta, HeadBasis.POLYTROPIC).head
    # 2e-7: degree-5 interpolation in 1/eta of a head that changes by 4 % over the range
    # (regression value (own output) 5e-8).
    assert_allclose(head_polynomial(coefficients, eta), direct, rtol=2e-7)


# textbook: minimum work with perfect intercooling --------------------------------------

def constant_efficiency_map(flow_scale: float, name: str):
    """A fan-law map (GasLib layout): H = 1.5e-6 n^2 - 2 (s Q)^2 kJ/kg, eta = 0.80.

    Invented for the test; with the efficiency constant, the power of a duty does not
    depend on the map, so the optimum is pure thermodynamics.
    """
    s2 = flow_scale**2
    return map_from_coefficients([0, 0, 1.5e-6, 0, 0, 0, -2 * s2, 0, 0],
                                 [0.80, 0, 0, 0, 0, 0, 0, 0, 0], [0, 0, 40 * s2],
                                 [0, 0, 4 * s2], 4000 / 60, 16000 / 60, name=name,
                                 basis=HeadBasis.POLYTROPIC)


@pytest.fixture(scope="module")
def nitrogen_pair():
    """Two separately driven sections, nitrogen 2 -> 18 bar, intercooled back to 300 K."""
    nitrogen = Gas.from_composition({"nitrogen": 1.0})
    motor = driver_from_dict({"kind": "variable_speed_motor", "rated_power": "20 MW",
                              "driver_speed_min": "4000 rpm", "driver_speed_max": "16000 rpm"},
                             "driver")
    drive = SectionDrive(motor, 4000 / 60, 16000 / 60)
    first = Section("first", constant_efficiency_map(1.0, "first"), cooler=Cooler(300.0, 0.0),
                    drive=drive)
    second = Section("second", constant_efficiency_map(3.0, "second"), drive=drive)
    train = Train("pair", (first, second), None, 4000 / 60, 16000 / 60)
    table = gas_table_for(nitrogen, (2e5, 18e5), (300.0,))
    c = TrainConditions(table, 2e5, 300.0, 18e5, 288.15, "shaft_power", lambda d: (0.0, 0.0))
    return nitrogen, train, c


def test_textbook_minimum_work_interstage_pressure(nitrogen_pair):
    nitrogen, train, c = nitrogen_pair
    points = operate_separate_train(c, train, np.array([6.0, 8.0]))
    assert points.feasible.all()
    interstage = points.sections[0].discharge_pressure
    # Textbook (Cengel & Boles, ch. 7): for an ideal gas the best interstage pressure is
    # sqrt(p1 p2) = 6 bar; nitrogen at 2-18 bar departs from ideal by a few tenths of a
    # per cent, hence 0.5 %.
    assert_allclose(interstage, np.sqrt(2e5 * 18e5), rtol=5e-3)
    # Equal pressure ratios, equal works (same ideal-gas argument), to the same 0.5 %.
    ratio_1 = interstage / 2e5
    ratio_2 = 18e5 / interstage
    assert_allclose(ratio_1, ratio_2, rtol=1e-2)
    assert_allclose(points.sections[0].specific_work, points.sections[1].specific_work,
                    rtol=5e-3)


def test_textbook_optimum_agrees_with_coolprop_brute_force(nitrogen_pair):
    nitrogen, train, c = nitrogen_pair
    # Brute force on CoolProp states, independent of the table: work of both sections on a
    # grid of interstage pressures, and the vertex of the parabola through the grid.
    grid = 6e5 * np.exp(np.linspace(-0.04, 0.04, 9))
    work = [compress(nitrogen, 2e5, 300.0, p, 0.8).specific_work
            + compress(nitrogen, p, 300.0, 18e5, 0.8).specific_work for p in grid]
    a, b, _ = np.polyfit(np.log(grid / 6e5), work, 2)
    best = 6e5 * np.exp(-b / (2 * a))
    found = operate_separate_train(c, train, np.array([7.0])).sections[0].discharge_pressure
    # 1e-3: the table's head error (3e-6) and the golden-section bracket (1e-4 in ln p)
    # shift a flat optimum by far less; the parabola's own error is below 1e-4.
    assert_allclose(found, best, rtol=1e-3)
    assert best / 6e5 - 1 > 1e-3  # the real-gas optimum is measurably off sqrt(p1 p2)


# one shaft ----------------------------------------------------------------------------

def test_one_shaft_sections_keep_their_speed_ratios(trains_case, trains_station):
    c = train_conditions(trains_station)
    for train in trains_case.trains:
        flows = np.linspace(*trains_station.curves[train.name].mass_flow[[0, -1]], 7)
        points = operate_shaft_train(c, train, flows)
        shaft = points.drives[0].speed
        for section, pts in zip(train.sections, points.sections, strict=True):
            # Exact by construction: every section turns at ratio x shaft speed.
            assert_allclose(pts.speed, section.speed_ratio * shaft, rtol=1e-14)


def test_driver_limit_applies_to_the_sum_of_section_powers(trains_case, trains_station):
    c = train_conditions(trains_station)
    train = trains_case.train("T1")
    curve = trains_station.curves["T1"]
    assert (curve.high_section, curve.high_limit) == ("driver", "power")
    points = operate_shaft_train(c, train, [curve.max_flow, curve.max_flow * 1.002])
    sections = sum(p.gas_power for p in points.sections) * (1 + train.mechanical_loss)
    assert_allclose(points.drives[0].shaft_power, sections, rtol=1e-12)
    # At the largest flow the sum of section powers meets the driver's available power;
    # the end is located to 1/30000 of the scanned flows, hence 2e-4.
    assert_allclose(points.drives[0].shaft_power[0], points.drives[0].available_power[0],
                    rtol=2e-4)
    assert points.feasible[0]
    assert not points.feasible[1]
    assert points.first_violation(1) == ("driver", "power")
    for pts in points.sections:  # no section is near its own limits there
        assert pts.volume_flow[1] < pts.stonewall_flow[1]


def test_shaft_speed_meets_delivery_on_coolprop_states(trains_case, trains_station):
    """Chain the sections on CoolProp states at the speed the table found."""
    case, c = trains_case, train_conditions(trains_station)
    train = case.train("T1")
    points = operate_shaft_train(c, train, [140.0])
    shaft = float(points.drives[0].speed[0])
    p, t = case.suction_pressure, case.suction_temperature
    for section in train.sections:
        rho = case.gas.state(p, t).density
        q, n = 140.0 / rho, shaft * section.speed_ratio
        cmap = section.compressor_map
        out = compress_to_head(case.gas, p, t, float(cmap.head(q, n)),
                               float(cmap.efficiency(q, n)))
        p, t = out.discharge.pressure, out.discharge.temperature
        if section.cooler is not None:
            p, t = p - section.cooler.pressure_drop, min(t, section.cooler.outlet_temperature)
    # 2e-5: the table's head error (3e-6) through two sections, each H ~ p v ln(ratio).
    assert_allclose(p, case.discharge_pressure, rtol=2e-5)


def test_shaft_speed_agrees_with_a_brute_force_speed_scan(trains_case, trains_station):
    from trainopt.machines.train_operation import _delivered, _shaft_run, shaft_speed_range

    c = train_conditions(trains_station)
    train = trains_case.train("T2")
    flows = np.array([125.0, 135.0, 145.0])
    found = operate_shaft_train(c, train, flows).drives[0].speed
    lo, hi, _, _ = shaft_speed_range(train)
    scan = np.linspace(lo, hi, 2001)
    delivered = _delivered(_shaft_run(c, train, flows[:, None], scan[None, :]))
    for i in range(flows.size):
        brute = np.interp(c.discharge_pressure, delivered[i], scan)
        # 1e-6: linear interpolation on a 0.8-rpm grid of a smooth curve.
        assert_allclose(found[i], brute, rtol=1e-6)


def test_cooler_never_heats_the_gas(trains_case, trains_station):
    c = train_conditions(trains_station)
    train = trains_case.train("T1")
    flows = np.linspace(*trains_station.curves["T1"].mass_flow[[0, -1]], 9)
    lp = train.sections[0]
    # A cooler set near the median discharge temperature of its section (found by a few
    # passes, as the setting moves the operating points): it cools some points and must
    # let the others pass at their own temperature.
    warm = train
    for _ in range(4):
        hot = operate_shaft_train(c, warm, flows).sections[0].discharge_temperature
        cooler = Cooler(float(np.median(hot)), lp.cooler.pressure_drop)
        warm = replace(train, sections=(replace(lp, cooler=cooler), train.sections[1]))
    first, second = operate_shaft_train(c, warm, flows).sections
    assert_allclose(second.suction_temperature,
                    np.minimum(cooler.outlet_temperature, first.discharge_temperature),
                    rtol=1e-12)
    assert (first.discharge_temperature < cooler.outlet_temperature).any()
    assert (first.discharge_temperature > cooler.outlet_temperature).any()
    assert_allclose(second.suction_pressure, first.discharge_pressure - cooler.pressure_drop,
                    rtol=1e-12)


# separately driven ----------------------------------------------------------------------

@pytest.fixture(scope="module")
def separate_case(tmp_path_factory, trains_yaml, write_demo_variant):
    data = dict(trains_yaml)
    motor = {"kind": "variable_speed_motor", "rated_power": "12 MW", "rated_efficiency": "96 %",
             "driver_speed_min": "4500 rpm", "driver_speed_max": "7000 rpm"}
    turbine = {"kind": "gas_turbine", "rated_power": "12 MW", "heat_rate": "10400 kJ/kWh",
               "driver_speed_min": "7000 rpm", "driver_speed_max": "11500 rpm",
               "optimum_speed": "9800 rpm", "temperature_lapse": "0.7 %/K",
               "site_elevation": "180 m"}
    data["units"] = [{"name": "S1", "sections": [
        {"name": "LP", "map": "maps/gas_turbine_unit.yaml", "driver": motor,
         "rated_speed": "6500 rpm", "cooler": {"outlet_temperature": "35 degC",
                                                "pressure_drop": "0.7 bar"}},
        {"name": "HP", "map": "maps/motor_unit.yaml", "driver": turbine,
         "rated_speed": "10000 rpm"}]}]
    data["demand"] = "120 kg/s"
    return trainopt.load_case(write_demo_variant(tmp_path_factory.mktemp("separate"), data))


@pytest.mark.parametrize("objective", ["shaft_power", "cost"])
def test_separate_drives_interstage_optimum_beats_a_brute_force_grid(separate_case, objective):
    station = Station(separate_case, objective=objective)
    train = separate_case.train("S1")
    c = train_conditions(station)
    curve = station.curves["S1"]
    assert curve.feasible
    flows = np.linspace(curve.min_flow, curve.max_flow, 5)[1:-1]
    found = operate_separate_train(c, train, flows)
    grid = np.exp(np.linspace(np.log(36e5), np.log(60e5), 481))
    for i, m in enumerate(flows):
        brute = operate_separate_train(c, train, np.full(grid.shape, m), grid)
        value = np.where(brute.feasible, brute.objective, np.inf)
        k = int(np.argmin(value))
        # The search may not be worse than the grid (step 0.1 % in p) by more than the
        # grid's own resolution on a flat optimum: 1e-5 relative.
        assert found.objective[i] <= value[k] * (1 + 1e-5)
        assert_allclose(found.sections[0].discharge_pressure[i], grid[k], rtol=5e-3)


def test_cost_objective_uses_each_drivers_price(separate_case):
    station = Station(separate_case, objective="cost")
    curve = station.curves["S1"]
    econ = separate_case.economics
    tp = operate_train(train_conditions(station), separate_case.train("S1"), curve.mass_flow)
    by_hand = (tp.drives[0].energy_input * econ.electricity_price
               + tp.drives[1].energy_input * econ.fuel_price)
    assert_allclose(station.curve_cost("S1"), by_hand, rtol=1e-12)


# station level --------------------------------------------------------------------------

def test_two_trains_split_agrees_with_brute_force(trains_case, trains_station):
    result = trainopt.optimize(trains_case, baselines=False)
    assert result.status == "optimal"
    demand = result.demand_kg_s
    c = train_conditions(trains_station)
    t1, t2 = (trains_case.train(n) for n in ("T1", "T2"))
    c1, c2 = trains_station.curves["T1"], trains_station.curves["T2"]
    # Every split of the demand on a 0.05 kg/s grid, each train on the true (table) model,
    # recycling up to its least flow.
    net = np.arange(0.0, demand + 1e-9, 0.05)

    def cost(train, curve, x):
        through = np.clip(x, curve.min_flow, None)
        points = operate_train(c, train, through)
        return np.where((x > curve.max_flow) | ~points.feasible, np.inf, points.shaft_power)

    total = cost(t1, c1, net) + cost(t2, c2, demand - net)
    brute = float(np.min(total))
    # The optimiser's bound: breakpoint error of both curves plus the MIP gap (1e-4), and
    # the brute force's own grid; 0.2 % is the design target and far above both.
    assert_allclose(result.total_shaft_power, brute, rtol=2e-3)
    assert result.total_shaft_power <= brute * (1 + 1e-4)


def test_evaluate_accepts_a_split_by_train_and_counts_trains_once(trains_case):
    result = trainopt.evaluate(trains_case, {"T1": "140 kg/s", "T2": "100 kg/s"})
    rows = result.units
    assert list(zip(rows["train"], rows["section"], strict=True)) == [
        ("T1", "LP"), ("T1", "HP"), ("T2", "LP"), ("T2", "HP")]
    t2 = rows[rows["name"] == "T2"]
    assert (t2["recycle_kg_s"] > 0).all()  # below its least flow: the whole train recycles
    d = result.to_dict()
    assert_allclose(d["total_recycle_kg_s"], t2["recycle_kg_s"].iloc[0], rtol=1e-12)
    once = rows.drop_duplicates("name")["train_shaft_power_kW"].sum()
    assert_allclose(d["total_shaft_power_kW"], once, rtol=1e-9)
    assert_allclose(d["total_driver_input_kW"],
                    rows.drop_duplicates("name")["train_driver_input_kW"].sum(), rtol=1e-9)
    for row in d["units"]:
        assert row["limiting_section"] in ("LP", "HP", "driver")
        assert row["suction_pressure_kPa"] < row["discharge_pressure_kPa"]
    lp = rows[(rows["name"] == "T1") & (rows["section"] == "LP")].iloc[0]
    assert lp["cooler_duty_kW"] > 0


def test_cli_optimize_prints_section_rows():
    out = CliRunner().invoke(app, ["optimize", str(DEMO / "trains.yaml")])
    assert out.exit_code == 0, out.output
    lines = out.output.splitlines()
    for train in ("T1", "T2"):
        assert any(line.split()[:2] == [train, "LP"] for line in lines)
        assert any(line.split()[:2] == [train, "HP"] for line in lines)
        assert any(line.startswith(f"Train {train}:") for line in lines)
    assert "Advisory only" in out.output


# bad input ----------------------------------------------------------------------------

def test_a_train_with_no_sections_is_refused(tmp_path, trains_yaml, write_demo_variant):
    data = dict(trains_yaml)
    data["units"] = [dict(trains_yaml["units"][0], sections=[])]
    with pytest.raises(InputError, match=r"units\[0\]\.sections: a train needs at least one"):
        trainopt.load_case(write_demo_variant(tmp_path, data))


def test_a_speed_ratio_of_zero_is_refused(tmp_path, trains_yaml, write_demo_variant):
    data = yaml.safe_load(yaml.safe_dump(trains_yaml))
    data["units"][0]["sections"][1]["speed_ratio"] = 0
    with pytest.raises(InputError, match=r"sections\[1\]\.speed_ratio: 0 is not a positive"):
        trainopt.load_case(write_demo_variant(tmp_path, data))


def test_a_cooler_that_would_heat_the_gas_is_refused(tmp_path, trains_yaml, write_demo_variant):
    data = yaml.safe_load(yaml.safe_dump(trains_yaml))
    data["units"] = data["units"][:1]
    data["units"][0]["sections"][0]["cooler"]["outlet_temperature"] = "150 degC"
    case = trainopt.load_case(write_demo_variant(tmp_path, data))
    with pytest.raises(InputError, match="cooler.outlet_temperature: 150.0 degC is above the gas "
                       "entering the cooler.*this case's conditions") as info:
        Station(case)
    assert "never heats" in str(info.value)


def test_mixed_shaft_and_own_drivers_are_refused(tmp_path, trains_yaml, write_demo_variant):
    data = yaml.safe_load(yaml.safe_dump(trains_yaml))
    data["units"] = data["units"][:1]
    data["units"][0]["sections"][1]["driver"] = dict(data["units"][0]["driver"],
                                                     driver_speed_min="7500 rpm",
                                                     driver_speed_max="11000 rpm")
    with pytest.raises(InputError,
                       match=r"units\[0\]\.driver: the unit has a driver and some sections"):
        trainopt.load_case(write_demo_variant(tmp_path, data))
