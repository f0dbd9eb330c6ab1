"""Margins as fractions, checked on hand-built points and on GasLib-135's published surge point.

GasLib-135: Schmidt, M. et al. (2017), Data 2(4):40, doi:10.3390/data2040040; cite Pfetsch, M.
et al. (2012), ZIB-Report 12-41. CC BY 3.0; see tests/data/gaslib/README.md.
"""

from pathlib import Path

import numpy as np
from numpy.testing import assert_allclose

from trainopt.machines.maps import (
    control_line_margin,
    load_map,
    speed_margins,
    stonewall_margin,
    surge_margin_at_head,
    surge_margin_at_speed,
)

GASLIB = Path(__file__).parents[1] / "data" / "gaslib"
DEMO = Path(__file__).parents[2] / "cases" / "demo" / "maps"
# GasLib-135 published surge point at 11999 rpm (gaslib135_compressor_map_points.csv)
SURGE_FLOW, SURGE_HEAD, SPEED = 0.3778500000000021, 71.88729110000055e3, 11999 / 60


def test_default_control_line_lies_ten_percent_right_of_surge():
    # Common practice: the surge control line at 10 % more flow than surge at the same head.
    # Checked on the published GasLib-135 map's surge point, not on the constant itself.
    m = load_map(GASLIB / "gaslib135_coefficients.yaml")
    assert_allclose(m.surge_flow_at_head(SURGE_HEAD), SURGE_FLOW, rtol=1e-9)
    assert_allclose(m.control_line_flow_at_head(SURGE_HEAD), 1.10 * SURGE_FLOW, rtol=1e-9)
    # and a point on that line has no control-line margin left
    assert_allclose(control_line_margin(m, 1.10 * SURGE_FLOW, SURGE_HEAD), 0.0, atol=1e-9)


def test_margins_at_the_published_gaslib135_surge_point():
    m = load_map(GASLIB / "gaslib135_coefficients.yaml")
    # 20 % more flow than the published surge point, same speed: margin 0.20. The point lies
    # on both published curves to 3e-14, and the inverse at head solves to 1e-13: rtol 1e-11.
    assert_allclose(surge_margin_at_speed(m, 1.2 * SURGE_FLOW, SPEED), 0.2, rtol=1e-11)
    assert_allclose(surge_margin_at_head(m, 1.3 * SURGE_FLOW, SURGE_HEAD), 0.3, rtol=1e-11)
    # on the control line (10 % right of surge at the same head) the margin is zero
    assert_allclose(control_line_margin(m, 1.1 * SURGE_FLOW, SURGE_HEAD), 0.0, atol=1e-11)
    assert_allclose(control_line_margin(m, 1.1 * SURGE_FLOW, SURGE_HEAD, offset=0.05),
                    1.1 / 1.05 - 1, rtol=1e-11)


def test_margins_on_the_demo_map_are_the_stated_formulas():
    m = load_map(DEMO / "gas_turbine_unit.yaml")
    speed = np.array([80.0, 100.0, 110.0])
    surge, stonewall = m.surge_flow_at_speed(speed), m.stonewall_flow_at_speed(speed)
    flow = 0.5 * (surge + stonewall)
    head = m.head(flow, speed)
    # formulas of docs/maps.md, evaluated here by hand from the map's own boundary flows
    assert_allclose(surge_margin_at_speed(m, flow, speed), flow / surge - 1, rtol=1e-15)
    assert_allclose(stonewall_margin(m, flow, speed), 1 - flow / stonewall, rtol=1e-15)
    surge_at_head = m.surge_flow_at_head(head)
    assert_allclose(surge_margin_at_head(m, flow, head), flow / surge_at_head - 1, rtol=1e-15)
    assert_allclose(control_line_margin(m, flow, head, 0.12),
                    flow / (1.12 * surge_at_head) - 1, rtol=1e-15)
    # at constant head the surge flow is lower than at constant speed (speed lines slope down)
    assert np.all(surge_margin_at_head(m, flow, head) > surge_margin_at_speed(m, flow, speed))
    assert_allclose(stonewall_margin(m, 0.9 * stonewall, speed), 0.1, rtol=1e-13)


def test_speed_margins():
    m = load_map(DEMO / "motor_unit.yaml")  # tested 8000-11000 rpm
    low, high = speed_margins(m, 8400 / 60)
    assert_allclose([low, high], [8400 / 8000 - 1, 1 - 8400 / 11000], rtol=1e-14)
    low, high = speed_margins(m, [150.0, 175.0], speed_min=140.0, speed_max=175.0)
    assert_allclose(low, [150 / 140 - 1, 175 / 140 - 1], rtol=1e-14)
    assert_allclose(high, [1 - 150 / 175, 0.0], atol=1e-15)
