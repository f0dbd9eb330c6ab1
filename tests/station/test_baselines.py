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

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.optimize import brentq

import trainopt
from trainopt.report.terminal import format_result
from trainopt.station.baselines import baseline_splits, contrast_in_words
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
        for key in ("baselines", "baselines_all_units"):
            for rule, entry in getattr(optimum, key).items():
                if entry["status"] != "feasible":
                    continue
                assert_allclose(sum(entry["net_mass_flow_kg_s"].values()),
                                optimum.demand_kg_s, rtol=1e-9, err_msg=rule)  # root finder


def test_rules_keep_the_optimums_commitment(trio, demo):
    for _, optimum in (trio, demo):
        on = optimum.units[optimum.units["running"].astype(bool)]["name"].tolist()
        for entry in optimum.baselines.values():
            assert entry["running_units"] == on
            if entry["status"] == "feasible":
                assert list(entry["net_mass_flow_kg_s"]) == on


def test_each_rule_is_what_it_says_on_the_true_model(trio, demo):
    for station, optimum in (trio, demo):
        on = optimum.units[optimum.units["running"].astype(bool)]["name"].tolist()
        splits = baseline_splits(station, on, optimum.demand_kg_s)
        flows = splits["equal_flow"].flows
        assert_allclose(list(flows.values()), optimum.demand_kg_s / len(on), rtol=1e-15)

        units = evaluate_split(station, splits["equal_margin"].flows).units.set_index("name")
        margin = units.loc[on, "control_line_margin_pct"].to_numpy(float)
        # the rule interpolates margin against flow on 80 true samples per unit: equal to
        # 1e-5 relative (regression value (own output) 3e-9)
        assert_allclose(margin, margin.mean(), rtol=1e-5)

        units = evaluate_split(station, splits["equal_speed"].flows).units.set_index("name")
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


# --- a rule that would put a unit past a limit is infeasible, the unit and limit named ------


def speed_fraction(station: Station, name: str, flow: float) -> float:
    """Speed over maximum speed of one unit at a net flow, on the true model."""
    units = evaluate_split(station, {name: flow}).units.set_index("name")
    return units.loc[name, "speed_rpm"] / (60 * station.case.train(name).speed_max)


def test_equal_speed_that_would_overload_a_unit_is_infeasible(demo_station, demo_case):
    # The demo at its case demand: the optimum runs A and C. By the rule's own definition on
    # the true model: C reaches its largest flow (driver power) at some speed fraction x;
    # A at that same fraction carries m_A (root found on the true model); if m_A + C's
    # largest flow is below the demand, the rule would push C past its driver power, so it
    # cannot be run (it used to hold C at its largest flow and report it feasible).
    optimum = trainopt.optimize(demo_case)
    assert optimum.units.set_index("name")["running"].to_dict() == {
        "A": True, "B": False, "C": True, "D": False}
    c = demo_station.curves["C"]
    x = speed_fraction(demo_station, "C", c.max_flow)
    a = demo_station.curves["A"]
    m_a = brentq(lambda m: speed_fraction(demo_station, "A", m) - x, a.min_flow, a.max_flow,
                 xtol=1e-6)
    assert m_a + c.max_flow < optimum.demand_kg_s  # the hand check: the rule cannot deliver
    entry = optimum.baselines["equal_speed"]
    assert entry["status"] == "infeasible"
    assert entry["reason"].startswith(
        f"C reaches its largest flow, {c.max_flow:.2f} kg/s set by the driver power, at "
        f"{100 * x:.1f} % of maximum speed; at that common speed the units carry "
        f"{m_a + c.max_flow:.2f} kg/s of the {optimum.demand_kg_s:.2f} kg/s asked")
    assert "saving_kW" not in entry


@pytest.mark.parametrize("demand", [520.0, 560.0, 600.0])
def test_feasible_rules_hold_their_quantity_on_every_unit(demo_station, demand):
    # No clamping: wherever a speed or margin rule is reported feasible on all four demo
    # units, every unit above its least flow has the common speed fraction or control-line
    # margin on the true model, and none is past its largest flow.
    names = list(demo_station.curves)
    splits = baseline_splits(demo_station, names, demand)
    for rule, column in (("equal_margin", "control_line_margin_pct"),
                         ("equal_speed", None)):
        split = splits[rule]
        if not split.feasible:
            top = split.reason.split(" reaches its largest flow")[0]
            assert top in names
            assert "set by the driver power" in split.reason  # the demo's binding limit
            continue
        units = evaluate_split(demo_station, split.flows).units.set_index("name")
        free = [n for n in names
                if split.flows[n] > demo_station.curves[n].min_flow * (1 + 1e-9)]
        values = [units.loc[n, column] if column else speed_fraction(demo_station, n,
                                                                     split.flows[n])
                  for n in free]
        if len(values) >= 2:
            assert_allclose(values, values[0], rtol=1e-4, err_msg=rule)  # 80 samples
        for n in names:
            assert split.flows[n] <= demo_station.curves[n].max_flow * (1 + 1e-9)


# --- each rule twice: on the optimum's units and on every available unit ---------------------


def test_rules_on_all_available_units_show_the_commitments_value(demo_station, demo_case):
    # The demo at its case demand (383.96 kg/s) runs A and C. Equal flow on all four units
    # gives each 96 kg/s, below each unit's least flow (A, B 103.6, C 163.4, D 107.6 kg/s on
    # the reduced curves), so each runs at its least flow and recycles the rest: by hand,
    # the station power is the sum of the four units' powers at their least flows.
    optimum = trainopt.optimize(demo_case)
    entry = optimum.baselines_all_units["equal_flow"]
    assert entry["running_units"] == ["A", "B", "C", "D"]
    curves = demo_station.curves
    least = {n: curves[n].min_flow for n in "ABCD"}
    assert all(optimum.demand_kg_s / 4 < m for m in least.values())
    by_hand = sum(evaluate_split(demo_station, {n: m}).total_shaft_power
                  for n, m in least.items())
    assert_allclose(entry["total_shaft_power_kW"] * 1e3, by_hand, rtol=1e-9)
    assert_allclose(entry["total_recycle_kg_s"], sum(least.values()) - optimum.demand_kg_s,
                    rtol=1e-9)
    assert_allclose(entry["saving_kW"], (by_hand - optimum.total_shaft_power) / 1e3,
                    rtol=1e-9)
    assert entry["saving_kW"] > 1000.0  # kW: running all four costs megawatts of recycle
    text = format_result(optimum)
    section = text.split("Load-sharing rules on every available unit")[1]
    assert f"Against equal flow: {entry['total_shaft_power_kW']:.0f} kW, saving " \
           f"{entry['saving_kW']:.0f} kW" in section


# --- compared in the objective's own unit ------------------------------------------------------

FUEL_USD_PER_KWH = 3.8 * 3.6e-3  # demo economics: 3.8 USD/GJ, 1 kWh = 3.6 MJ (SI definition)
POWER_USD_PER_KWH = 72 / 1e3  # demo economics: 72 USD/MWh


def test_cost_objective_compares_in_currency_per_hour(demo_station, demo_case):
    optimum = trainopt.optimize(demo_case, objective="cost")
    cost_station = Station(demo_case, objective="cost")
    bound_cost = 2 * sum(optimum.solver["objective_error_bound"].values()) * 3600  # USD/h
    seen = 0
    for key in ("baselines", "baselines_all_units"):
        for rule, entry in getattr(optimum, key).items():
            if entry["status"] != "feasible":
                continue
            seen += 1
            assert entry["objective_unit"] == "USD/h"
            units = evaluate_split(cost_station, entry["net_mass_flow_kg_s"]).units
            on = units[units["running"].astype(bool)]
            # by hand: motors at the electricity price, the turbine C at the fuel price
            by_hand = sum(r.driver_input_kW * (FUEL_USD_PER_KWH if r.name == "C" else
                                               POWER_USD_PER_KWH) for r in on.itertuples())
            assert_allclose(entry["total_objective"], by_hand, rtol=1e-9, err_msg=rule)
            assert_allclose(entry["objective_saving"],
                            by_hand - optimum.total("cost_per_h"), rtol=1e-9)
            assert entry["objective_saving"] >= -bound_cost, rule  # never worse than a rule
    assert seen >= 2
    margin = optimum.baselines["equal_margin"]
    # the cost optimum loads the turbine (cheap fuel) and takes more shaft power than equal
    # margin: the words say so, with the shaft power beside the cost
    assert margin["saving_kW"] < 0 < margin["objective_saving"]
    assert "more shaft power" in margin["note"]
    text = format_result(optimum)
    assert (f"Against equal margin: cost {margin['total_objective']:.0f} USD/h, saving "
            f"{margin['objective_saving']:.0f} USD/h") in text
    assert f"shaft power {margin['total_shaft_power_kW']:.0f} kW" in text
    assert margin["note"] in text


def test_signs_that_differ_are_explained():
    # an audit's totals: 330 MWh more driver input, yet 71 686 USD cheaper, for least
    # shaft power (hand-made figures)
    words = contrast_in_words("shaft_power", 500.0, 500.0, -330.0, 71686.0, "USD",
                              "the recorded operation", energy_unit="MWh")
    assert "330 MWh more driver input" in words
    assert "still costs 71686 USD less" in words
    assert contrast_in_words("shaft_power", 500.0, 500.0, 20.0, 10.0, "USD") == ""


def test_a_rule_on_an_unknown_margin_says_so(demo_station, monkeypatch):
    # A margin that is not known somewhere on a unit's range (NaN, e.g. off the tested map)
    # cannot be shared equally: the rule is refused in words, never split on garbage.
    true_profile = demo_station.profile

    def gap_in_d(name, flows):
        fraction, margin = true_profile(name, flows)
        if name == "D":
            margin = np.where(np.arange(len(margin)) == 3, np.nan, margin)
        return fraction, margin

    monkeypatch.setattr(demo_station, "profile", gap_in_d)
    split = baseline_splits(demo_station, ["A", "D"], 200.0)["equal_margin"]
    assert not split.feasible
    assert split.reason.startswith("D: its control-line margin is not known")


@pytest.mark.parametrize("objective", ["shaft_power", "cost"])
def test_rule_totals_are_the_full_evaluations_totals(demo_case, objective):
    # reference: evaluate_split's full result table (CoolProp rows and all) on the same
    # split; the rules' comparison sums only what it shows, from one vectorised operation
    # per unit, and must give the very same totals
    station = Station(demo_case, objective=objective)
    optimum = trainopt.optimize(demo_case, demand="41 MMSCMD", objective=objective)
    for rule, entry in optimum.baselines_all_units.items():
        full = evaluate_split(station, entry["net_mass_flow_kg_s"])
        assert entry["status"] == "feasible", rule
        assert entry["total_shaft_power_kW"] == full.total("shaft_power_kW")
        assert entry["total_driver_input_kW"] == full.total("driver_input_kW")
        assert entry["total_cost_per_h"] == full.total("cost_per_h")
        assert entry["total_recycle_kg_s"] == full.total("recycle_kg_s")
