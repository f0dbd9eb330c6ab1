"""The map object: published-coefficient maps, inverse round trips, range, vectorisation.

GasLib coefficients: Schmidt, M. et al. (2017), Data 2(4):40, doi:10.3390/data2040040;
cite Pfetsch, M. et al. (2012), ZIB-Report 12-41. CC BY 3.0; see tests/data/gaslib/README.md.
"""

import json
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from trainopt.machines.maps import (
    CompressorMap,
    HeadBasis,
    MapRangeWarning,
    fit_map_file,
    load_map,
    map_from_coefficients,
)

GASLIB = Path(__file__).parents[1] / "data" / "gaslib"
DEMO = Path(__file__).parents[2] / "cases" / "demo" / "maps"
with open(GASLIB / "gaslib_published_maps.json") as handle:
    PUBLISHED = json.load(handle)


def published_map(name: str) -> CompressorMap:
    entry = PUBLISHED[name]
    return map_from_coefficients(entry["head"], entry["eff"], entry["surge"], entry["choke"],
                                 entry["speed_min_rpm"] / 60, entry["speed_max_rpm"] / 60,
                                 name=name)


def biquadratic(c, n_rpm, flow):
    """GasLib layout, written out independently of trainopt (tests/data/gaslib/README.md)."""
    return (c[0] + c[1] * n_rpm + c[2] * n_rpm**2 + (c[3] + c[4] * n_rpm + c[5] * n_rpm**2) * flow
            + (c[6] + c[7] * n_rpm + c[8] * n_rpm**2) * flow**2)


MAPS = {
    "gaslib11 published": lambda: published_map("gaslib11"),
    "gaslib135 published": lambda: published_map("gaslib135"),
    "gaslib135 fitted": lambda: fit_map_file(GASLIB / "gaslib135.yaml").map,
    "demo motor unit": lambda: load_map(DEMO / "motor_unit.yaml"),
    "demo gas turbine unit": lambda: load_map(DEMO / "gas_turbine_unit.yaml"),
    "demo worn unit": lambda: load_map(DEMO / "worn_unit.yaml"),
}


@pytest.fixture(scope="module", params=list(MAPS))
def any_map(request):
    return MAPS[request.param]()


@pytest.mark.parametrize("name", ["gaslib11", "gaslib135"])
def test_published_coefficients_are_reproduced_exactly(name):
    m, entry = published_map(name), PUBLISHED[name]
    assert m.basis is HeadBasis.ISENTROPIC
    flow, speed = m.tested_grid(21, 21)
    # same polynomial, coefficients rescaled by powers of 60 and 1000: rounding only
    assert_allclose(m.head(flow, speed), 1e3 * biquadratic(entry["head"], 60 * speed, flow),
                    rtol=1e-12)
    assert_allclose(m.efficiency(flow, speed), biquadratic(entry["eff"], 60 * speed, flow),
                    rtol=1e-12)
    # the boundary flows lie on the published surge and choke lines H = c1 + c2 Q + c3 Q²
    for flows, line in ((flow[:, 0], entry["surge"]), (flow[:, -1], entry["choke"])):
        line_head = 1e3 * (line[0] + line[1] * flows + line[2] * flows**2)
        assert_allclose(m.head(flows, speed[:, 0]), line_head, rtol=1e-12)


def test_gaslib135_published_surge_points_are_the_surge_flows():
    # GasLib-135 published surge point at 11999 rpm (gaslib135_compressor_map_points.csv):
    # Q = 0.3778500000000021 m³/s, H = 71.88729110000055 kJ/kg
    m = published_map("gaslib135")
    assert_allclose(m.surge_flow_at_speed(11999 / 60), 0.3778500000000021, rtol=1e-13)
    assert_allclose(m.surge_flow_at_head(71.88729110000055e3), 0.3778500000000021, rtol=1e-12)


def test_inverse_round_trips_over_the_whole_map(any_map):
    m = any_map
    flow, speed = m.tested_grid(61, 61)  # corners and edges included
    head = m.head(flow, speed)
    # Illinois iterations stop at |residual| <= 1e-13 of the head; along a flat speed line
    # (near surge) that is ~1e-12 in flow. Tolerances: 1e-11 speed, 1e-10 flow.
    assert_allclose(m.speed_for(flow, head), np.broadcast_to(speed, flow.shape), rtol=1e-11)
    assert_allclose(m.flow_for(speed, head), flow, rtol=1e-10)
    assert_allclose(m.head(m.flow_for(speed, head), speed), head, rtol=1e-12)
    surge_head, stonewall_head = head[:, 0], head[:, -1]
    assert_allclose(m.surge_flow_at_head(surge_head), flow[:, 0], rtol=1e-11)
    assert_allclose(m.stonewall_flow_at_head(stonewall_head), flow[:, -1], rtol=1e-11)
    assert_allclose(m.control_line_flow_at_head(surge_head), 1.1 * flow[:, 0], rtol=1e-11)
    assert_allclose(m.control_line_flow_at_head(surge_head, 0.15), 1.15 * flow[:, 0], rtol=1e-11)


def test_no_solution_in_the_tested_domain_gives_nan(any_map):
    m = any_map
    top = m.head(m.surge_flow_at_speed(m.speed_max), m.speed_max)
    middle_speed = 0.5 * (m.speed_min + m.speed_max)
    middle_flow = 0.5 * (m.surge_flow_at_speed(middle_speed) + m.stonewall_flow_at_speed(
        middle_speed))
    assert np.isnan(m.surge_flow_at_head(1.01 * top))
    assert np.isnan(m.speed_for(middle_flow, 2 * top))  # above the highest speed line
    assert np.isnan(m.speed_for(0.5 * m.surge_flow_at_speed(m.speed_min), top))  # left of surge
    assert np.isnan(m.flow_for(1.05 * m.speed_max, top))  # speed above the tested range
    assert np.isnan(m.flow_for(middle_speed, top))  # more head than the line gives
    assert not np.isnan(m.speed_for(middle_flow, m.head(middle_flow, middle_speed)))


def test_leaving_the_tested_range_warns_by_how_much():
    m = load_map(DEMO / "motor_unit.yaml")
    speed = 1.05 * m.speed_max
    with pytest.warns(MapRangeWarning, match=r"5 % above the highest tested speed"):
        m.head(m.surge_flow_at_speed(speed, warn=False) * 1.2, speed)
    flow = 0.9 * m.surge_flow_at_speed(m.speed_max)
    with pytest.warns(MapRangeWarning, match=r"1 of 1 queries .* up to 10 % left of the surge"):
        m.efficiency(flow, m.speed_max)
    with pytest.warns(MapRangeWarning, match=r"below the lowest tested speed"):
        m.surge_flow_at_speed(0.9 * m.speed_min)
    # warn=False is silent (warnings are errors in this test run) and in_tested_range tells
    m.head(flow, m.speed_max, warn=False)
    inside = m.in_tested_range([flow, 1.2 * flow, 1.2 * flow], [m.speed_max, m.speed_max, speed])
    assert inside.tolist() == [False, True, False]


def test_evaluations_broadcast_and_scalars_stay_scalars():
    m = load_map(DEMO / "motor_unit.yaml")
    speeds = np.linspace(m.speed_min, m.speed_max, 3)[:, None]
    flows = m.surge_flow_at_speed(speeds) * np.array([1.1, 1.3, 1.5, 1.7])
    assert m.head(flows, speeds).shape == (3, 4)
    assert m.speed_for(flows, m.head(flows, speeds)).shape == (3, 4)
    assert m.flow_for(speeds, 50e3 * np.ones(4)).shape == (3, 4)
    assert isinstance(m.head(4.0, 150.0), np.floating)
    assert isinstance(m.speed_for(4.0, 50e3), np.floating)


def test_mach_similar_map_is_the_test_map_at_equal_machine_mach_number():
    m = load_map(DEMO / "motor_unit.yaml")
    s = 1.08  # test sound speed / service sound speed
    similar = m.mach_similar(s)
    flow, speed = similar.tested_grid(11, 11)
    # H(Q, N) = H_test(sQ, sN) / s², eta(Q, N) = eta_test(sQ, sN): exact up to rounding
    assert_allclose(similar.head(flow, speed), m.head(s * flow, s * speed) / s**2, rtol=1e-13)
    assert_allclose(similar.efficiency(flow, speed), m.efficiency(s * flow, s * speed),
                    rtol=1e-13)
    assert_allclose(similar.speed_range, np.array(m.speed_range) / s, rtol=1e-15)
    assert_allclose(similar.surge_flow_at_speed(speed), m.surge_flow_at_speed(s * speed) / s,
                    rtol=1e-13)
    back = similar.mach_similar(1 / s)
    flow, speed = m.tested_grid(11, 11)
    assert_allclose(back.head(flow, speed), m.head(flow, speed), rtol=1e-13)
    gaslib = published_map("gaslib135").mach_similar(s)  # head-curve boundaries too
    assert_allclose(gaslib.surge_flow_at_speed(gaslib.speed_max),
                    published_map("gaslib135").surge_flow_at_speed(gaslib.speed_max * s) / s,
                    rtol=1e-13)
