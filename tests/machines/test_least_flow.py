"""Real speed lines: flat or rising right of the surge line; least-flow rules; margins below
the lowest surge point.

GasLib-40 coefficients: Schmidt, M. et al. (2017), "GasLib - A Library of Gas Network
Instances", Data 2(4):40, doi:10.3390/data2040040; cite Pfetsch, M. et al. (2012), ZIB-Report
12-41. CC BY 3.0; see tests/data/gaslib/README.md. The vendor-style flat-top map below is
INVENTED for these tests (not any machine's data): exact fan-law parabolas, so its least flows
can be worked by hand.
"""

import json
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from trainopt.machines.maps import (
    LeastFlowRule,
    fit_map_file,
    map_from_coefficients,
    surge_margin_at_head,
)

GASLIB = Path(__file__).parents[1] / "data" / "gaslib"
with open(GASLIB / "gaslib_published_maps.json") as handle:
    GASLIB40 = json.load(handle)["gaslib40"]


@pytest.fixture(scope="module")
def gaslib40():
    e = GASLIB40
    return map_from_coefficients(e["head"], e["eff"], e["surge"], e["choke"],
                                 e["speed_min_rpm"] / 60, e["speed_max_rpm"] / 60, name="gaslib40")


def line_10140(e=GASLIB40):
    """Published head parabola at 10140 rpm, H = A + B Q + C Q² [kJ/kg], Q [m³/s]."""
    c, n = e["head"], 10140.0
    return (c[0] + c[1] * n + c[2] * n**2, c[3] + c[4] * n + c[5] * n**2,
            c[6] + c[7] * n + c[8] * n**2)


def test_gaslib40_published_map_loads_though_its_lines_rise_right_of_surge(gaslib40):
    a, b, c = line_10140()
    # hand: the parabola's vertex -B / 2C and the smaller root of (line - surge line) = 0
    peak = -b / (2 * c)
    s = GASLIB40["surge"]
    surge = min(np.roots([c - s[2], b - s[1], a - s[0]]))
    assert peak > 1.1 * surge  # the line rises right of its published surge line
    n = 10140 / 60
    assert_allclose(gaslib40.surge_flow_at_speed(n), surge, rtol=1e-12)
    assert_allclose(gaslib40.peak_flow_at_speed(n), peak, rtol=1e-12)
    # the speed for a flow and head is unique on the rising part too: round trip
    q = np.linspace(surge, peak, 7)
    assert_allclose(gaslib40.speed_for(q, gaslib40.head(q, n)), n, rtol=1e-10)
    # flow for a speed and head: the stable root, right of the peak
    h = gaslib40.head(q[:-1], n)  # not the peak itself, where the two roots merge
    right = (-b - np.sqrt(b * b - 4 * c * (a - h / 1e3))) / (2 * c)
    assert_allclose(gaslib40.flow_for(n, h), right, rtol=1e-9)


def test_gaslib40_least_flows_under_each_rule_by_hand(gaslib40):
    a, b, c = line_10140()
    peak_head = a - b * b / (4 * c)  # 37.317 kJ/kg, the peak of the 10140 rpm line
    peak_flow = -b / (2 * c)
    # surge flow at that head: the smaller root of the published surge line H(Q) = peak_head
    s = GASLIB40["surge"]
    surge_flow = min(np.roots([s[2], s[1], s[0] - peak_head]))
    h = 1e3 * peak_head
    for rule, least, binds in ((LeastFlowRule.SURGE_LINE, surge_flow, "surge line"),
                               (LeastFlowRule.SPEED_LINE_PEAK, peak_flow, "speed-line peak"),
                               (LeastFlowRule.LARGER, peak_flow, "speed-line peak")):
        line = gaslib40.control_line(h, 0.10, rule)
        assert_allclose(line.flow, 1.10 * least, rtol=1e-9)
        assert str(line.binds) == binds
        assert not line.extrapolated
    assert_allclose(gaslib40.control_line_flow_at_head(h, 0.1, "surge_line"), 1.1 * surge_flow,
                    rtol=1e-9)


FLAT = {"h0": 60.0, "k1": 10.0, "k2": 4.0, "rpm": 10000.0}
"""Invented line at 10000 rpm: H = 60 + 10 Q - 4 Q² [kJ/kg], Q [m³/s]; other speeds by the
fan laws, H = r² 60 + r 10 Q - 4 Q² with r = N / 10000 rpm."""


def flat_top_map(folder: Path, speeds=(8500.0, 10000.0, 11000.0)):
    """Write the invented vendor-style map: 7 points per line from the surge point 0.8 r to
    the stonewall point 3.0 r [m³/s]; the line peaks at 1.25 r, 1.2 % above its surge head."""
    rows = ["speed [rpm],flow [m3/s],head [kJ/kg],efficiency [-],point"]
    for rpm in speeds:
        r = rpm / FLAT["rpm"]
        flows = r * np.array([0.8, 1.0, 1.25, 1.5, 2.0, 2.5, 3.0])
        for i, q in enumerate(flows):
            head = r * r * FLAT["h0"] + r * FLAT["k1"] * q - FLAT["k2"] * q * q
            eta = 0.82 - 0.05 * (q / r - 1.8) ** 2
            kind = "surge" if i == 0 else "stonewall" if i == len(flows) - 1 else ""
            rows.append(f"{rpm!r},{float(q)!r},{float(head)!r},{float(eta)!r},{kind}")
    (folder / "flat.csv").write_text("\n".join(rows) + "\n")
    (folder / "flat.yaml").write_text("# INVENTED test map\nbasis: polytropic\ntable: flat.csv\n")
    return fit_map_file(folder / "flat.yaml")


@pytest.mark.parametrize("speeds", [(8500.0, 11000.0), (8500.0, 10000.0, 11000.0)])
def test_flat_top_vendor_points_load_and_give_hand_least_flows(tmp_path, speeds):
    fit = flat_top_map(tmp_path, speeds)  # two or three speed lines
    m = fit.map
    assert fit.summary()["head_max"] < 1e-9  # exact parabolas: the fit reproduces them
    # hand, at H = 62 kJ/kg: the surge points lie on H = H(0.8)/0.8² Q² (fan laws), so
    # r_s = sqrt(62 / 65.44) and Q_surge = 0.8 r_s; the peaks lie on r² 66.25 at Q = 1.25 r
    h = 62e3
    surge = 0.8 * np.sqrt(62.0 / (60.0 + 8.0 - 2.56))
    peak = 1.25 * np.sqrt(62.0 / 66.25)
    assert_allclose(m.surge_flow_at_head(h), surge, rtol=1e-8)
    assert_allclose(m.peak_flow_at_head(h), peak, rtol=1e-8)
    for rule, least in (("surge_line", surge), ("speed_line_peak", peak), ("larger", peak)):
        assert_allclose(m.control_line_flow_at_head(h, 0.1, rule), 1.1 * least, rtol=1e-8)
    # the speed is unique for a point between surge and peak: round trip
    n = 10500 / 60
    r = 10500 / 10000
    q = np.linspace(0.8 * r, 1.25 * r, 5)
    assert_allclose(m.speed_for(q, m.head(q, n)), n, rtol=1e-10)


def test_surge_margin_below_the_lowest_surge_point_is_extended(tmp_path):
    m = flat_top_map(tmp_path).map
    # below the lowest tested surge head (8500 rpm: 0.85² 65.44 = 47.28 kJ/kg) the surge line
    # continues as the fan-law parabola through the origin: Q = 0.8 sqrt(H / 65.44)
    h = 30e3
    assert np.isnan(m.surge_flow_at_head(h))
    assert_allclose(m.surge_flow_at_head(h, extend=True), 0.8 * np.sqrt(30 / 65.44), rtol=1e-9)
    line = m.control_line(h, 0.1, extend=True)
    assert line.extrapolated
    assert_allclose(line.flow, 1.1 * 0.8 * np.sqrt(30 / 65.44), rtol=1e-9)
    assert_allclose(surge_margin_at_head(m, 1.0, h, extend=True),
                    1.0 / (0.8 * np.sqrt(30 / 65.44)) - 1, rtol=1e-9)


def test_map_picture_draws_the_peak_and_the_rule_control_line(gaslib40):
    from trainopt.report.map_picture import plot_map

    fig = plot_map(gaslib40, least_flow_rule="larger")
    labels = {line.get_label(): line for line in fig.axes[0].get_lines()}
    assert "speed-line peak" in labels
    control = labels["surge control line (10 % of the larger of surge and peak flow)"]
    q, h = control.get_data()
    # each drawn point is 1.1 times the larger of surge and peak flow at its head
    h = 1e3 * h[5:-5]
    expected = 1.1 * np.fmax(gaslib40.surge_flow_at_head(h), gaslib40.peak_flow_at_head(h))
    assert_allclose(q[5:-5], expected, rtol=1e-9)
