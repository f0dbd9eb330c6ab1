"""A shared interstage header: the outer search against brute force, and bad input.

References: brute force over the header pressure (a dense grid, every point reduced and
dispatched the same way) and, at the chosen pressure, an exhaustive search over splits
on the exact model (:func:`trainopt.dispatch.reduction.operate`, CoolProp states, independent of
the gas table). The demo shared-header case is invented data used as a test bed only.
"""

from pathlib import Path

import numpy as np
import pytest
import yaml
from numpy.testing import assert_allclose

import trainopt
from trainopt import InputError
from trainopt.dispatch.reduction import operate
from trainopt.physics.duty import Duty
from trainopt.station.header import HeaderSearch, group_case

ROOT = Path(__file__).parents[2]
DEMO = ROOT / "cases" / "demo"


@pytest.fixture(scope="module")
def header_yaml():
    return yaml.safe_load((DEMO / "shared_header.yaml").read_text())


@pytest.fixture(scope="module")
def header_case():
    return trainopt.load_case(DEMO / "shared_header.yaml")


@pytest.fixture(scope="module")
def searched(header_case):
    search = HeaderSearch(header_case)
    demand = header_case.demand_mass_flow()
    return search, demand, search.search(demand)


@pytest.fixture(scope="module")
def optimized(header_case):
    return trainopt.optimize(header_case, baselines=False)


def test_search_matches_a_brute_force_grid_of_header_pressures(searched):
    search, demand, best = searched
    feasible = [p.pressure for p in search.evaluations if np.isfinite(p.objective)]
    grid = np.linspace(min(feasible) * 0.98, max(feasible) * 1.02, 17)
    brute = min(search.evaluate(float(p), demand).objective for p in grid)
    # Golden-section refinement may only beat the grid, or lose to it by the grid-free
    # noise of two reductions (breakpoint tolerance 2e-4 of each unit's power).
    assert best.objective <= brute * (1 + 2e-4)
    assert np.isfinite(best.objective)


def test_optimize_reports_both_groups_at_the_searched_pressure(optimized, searched):
    _, demand, best = searched
    result = optimized
    assert result.status == "optimal"
    assert_allclose(result.header["pressure_kPa"] * 1e3, best.pressure, rtol=1e-12)
    rows = result.units
    assert set(rows["stage"]) == {"upstream", "downstream"}
    for side in ("upstream", "downstream"):
        part = rows[(rows["stage"] == side) & rows["running"]]
        # Every kilogram goes through both groups.
        assert_allclose(part["net_mass_flow_kg_s"].sum(), demand, rtol=1e-9)
    # The exact model at the chosen pressure against the fast search model: each is within
    # its breakpoint tolerance (2e-4 of each unit's power) of the true curves.
    assert_allclose(result.total_shaft_power, best.objective, rtol=1e-3)


def test_split_at_the_chosen_pressure_agrees_with_exhaustive_search(header_case, optimized,
                                                                    searched):
    """Exhaustive search over splits on the exact model (CoolProp duty, dispatch.reduction)."""
    _, demand, best = searched
    result = optimized
    pressure = best.pressure
    total = 0.0
    net = np.linspace(0.0, demand, int(round(demand / 0.25)) + 1)  # about 0.25 kg/s steps
    for side in ("upstream", "downstream"):
        group = group_case(header_case, side, pressure)
        ambient = group.ambient_temperature
        costs = []
        for train in group.trains:
            basis = train.sections[0].compressor_map.basis
            duty = Duty.build(group.gas, group.suction_pressure, group.suction_temperature,
                              group.discharge_pressure, basis)
            through = np.linspace(0.2 * demand, demand, 801)
            op = operate(train, duty, through, ambient)
            bad = np.zeros(through.size, bool)
            for v in op.violations(train).values():
                bad |= v
            power = np.where(bad, np.inf, op.shaft_power)
            ok = np.flatnonzero(~bad)
            lo = through[ok[0]] if ok.size else np.inf
            # Net flow x: stopped at 0, recycling up to the least flow, else on the curve.
            cost = np.where(net <= 0, 0.0, np.where(net < lo, power[ok[0]] if ok.size else
                                                    np.inf, np.interp(net, through, power)))
            costs.append(cost)
        # Exhaustive: every commitment and every split on the net-flow grid (dynamic
        # programming over units, exact on the grid).
        value = np.zeros(net.size)
        value[1:] = np.inf
        for cost in costs:
            value = _combine(value, cost)
        total += value[-1]
    # Both sides are upper bounds of the true optimum at this pressure: the brute force
    # through its 0.25 kg/s grid and linear interpolation between 801 through-flows, the
    # optimiser through its breakpoint tolerance (2e-4 of each unit's power) and MIP gap
    # (1e-4). 5e-4 covers both.
    assert_allclose(result.total_shaft_power, total, rtol=5e-4)


def _combine(value: np.ndarray, cost: np.ndarray) -> np.ndarray:
    """Dynamic-programming step: best total over splits of each grid flow with one more unit."""
    n = value.size
    out = np.full(n, np.inf)
    for j in range(n):
        out[j] = np.min(value[: j + 1][::-1] + cost[: j + 1])
    return out


def test_evaluate_takes_the_header_pressure_in_the_split(header_case):
    split = {"LP1": "100 kg/s", "LP2": "100 kg/s", "HP1": "200 kg/s",
             "interstage_header": "48 bar"}
    result = trainopt.evaluate(header_case, split)
    assert result.status != "infeasible", result.reason
    assert_allclose(result.header["pressure_kPa"], 4800.0, rtol=1e-12)
    left_out = result.units[~result.units["running"].astype(bool)]
    assert set(left_out["name"]) == {"LP3", "HP2"}  # stopped, with the case's status
    assert set(left_out["status"]) == {"available"}
    with pytest.raises(InputError, match="interstage_header: is missing"):
        trainopt.evaluate(header_case, {"LP1": "100 kg/s", "HP1": "100 kg/s"})
    with pytest.raises(InputError, match="same total"):
        trainopt.evaluate(header_case, {"LP1": "100 kg/s", "HP1": "90 kg/s",
                                        "interstage_header": "48 bar"})


def test_a_header_with_nothing_downstream_is_refused(tmp_path, header_yaml, write_demo_variant):
    data = yaml.safe_load(yaml.safe_dump(header_yaml))
    data["interstage_header"]["downstream_units"] = []
    with pytest.raises(InputError, match="downstream_units: the shared header has nothing "
                       "downstream"):
        trainopt.load_case(write_demo_variant(tmp_path, data))


def test_a_unit_on_neither_side_is_refused(tmp_path, header_yaml, write_demo_variant):
    data = yaml.safe_load(yaml.safe_dump(header_yaml))
    data["interstage_header"]["downstream_units"] = ["HP1"]
    with pytest.raises(InputError, match="unit 'HP2' is on neither side"):
        trainopt.load_case(write_demo_variant(tmp_path, data))


def test_a_header_cooler_that_would_heat_the_gas_is_refused(tmp_path, header_yaml,
                                                            write_demo_variant):
    data = yaml.safe_load(yaml.safe_dump(header_yaml))
    data["interstage_header"]["cooler"]["outlet_temperature"] = "95 degC"
    case = trainopt.load_case(write_demo_variant(tmp_path, data))
    with pytest.raises(InputError, match="cooler.outlet_temperature: 95.0 degC is above the gas "
                       "entering the cooler at every header pressure.*this case's conditions"):
        HeaderSearch(case)


def test_a_header_range_outside_the_headers_is_refused(tmp_path, header_yaml, write_demo_variant):
    data = yaml.safe_load(yaml.safe_dump(header_yaml))
    data["interstage_header"]["pressure_min"] = "20 bar"
    with pytest.raises(InputError, match="pressure_min: 2000 kPa is not between"):
        trainopt.load_case(write_demo_variant(tmp_path, data))


def test_rules_run_twice_in_both_groups(header_case, searched):
    # Each rule on the optimum's units and on every available unit of both groups, at the
    # searched header pressure; the saving is the rule's power less the optimum's.
    from trainopt.station.header import evaluate_header

    search, demand, best = searched
    result = evaluate_header(header_case, demand, best.pressure, search, baselines=True)
    running = result.units[result.units["running"].astype(bool)]["name"].tolist()
    names = [t.name for t in header_case.trains]
    for key, units in (("baselines", running), ("baselines_all_units", names)):
        for rule, entry in getattr(result, key).items():
            assert sorted(entry["running_units"]) == sorted(units), (key, rule)
            if entry["status"] != "feasible":
                continue
            assert_allclose(entry["saving_kW"], entry["total_shaft_power_kW"]
                            - result.total_shaft_power / 1e3, rtol=1e-9, atol=1e-6)  # kW
            assert_allclose(entry["objective_saving"], entry["saving_kW"], rtol=1e-9,
                            atol=1e-6)
            assert entry["saving_kW"] > -0.01 * result.total_shaft_power / 1e3  # 2e-4 x units
    assert result.baselines_all_units["equal_flow"]["saving_kW"] > 1000.0  # five units run
