"""A single unit at low pressure ratios: which limit binds, and the discharge throttle.

Outside references:

- brute force: the speed a flow needs, found on a grid of 200 001 speeds across the map's
  tested range (independent of the bracketed secant search in the module);
- CoolProp through :func:`trainopt.physics.compression.compress` (Schultz's method, ASME
  PTC 10), not the gas table the throttle uses, for the throttled discharge and the lost
  power;
- a throttle valve is isenthalpic (common practice), so the compressor's own discharge
  pressure and enthalpy set its power; the header pressure only sets the useful part.

The demo station is invented demo data; the low-ratio conditions (44 bar to 56 and 48 bar)
are our own choice of a day with a small pressure ratio.
"""

from dataclasses import replace

import numpy as np
import pytest
from numpy.testing import assert_allclose

from trainopt.dispatch.unit_operation import OFF_MAP_KEYS, operate
from trainopt.physics.compression import compress
from trainopt.station.reduced import Station


@pytest.fixture(scope="module")
def low_ratio_station(demo_case):
    """The demo at 44 -> 56 bar: heads low enough that the minimum-speed line binds."""
    return Station(replace(demo_case, suction_pressure=44e5, discharge_pressure=56e5))


def brute_speed(cmap, duty, q):
    """Speed [1/s] where map head meets required head at flow q, on a fine grid (or NaN)."""
    n = np.linspace(cmap.speed_min, cmap.speed_max, 200_001)
    gap = cmap.head(q, n, warn=False) - duty.head(cmap.efficiency(q, n, warn=False))
    crossing = np.flatnonzero(np.diff(np.sign(gap)) > 0)
    return n[crossing[0]] if crossing.size else np.nan


def test_low_ratio_ends_are_minimum_speed_and_stonewall(low_ratio_station):
    # Before: the least flow was charged to "maximum speed" and the largest flow to
    # "maximum speed" at 17 % below it, 0.1 % short of the stonewall flow.
    station = low_ratio_station
    train = station.case.train("A")
    cmap, duty = train.sections[0].compressor_map, station.duty(train)
    curve = station.curves["A"]
    assert (curve.low_limit, curve.high_limit) == ("speed_min", "stonewall")
    q_low = curve.min_flow / duty.suction.density
    q_high = curve.max_flow / duty.suction.density
    # brute force: at the least flow the speed needed is the minimum (grid step 1.25e-5 of
    # the speed range); at the largest flow the point sits on its speed line's stonewall
    assert brute_speed(cmap, duty, q_low) == pytest.approx(train.speed_min, rel=2e-5)
    n_high = brute_speed(cmap, duty, q_high)
    assert q_high / cmap.stonewall_flow_at_speed(n_high, warn=False) == pytest.approx(1, abs=2e-5)
    assert n_high < 0.9 * train.speed_max


def test_a_head_below_the_minimum_speed_line_says_so(demo_case):
    # Before: "no through-flow meets every limit; the maximum speed binds first".
    station = Station(replace(demo_case, suction_pressure=44e5, discharge_pressure=48e5))
    for curve in station.curves.values():
        assert not curve.feasible
        assert curve.low_limit == "speed_min"
        assert "below the head of the minimum-speed line" in curve.reason
        assert "throttle: allowed" in curve.reason


def test_off_map_points_name_their_limit(demo_case):
    # at 44 -> 48 bar the head needed lies below the minimum-speed line at every flow
    station = Station(replace(demo_case, suction_pressure=44e5, discharge_pressure=48e5))
    train = station.case.train("A")
    cmap, duty = train.sections[0].compressor_map, station.duty(train)
    n_min, n_max = cmap.speed_min, cmap.speed_max
    flows = np.array([0.5 * cmap.surge_flow_at_speed(n_min, warn=False),  # left of the map
                      1.2 * cmap.stonewall_flow_at_speed(n_max, warn=False),  # right of it
                      1.02 * cmap.stonewall_flow_at_speed(n_min, warn=False),
                      0.9 * cmap.stonewall_flow_at_speed(n_min, warn=False)])
    op = operate(train, duty, flows * duty.suction.density, station.case.ambient_temperature)
    names = [OFF_MAP_KEYS[c] for c in op.off_map_limit]
    # right of the minimum-speed line's stonewall a lower head means a lower speed and a
    # point further right of the stonewall: the stonewall is crossed first
    assert names == ["control_line", "stonewall", "stonewall", "speed_min"]
    assert np.all(np.isnan(op.speed))
    viol = op.violations(train)
    for i, name in enumerate(names):
        assert viol[name][i]
        assert not any(v[i] for k, v in viol.items() if k not in (name, "power"))


def test_throttled_unit_against_coolprop(demo_case):
    case = replace(demo_case, suction_pressure=44e5, discharge_pressure=48e5, throttle=True)
    station = Station(case)
    train = case.train("C")
    curve = station.curves["C"]
    assert curve.feasible
    assert curve.low_limit == "control_line"
    m = 0.5 * (curve.min_flow + curve.max_flow)
    op = operate(train, station.duty(train), m, case.ambient_temperature, throttle=True)
    cmap = train.sections[0].compressor_map
    assert op.speed[0] == pytest.approx(train.speed_min, rel=1e-12)
    p_unit, eta = float(op.discharge_pressure[0]), float(op.efficiency[0])
    assert float(op.throttle_pressure_drop[0]) == pytest.approx(p_unit - 48e5, rel=1e-12)
    assert p_unit > 50e5
    # the compressor's own discharge gives the map's head at minimum speed; the gas table
    # reaches CoolProp's pressure to about 2e-6 relative, so 2e-5 on the head
    exact = compress(case.gas, 44e5, case.suction_temperature, p_unit, eta)
    q = m / station.duty(train).suction.density
    assert exact.polytropic_head == pytest.approx(float(cmap.head(q, train.speed_min)),
                                                  rel=2e-5)
    # lost power: shaft power less that of the same flow and efficiency to 48 bar only
    useful = compress(case.gas, 44e5, case.suction_temperature, 48e5, eta)
    work = exact.discharge.enthalpy - exact.suction.enthalpy
    useful_work = useful.discharge.enthalpy - useful.suction.enthalpy
    assert_allclose(op.shaft_power[0], m * work * (1 + train.mechanical_loss), rtol=2e-5)
    assert_allclose(op.lost_power[0], m * (work - useful_work) * (1 + train.mechanical_loss),
                    rtol=1e-4)
    assert op.lost_power[0] > 0.3 * op.shaft_power[0]


def test_capacity_message_and_turndown_name_the_stonewall(low_ratio_station):
    # The limit named by the curve flows into the capacity message of a split and into
    # the envelope's turndown table (before: "maximum speed" in both).
    from trainopt.station.reduced import evaluate_split
    from trainopt.studies.envelope import turndown

    station = low_ratio_station
    curve = station.curves["A"]
    result = evaluate_split(station, {"A": 1.05 * curve.max_flow})
    assert result.status == "infeasible"
    assert "set by the stonewall" in result.reason
    table = turndown(station, [("A", ("A",))])
    assert table["largest_set_by"].iloc[0] == "A: stonewall"
    assert table["least_set_by"].iloc[0] == "A: minimum speed"
