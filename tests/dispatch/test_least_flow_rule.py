"""The least-flow rule chosen in the case sets each unit's surge control line.

Two GasLib-40 turbo-compressors as their published fit (tests/data/gaslib/README.md;
Schmidt, M. et al. (2017), Data 2(4):40, doi:10.3390/data2040040, CC BY 3.0; cite Pfetsch,
M. et al. (2012), ZIB-Report 12-41), whose speed lines rise right of the published surge
line, on the GasLib-135 pair test case (tests/data/station_small). The peak of the speed
line at a head H is worked by hand from the published parabola H(Q) = A(n) + B(n) Q + C(n) Q²:
its vertex head A - B² / 4C equals H at one speed n (found by SciPy's brentq), and the peak
flow is -B / 2C there.
"""

import json
from pathlib import Path

import numpy as np
import pytest
import yaml
from numpy.testing import assert_allclose
from scipy.optimize import brentq

import trainopt
from trainopt.dispatch.reduction import operate
from trainopt.machines.maps import LeastFlowRule
from trainopt.station.reduced import Station

ROOT = Path(__file__).parents[2]
PAIR = ROOT / "tests" / "data" / "station_small" / "gaslib135_pair.yaml"
with open(ROOT / "tests" / "data" / "gaslib" / "gaslib_published_maps.json") as handle:
    G40 = json.load(handle)["gaslib40"]


def parabola(n):
    c = G40["head"]
    return (c[0] + c[1] * n + c[2] * n**2, c[3] + c[4] * n + c[5] * n**2,
            c[6] + c[7] * n + c[8] * n**2)


def hand_peak_flow(head_kj):
    def vertex_head(n):
        a, b, c = parabola(n)
        return a - b * b / (4 * c) - head_kj

    n = brentq(vertex_head, G40["speed_min_rpm"], G40["speed_max_rpm"], xtol=1e-12)
    _, b, c = parabola(n)
    return -b / (2 * c)


def hand_surge_flow(head_kj):
    s = G40["surge"]  # H = s1 + s2 Q + s3 Q², the smaller root
    return min(np.roots([s[2], s[1], s[0] - head_kj]))


@pytest.fixture(scope="module")
def station(tmp_path_factory):
    folder = tmp_path_factory.mktemp("g40")
    (folder / "g40.yaml").write_text(yaml.safe_dump({
        "name": "GasLib-40 turbo-compressor (published fit)", "basis": "isentropic",
        "coefficients": {"layout": "gaslib", "speed_min": f"{G40['speed_min_rpm']} rpm",
                         "speed_max": f"{G40['speed_max_rpm']} rpm", "head": G40["head"],
                         "efficiency": G40["eff"], "surge": G40["surge"],
                         "stonewall": G40["choke"]}}))
    data = yaml.safe_load(PAIR.read_text())
    data["least_flow_rule"] = "speed_line_peak"  # the case's default
    for unit in data["units"]:
        unit["map"] = str(folder / "g40.yaml")
        unit.pop("group", None)
    data["units"][1]["least_flow_rule"] = "surge_line"  # a unit overrides it
    (folder / "case.yaml").write_text(yaml.safe_dump(data, sort_keys=False))
    return Station(trainopt.load_case(folder / "case.yaml"))


def test_each_unit_follows_its_rule(station):
    p1, p2 = station.case.trains
    assert p1.sections[0].least_flow_rule is LeastFlowRule.SPEED_LINE_PEAK
    assert p2.sections[0].least_flow_rule is LeastFlowRule.SURGE_LINE
    for train, hand in ((p1, hand_peak_flow), (p2, hand_surge_flow)):
        op = operate(train, station.duty(train), np.array([60.0, 90.0]),
                     station.case.ambient_temperature)
        head_kj = op.head / 1e3
        expected = [1.10 * hand(h) for h in head_kj]  # 10 % offset, the case default
        assert_allclose(op.control_line_flow, expected, rtol=1e-8)
    # on this map the peak lies right of the surge line at these heads: the peak rule
    # asks for more flow, so P1's least flow is the larger
    assert station.curves["P1"].min_flow > station.curves["P2"].min_flow * 1.02
