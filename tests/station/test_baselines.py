"""The usual load-sharing rules, checked by their own definitions on the true model.

Each rule keeps the optimum's commitment and splits the same demand: equal net flow, equal
fraction of maximum speed, equal relative distance to the surge control line (the usual
practice of load-sharing controllers, common practice). The checks: the shares add up to the
demand, the rule's own quantity is equal across units once evaluated on the true model
(:func:`trainopt.station.reduced.evaluate_split`), the optimum never costs more than any rule beyond
the optimiser's stated bound (tests/station/test_split.py), and with identical units all three
rules are the optimum (equal sharing; Wood & Wollenberg, Power Generation, Operation and
Control, ch. 3: equal incremental cost, common practice).
"""

from pathlib import Path

import pytest
from numpy.testing import assert_allclose

import trainopt
from trainopt.station.baselines import baseline_splits
from trainopt.station.reduced import Station, evaluate_split

ROOT = Path(__file__).parents[2]
SMALL = ROOT / "tests" / "data" / "station_small"
DEMO = ROOT / "cases" / "demo" / "station.yaml"
RULES = ("equal_flow", "equal_speed", "equal_margin")


@pytest.fixture(scope="module")
def pair():
    case = trainopt.load_case(SMALL / "gaslib135_pair.yaml")
    return Station(case), trainopt.optimize(case, demand=150.0)


@pytest.fixture(scope="module")
def trio():
    case = trainopt.load_case(SMALL / "gaslib_trio.yaml")
    return Station(case), trainopt.optimize(case, demand=300.0)


@pytest.fixture(scope="module")
def demo():
    case = trainopt.load_case(DEMO)
    return Station(case), trainopt.optimize(case, demand=500.0)


def bound(station: Station, power: float) -> float:
    """The optimiser's stated bound [W]: 2 sum(error_bound) + MIP gap 1e-4 x power."""
    return 2 * sum(c.error_bound for c in station.curves.values()) + 1e-4 * power


def test_identical_units_make_every_rule_the_optimum(pair):
    station, optimum = pair
    baselines = optimum.baselines
    assert set(baselines) == set(RULES)
    for rule in RULES:
        entry = baselines[rule]
        assert entry["status"] == "feasible"
        # identical units: every rule gives each half, exactly for equal flow and to the
        # root finder's 1e-12 for the others
        assert_allclose(list(entry["net_mass_flow_kg_s"].values()), [75.0, 75.0], rtol=1e-9)
        assert_allclose(entry["total_shaft_power_kW"], optimum.total_shaft_power / 1e3,
                        rtol=1e-9)
        assert abs(entry["saving_kW"]) < 1e-6  # kW; the same split, the same power


def test_every_rule_delivers_the_demand(pair, trio, demo):
    for _, optimum in (pair, trio, demo):
        for rule, entry in optimum.baselines.items():
            assert_allclose(sum(entry["net_mass_flow_kg_s"].values()), optimum.demand_kg_s,
                            rtol=1e-9, err_msg=rule)  # root finder to 1e-12


def test_rules_keep_the_optimums_commitment(trio, demo):
    for _, optimum in (trio, demo):
        on = optimum.units[optimum.units["running"].astype(bool)]["name"].tolist()
        for entry in optimum.baselines.values():
            assert list(entry["net_mass_flow_kg_s"]) == on


def test_each_rule_is_what_it_says_on_the_true_model(trio, demo):
    for station, optimum in (trio, demo):
        on = optimum.units[optimum.units["running"].astype(bool)]["name"].tolist()
        splits = baseline_splits(station, on, optimum.demand_kg_s)
        flows = splits["equal_flow"]
        assert_allclose(list(flows.values()), optimum.demand_kg_s / len(on), rtol=1e-15)

        units = evaluate_split(station, splits["equal_margin"]).units.set_index("name")
        margin = units.loc[on, "control_line_margin_pct"].to_numpy(float)
        # the rule interpolates margin against flow on 80 true samples per unit: equal to
        # 1e-5 relative (regression value (own output) 3e-9)
        assert_allclose(margin, margin.mean(), rtol=1e-5)

        units = evaluate_split(station, splits["equal_speed"]).units.set_index("name")
        fraction = [units.loc[n, "speed_rpm"] / (60 * station.case.train(n).speed_max)
                    for n in on]
        # a unit held at its surge control line turns faster than the common fraction (the
        # rule cannot slow it further without recycle); the others share one fraction
        free = [f for n, f in zip(on, fraction, strict=True)
                if units.loc[n, "net_mass_flow_kg_s"] > station.curves[n].min_flow * (1 + 1e-9)]
        assert len(free) >= 2
        assert_allclose(free, sum(free) / len(free), rtol=1e-5)  # 80 samples, as above


def test_optimum_never_costs_more_than_a_rule(pair, trio, demo):
    for station, optimum in (pair, trio, demo):
        power = optimum.total_shaft_power
        for rule, entry in optimum.baselines.items():
            if entry["status"] != "feasible":
                continue
            rule_power = entry["total_shaft_power_kW"] * 1e3
            assert power <= rule_power + bound(station, power), rule
            # the saving is the difference, and its share of the rule's power
            assert_allclose(entry["saving_kW"], (rule_power - power) / 1e3, rtol=1e-9)
            assert_allclose(entry["saving_pct"], 100 * (rule_power - power) / rule_power,
                            rtol=1e-9)
            again = evaluate_split(station, entry["net_mass_flow_kg_s"])
            assert_allclose(again.total_shaft_power, rule_power, rtol=1e-12)


def test_unequal_units_make_the_rules_cost_more(trio):
    # The trio's units differ, so the rules waste power: equal flow makes the large unit
    # recycle (100 kg/s is below its least flow, about 142 kg/s).
    station, optimum = trio
    entry = optimum.baselines["equal_flow"]
    least = station.curves["L"].min_flow
    assert_allclose(entry["total_recycle_kg_s"], least - 100.0, rtol=1e-9)
    for rule in RULES:
        # kW: regression values (own output) 364-2963 kW
        assert optimum.baselines[rule]["saving_kW"] > 100.0


def test_a_rule_a_unit_cannot_carry_is_infeasible_in_words(demo):
    # Demo at 500 kg/s: A, B and C run; equal flow asks 166.67 kg/s of A, whose largest flow
    # is set by its driver power.
    station, optimum = demo
    entry = optimum.baselines["equal_flow"]
    top = station.curves["A"].max_flow
    assert entry["status"] == "infeasible"
    assert entry["reason"] == (f"A cannot carry 166.67 kg/s: its largest through-flow today "
                               f"is {top:.2f} kg/s, set by the driver power")
    assert "saving_kW" not in entry
