"""A running unit always has its surge and control-line margins, below the lowest tested
surge head too (the fan-law extension of the surge line, flagged).

The demo station (cases/demo, INVENTED data) discharging at 58 bar: unit A's head (about
36 kJ/kg polytropic) lies below the surge head of its lowest tested speed line (about
43 kJ/kg), so the tested surge line gives no surge flow at that head. Extension: the
fan-law parabola through the origin and the lowest tested surge point, Q = Q_s (H / H_s)^½
(fan laws Q ∝ N, H ∝ N²: common practice; docs/maps.md).
"""

from dataclasses import replace
from pathlib import Path

import numpy as np
from numpy.testing import assert_allclose

import trainopt

DEMO = Path(__file__).parents[2] / "cases" / "demo" / "station.yaml"


def test_unit_below_the_lowest_surge_head_keeps_flagged_margins():
    case = replace(trainopt.load_case(DEMO), discharge_pressure=58e5)
    result = trainopt.evaluate(case, {"A": "12 MMSCMD"}, demand="12 MMSCMD")
    row = result.units.set_index("name").loc["A"]
    assert row.running
    m = case.trains[0].sections[0].compressor_map
    q_s = float(m.surge_flow_at_speed(m.speed_min))
    h_s = float(m.head(q_s, m.speed_min))
    head = row.polytropic_head_kJ_kg * 1e3  # the demo maps are polytropic
    assert head < h_s  # below the lowest tested surge point: no tested surge flow here
    assert np.isnan(m.surge_flow_at_head(head))
    q = row.inlet_volume_flow_m3_h / 3600
    surge = q_s * np.sqrt(head / h_s)
    # the row's polytropic head is recomputed by a separate path (compress at the row's
    # efficiency), within ~2e-5 relative of the operating head the margins use: rtol 1e-4
    assert_allclose(row.surge_margin_pct, 100 * (q / surge - 1), rtol=1e-4)
    assert_allclose(row.control_line_margin_pct, 100 * (q / (1.1 * surge) - 1), rtol=1e-4)
    assert bool(row.surge_margin_extrapolated) is True
    assert row.least_flow_rule == "surge_line"
    assert row.least_flow_binds == "surge line"
