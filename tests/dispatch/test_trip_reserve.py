"""One moment's dispatch with a trip reserve, on synthetic curves and on the demo station.

References: the reserve condition is checked by hand from the curves' largest flows, and on
the demo station by evaluating the remaining units on the true model
(``trainopt.station.reduced.evaluate_split``: map, gas, driver). The demo is invented.
"""

import numpy as np
import pytest

import trainopt
from trainopt.dispatch.solve import solve_dispatch
from trainopt.dispatch.trip_reserve import solve_secure_dispatch, trip_share_of
from trainopt.dispatch.unit_curve import UnitCurve
from trainopt.errors import InputError
from trainopt.station.reduced import Station, evaluate_split


def _curve(name, lo, hi, slope):
    flow = np.linspace(lo, hi, 5)
    return UnitCurve(name, flow, 1e5 + slope * flow + 50.0 * flow**2)


def test_reserve_starts_a_second_unit_and_costs_more():
    big, small = _curve("big", 20, 100, 1e4), _curve("small", 10, 45, 1.5e4)
    plain = solve_dispatch([big, small], 60.0)
    secure = solve_secure_dispatch([big, small], 60.0, 0.7)
    assert plain.running == {"big": True, "small": False}  # one big unit is cheapest
    # with 'big' tripped, 'small' (45 kg/s) must carry 0.7 x 60 = 42 kg/s: both run
    assert secure.running == {"big": True, "small": True}
    assert sum(secure.net_flow.values()) == pytest.approx(60.0, rel=1e-9)
    assert secure.objective > plain.objective
    impossible = solve_secure_dispatch([big, small], 60.0, 0.8)  # 48 > 45 kg/s
    assert impossible.status == "infeasible"
    assert "with any one of them tripped" in impossible.reason


def test_share_refused_outside_zero_to_one():
    assert trip_share_of("90 %") == pytest.approx(0.9, rel=1e-12)
    with pytest.raises(InputError, match="trip_reserve"):
        trip_share_of("120 %")


def test_optimize_with_trip_reserve_on_the_true_model(demo_case):
    result = trainopt.optimize(demo_case, demand="30 MMSCMD", trip_reserve="90 %",
                               baselines=False)
    assert result.status == "optimal"
    security = result.solver["trip_reserve"]
    assert security["piecewise_objective_with"] >= security["piecewise_objective_without"]
    running = [u for u in result.units.to_dict(orient="records") if u["running"]]
    demand = result.demand_kg_s
    station = Station(demo_case)
    curves = {c.name: c for c in station.unit_curves()}
    assert len(running) >= 2
    for tripped in running:
        others = [curves[u["name"]] for u in running if u is not tripped]
        split = solve_dispatch([UnitCurve(c.name, c.flow, c.cost) for c in others],
                               0.9 * demand, recycle="least_cost")
        assert split.status != "infeasible", tripped["name"]
        net = {n: m for n, m in split.net_flow.items() if m > 0}
        assert evaluate_split(station, net).status != "infeasible", tripped["name"]
