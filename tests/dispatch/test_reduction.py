"""Least-power curves of single units, checked against published maps and CoolProp.

Outside references:

- GasLib-135 turbo-compressor, its published fit (tests/data/gaslib/README.md; Schmidt, M.
  et al. (2017), Data 2(4):40, doi:10.3390/data2040040, CC BY 3.0; cite Pfetsch, M. et al.
  (2012), ZIB-Report 12-41): head ``H = c1 + c2 n + ... + (c7 + c8 n + c9 n²) Q²`` and
  isentropic efficiency of the same layout, surge line ``H = c1 + c2 Q`` (n [1/min], Q
  [m³/s], H [kJ/kg]);
- the AGA Report No. 8 (1994) Gulf Coast gas, its states from CoolProp directly (HEOS with
  GERG-2008 parameters), not through trainopt.physics.gas: on an isentropic map the required head is
  exactly h(p2, s1) - h1, whatever the efficiency;
- the 10 % surge control line offset and the 1 % mechanical loss of the case defaults
  (common practice).
"""

from dataclasses import replace
from pathlib import Path

import CoolProp.CoolProp as CP
import numpy as np
import pytest
from numpy.testing import assert_allclose

import trainopt
from trainopt.dispatch.reduction import DEFAULT_TOLERANCE, FINE_POINTS, operate, reduce_unit
from trainopt.station.reduced import Station

ROOT = Path(__file__).parents[2]
PAIR = ROOT / "tests" / "data" / "station_small" / "gaslib135_pair.yaml"
DEMO = ROOT / "cases" / "demo" / "station.yaml"

# GasLib-135 published fit, file gaslib_published_maps.json ("gaslib135") of tests/data/gaslib
GASLIB135_HEAD = [0.0, 0.006036379698308192, 0.0, 0.0, 0.0, 0.0, -5.073208950952076,
                  0.000105700661533296, 0.0]
GASLIB135_EFFICIENCY = [0.8947892693126072, -2.253341057317449e-05, 1.182214108900868e-09,
                        0.03138877123712933, 3.778377088492774e-05, -2.560258490628826e-09,
                        -0.1717399853222829, 1.266950676067393e-05, -1.727197034470033e-10]
GASLIB135_SURGE = [-30.94688134523292, 272.156073693881, 0.0]
GASLIB135_SPEED_MAX_RPM = 11999.0
# GasLib-135 published surge point at 11999 rpm (gaslib135_compressor_map_points.csv):
# the highest head of the map at its highest speed [kJ/kg]
GASLIB135_TOP_HEAD = 71.88729110000055

# AGA Report No. 8 (1994), Gulf Coast gas, mole per cent, as CoolProp names
AGA8_GULF_COAST = {"Methane": 96.5222, "Nitrogen": 0.2595, "CarbonDioxide": 0.5956,
                   "Ethane": 1.8186, "Propane": 0.4596, "IsoButane": 0.0977, "n-Butane": 0.1007,
                   "Isopentane": 0.0473, "n-Pentane": 0.0324, "n-Hexane": 0.0664}
SUCTION = (50e5, 288.15)  # the test case's suction header [Pa], [K]
DISCHARGE = 68e5  # [Pa]


def gaslib(c, n, q):
    """GasLib layout polynomial at speed n [1/min] and flow q [m³/s]."""
    return (c[0] + c[1] * n + c[2] * n**2 + (c[3] + c[4] * n + c[5] * n**2) * q
            + (c[6] + c[7] * n + c[8] * n**2) * q**2)


@pytest.fixture(scope="module")
def coolprop_gas():
    state = CP.AbstractState("HEOS", "&".join(AGA8_GULF_COAST))
    total = sum(AGA8_GULF_COAST.values())
    state.set_mole_fractions([v / total for v in AGA8_GULF_COAST.values()])
    # single-phase gas imposed, which skips CoolProp's slow two-phase flash checks; every
    # state here is well above the dew line (the case loader checks the suction state)
    state.specify_phase(CP.iphase_gas)
    return state


@pytest.fixture(scope="module")
def suction_state(coolprop_gas):
    coolprop_gas.update(CP.PT_INPUTS, *SUCTION)
    h1, s1, rho1 = coolprop_gas.hmass(), coolprop_gas.smass(), coolprop_gas.rhomass()
    coolprop_gas.update(CP.PSmass_INPUTS, DISCHARGE, s1)
    return {"h1": h1, "s1": s1, "rho1": rho1, "isentropic_head": coolprop_gas.hmass() - h1}


@pytest.fixture(scope="module")
def pair_case():
    return trainopt.load_case(PAIR)


@pytest.fixture(scope="module")
def pair_station(pair_case):
    return Station(pair_case)


def unit(station, name):
    train = station.case.train(name)
    return train, station.duty(train), station.curves[name]


# --- the true model at a point -------------------------------------------------------------


def test_operate_meets_the_published_gaslib135_map(pair_station, suction_state, coolprop_gas):
    train, duty, _ = unit(pair_station, "P1")
    mass_flow = np.array([20.0, 60.0, 100.0])
    op = operate(train, duty, mass_flow, pair_station.case.ambient_temperature)
    head = suction_state["isentropic_head"]
    # isentropic map: the required head is h(p2, s1) - h1 at any efficiency; the same
    # equation of state through two code paths, so round-off only
    assert_allclose(op.head, head, rtol=1e-10)
    q = mass_flow / suction_state["rho1"]
    assert_allclose(op.volume_flow, q, rtol=1e-10)
    # the speed found puts the point on the published head surface (solver tolerance 1e-9)
    n = op.speed * 60.0
    assert_allclose(gaslib(GASLIB135_HEAD, n, q) * 1e3, head, rtol=1e-9)
    # efficiency is the published polynomial there, and shaft power is m (h2s - h1) / eta
    # plus the 1 % mechanical loss (case default, common practice)
    eta = gaslib(GASLIB135_EFFICIENCY, n, q)
    assert_allclose(op.efficiency, eta, rtol=1e-10)
    assert_allclose(op.shaft_power, mass_flow * head / eta * 1.01, rtol=1e-10)
    # discharge temperature: CoolProp at (p2, h1 + (h2s - h1) / eta); trainopt interpolates
    # it on an 18-point efficiency grid, accurate to 1e-4 K (regression value (own output) 9e-5 K)
    expected = []
    for e in eta:
        coolprop_gas.update(CP.HmassP_INPUTS, suction_state["h1"] + head / e, DISCHARGE)
        expected.append(coolprop_gas.T())
    assert_allclose(op.discharge_temperature, expected, atol=1e-3)


def test_breakpoints_are_points_of_the_true_model(pair_station, demo_station):
    for station in (pair_station, demo_station):
        for name in station.curves:
            train, duty, curve = unit(station, name)
            op = operate(train, duty, curve.mass_flow, station.case.ambient_temperature)
            assert_allclose(curve.shaft_power, op.shaft_power, rtol=1e-12)  # same arithmetic
            assert_allclose(curve.energy_input, op.energy_input, rtol=1e-12)
            assert np.all(np.diff(curve.mass_flow) > 0)


# --- the ends of the curve -----------------------------------------------------------------


def test_least_flow_is_on_the_published_surge_line_plus_ten_percent(pair_station):
    train, duty, curve = unit(pair_station, "P1")
    assert curve.low_limit == "control_line"
    op = operate(train, duty, curve.min_flow, pair_station.case.ambient_temperature)
    head_kj = op.head[0] / 1e3
    surge_flow = (head_kj - GASLIB135_SURGE[0]) / GASLIB135_SURGE[1]  # published surge line
    # control line 10 % right of surge at the same head (case default, common practice);
    # the end is found by bisection to 3e-5 of the sampled step, 1e-5 of the flow
    assert_allclose(op.volume_flow[0], 1.10 * surge_flow, rtol=1e-5)


def test_largest_flow_of_gaslib135_is_at_its_top_speed(pair_station):
    train, duty, curve = unit(pair_station, "P1")
    assert curve.high_limit == "speed_max"
    op = operate(train, duty, curve.max_flow, pair_station.case.ambient_temperature)
    # the published range ends at 11999 rpm; bisection tolerance as above
    assert_allclose(op.speed[0] * 60.0, GASLIB135_SPEED_MAX_RPM, rtol=1e-5)


def test_largest_flow_of_a_power_limited_unit_uses_all_the_driver_power(demo_station):
    # Demo units A and C run out of driver power before stonewall or top speed; at their
    # largest flow shaft power equals the available power (bisection tolerance as above).
    for name in ("A", "C"):
        train, duty, curve = unit(demo_station, name)
        assert curve.high_limit == "power"
        op = operate(train, duty, curve.max_flow, demo_station.case.ambient_temperature)
        assert_allclose(op.shaft_power, op.available_power, rtol=1e-4)


# --- breakpoints and the stated bound ----------------------------------------------------


def test_stated_bound_holds_on_the_sample_and_between_samples(pair_station, demo_station):
    for station in (pair_station, demo_station):
        for name in station.curves:
            train, duty, curve = unit(station, name)
            largest = float(np.max(curve.sample_shaft_power))
            # the bound is at most the tolerance (2e-4 of the largest power) it was asked for
            assert curve.error_bound <= DEFAULT_TOLERANCE * largest
            assert len(curve.sample_flow) <= FINE_POINTS + 2
            on_sample = np.interp(curve.sample_flow, curve.mass_flow, curve.shaft_power)
            assert_allclose(np.max(np.abs(on_sample - curve.sample_shaft_power)),
                            curve.error_bound, rtol=1e-12)  # the bound is this maximum
            # between the samples: a 4001-point grid of the true model; a chord between
            # samples h apart adds at most max|P''| h^2 / 8 to the error
            m = np.linspace(curve.min_flow, curve.max_flow, 4001)
            p = operate(train, duty, m, station.case.ambient_temperature).shaft_power
            error = np.max(np.abs(np.interp(m, curve.mass_flow, curve.shaft_power) - p))
            h = np.max(np.diff(curve.sample_flow))
            curvature = np.max(np.abs(np.diff(p, 2))) / (m[1] - m[0]) ** 2
            assert error <= curve.error_bound + curvature * h**2 / 8, (name, error)


def test_tighter_tolerance_gives_more_breakpoints_and_a_smaller_bound(pair_station):
    train, duty, curve = unit(pair_station, "P1")
    ambient = pair_station.case.ambient_temperature
    finer = reduce_unit(train, duty, ambient, tolerance=DEFAULT_TOLERANCE / 10)
    coarser = reduce_unit(train, duty, ambient, tolerance=DEFAULT_TOLERANCE * 5)
    assert len(coarser.mass_flow) < len(curve.mass_flow) < len(finer.mass_flow)
    assert coarser.error_bound > curve.error_bound > finer.error_bound
    largest = float(np.max(curve.sample_shaft_power))
    assert finer.error_bound <= DEFAULT_TOLERANCE / 10 * largest
    # the ends do not depend on the tolerance
    assert_allclose([finer.min_flow, finer.max_flow], [curve.min_flow, curve.max_flow],
                    rtol=1e-12)


def test_convexity_flag_agrees_with_the_true_curve(pair_station, demo_station):
    # GasLib-135 between 50 and 68 bar: the true power bends the wrong way just right of the
    # control line (second differences of a 2001-point true curve below zero there); the
    # demo units' curves are convex.
    train, duty, curve = unit(pair_station, "P1")
    m = np.linspace(curve.min_flow, curve.max_flow, 2001)
    p = operate(train, duty, m, pair_station.case.ambient_temperature).shaft_power
    bends = np.diff(p, 2)
    assert np.any(bends[m[1:-1] < 25.0] < 0)
    assert not curve.convex
    for name, demo_curve in demo_station.curves.items():
        assert demo_curve.convex, name
        assert np.all(np.diff(np.diff(demo_curve.shaft_power) / np.diff(demo_curve.mass_flow))
                      > 0)


# --- a unit that cannot meet the duty --------------------------------------------------------


def test_head_above_the_map_says_so(pair_case, coolprop_gas, suction_state):
    # 50 to 95 bar needs an isentropic head of 89.4 kJ/kg (CoolProp), above GasLib-135's
    # 71.9 kJ/kg at the surge point of its top speed (published point).
    station = Station(replace(pair_case, discharge_pressure=95e5))
    curve = station.curves["P1"]
    assert not curve.feasible
    coolprop_gas.update(CP.PSmass_INPUTS, 95e5, suction_state["s1"])
    head_kj = (coolprop_gas.hmass() - suction_state["h1"]) / 1e3
    assert curve.reason == (f"the required head {head_kj:.1f} kJ/kg is above the map's highest "
                            f"head {GASLIB135_TOP_HEAD:.1f} kJ/kg at maximum speed")


def test_driver_power_short_names_the_driver(pair_case, pair_station):
    # A 400 kW shaft-power limit, below the 561 kW the unit needs at its least flow.
    station = Station(replace(pair_case, trains=tuple(replace(t, max_power=0.4e6)
                                                      for t in pair_case.trains)))
    curve = station.curves["P1"]
    assert not curve.feasible
    assert curve.reason.startswith("no through-flow meets every limit; the driver power binds "
                                   "first (short of power by at least ")
    shortfall_kw = float(curve.reason.rsplit("at least ", 1)[1].split(" kW")[0])
    need = pair_station.curves["P1"].shaft_power[0]  # least power of the unlimited unit
    assert_allclose(need, 560.7e3, rtol=1e-3)  # the number quoted above
    assert 0 < shortfall_kw <= (need - 0.4e6) / 1e3 + 0.5  # "at least" is a true statement


def test_driver_power_shortfall_is_the_real_one(pair_case, pair_station):
    station = Station(replace(pair_case, trains=tuple(replace(t, max_power=0.4e6)
                                                      for t in pair_case.trains)))
    shortfall_kw = float(station.curves["P1"].reason.rsplit("at least ", 1)[1].split(" kW")[0])
    need = pair_station.curves["P1"].shaft_power[0]
    assert_allclose(shortfall_kw, (need - 0.4e6) / 1e3, atol=1.0)  # printed to 1 kW


def test_hot_ambient_shrinks_a_gas_turbine_unit(demo_station):
    # The demo gas turbine loses 0.7 %/K of power with ambient (its case value); its unit's
    # largest flow is set by driver power and falls as the ambient rises.
    case = demo_station.case
    train = case.train("C")
    largest = []
    for ambient in (case.ambient_temperature, case.ambient_temperature + 20.0):
        curve = reduce_unit(train, demo_station.duty(train), ambient)
        assert curve.high_limit == "power"
        op = operate(train, demo_station.duty(train), curve.max_flow, ambient)
        assert_allclose(op.shaft_power, op.available_power, rtol=1e-4)
        largest.append((curve.max_flow, op.available_power[0]))
    (m_cool, p_cool), (m_hot, p_hot) = largest
    assert m_hot < m_cool
    assert p_hot < p_cool


def test_points_at_the_surge_line_are_on_the_map_or_off_it_never_in_between(demo_station):
    # Just right of the surge line the speed iteration used to alternate between a point
    # at a fallback efficiency and "off the map" (a 9 kW jump on demo unit D at 0.1 kg/s).
    # Every point with a speed must lie right of its surge flow, every other left of it.
    case = demo_station.case
    train = case.train("D")
    duty = demo_station.duty(train)
    surge = demo_station.curves["D"].min_flow / 1.10  # least flow = 1.10 x surge (common practice)
    m = np.linspace(surge * 0.995, surge * 1.01, 61)
    op = operate(train, duty, m, case.ambient_temperature)
    on_map = np.isfinite(op.speed)
    assert on_map.any()
    assert not on_map.all()
    assert np.all(op.volume_flow[on_map] >= op.surge_flow[on_map] * (1 - 1e-9))
    power = op.shaft_power[on_map]
    slopes = np.diff(power) / np.diff(m[on_map])
    # the curve is smooth here: no slope departs from the median by more than 5 %
    assert np.max(np.abs(slopes / np.median(slopes) - 1)) < 0.05
