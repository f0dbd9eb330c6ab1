"""The commitment schedule on the invented demo: trip reserve on the true model, rules, bad input.

References: the trip reserve is checked period by period and unit by unit on the true model
(``trainopt.station.reduced.evaluate_split``: map, gas, driver) independently of the
schedule's own grouped check; the start-stop rules are checked here from the output table;
keeping the initial commitment is a feasible schedule, so the optimum costs no more
(common practice: an optimum is no worse than any feasible point). The forecasts are
written here from the demo's invented week; they are test inputs, not reference data.
"""

import dataclasses
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trainopt.dispatch.solve import solve_dispatch
from trainopt.errors import InputError
from trainopt.station.reduced import Station, evaluate_split
from trainopt.studies.schedule import schedule

DEMO = Path(__file__).resolve().parents[2] / "cases" / "demo"
WEEK = DEMO / "forecast" / "week.csv"


@pytest.fixture(scope="module")
def week():
    return pd.read_csv(WEEK)


@pytest.fixture(scope="module")
def secured(demo_case):
    return schedule(demo_case, WEEK, trip_reserve="90 %", hours=6)


def test_trip_reserve_holds_on_the_true_model_for_every_period_and_unit(demo_case, secured):
    periods = secured.periods
    frame = pd.read_csv(WEEK).head(6)
    assert len(periods["time"].unique()) == 6
    checked = 0
    for t, (time, rows) in enumerate(periods.groupby("time", sort=True)):
        carrying = rows[rows["running"] & ~rows["starting"]]
        demand = carrying["net_flow_kg_s"].sum()
        here = dataclasses.replace(
            demo_case, suction_pressure=(frame["suction_pressure [barg]"][t] * 1e5
                                         + demo_case.atmospheric_pressure),
            discharge_pressure=(frame["discharge_pressure [barg]"][t] * 1e5
                                + demo_case.atmospheric_pressure),
            suction_temperature=frame["suction_temperature [degC]"][t] + 273.15,
            ambient_temperature=frame["ambient_temperature [degC]"][t] + 273.15)
        station = Station(here, objective="cost")  # this period's own conditions
        curves = {c.name: c for c in station.unit_curves()}
        for tripped in carrying["unit"]:
            others = [dataclasses.replace(curves[u], status="available", group=None)
                      for u in carrying["unit"] if u != tripped]
            split = solve_dispatch(others, 0.9 * demand, recycle="least_cost")
            assert split.status != "infeasible", f"{time}: trip of {tripped}"
            net = {u: m for u, m in split.net_flow.items() if m > 0}
            assert evaluate_split(station, net).status != "infeasible", f"{time}: {tripped}"
            checked += 1
    assert checked >= 12  # at least two units carry in every period
    assert secured.trip_check["feasible"].all()


def test_schedule_keeps_rules_and_beats_keeping_the_initial_commitment(demo_case, secured):
    p = secured.periods
    rules = demo_case.unit_rules
    for unit, rows in p.groupby("unit"):
        on = rows.sort_values("time")["running"].to_numpy()
        r = rules[unit]
        initial = r.initial_running if r.initial_running is not None else True
        states = np.concatenate([[initial], on]).astype(int)
        edges = np.flatnonzero(np.diff(states)) + 1
        lengths = np.diff(np.concatenate([[0], edges, [states.size]]))
        for k, (start, length) in enumerate(zip(np.concatenate([[0], edges]), lengths,
                                                strict=True)):
            if k == 0 or start + length >= states.size:
                continue  # the run before the horizon and the run cut by its end
            need = (r.min_up_time if states[start] else r.min_down_time) / 3600.0
            assert length >= need, f"{unit}: run of {length} h from period {start}"
        starting = rows.sort_values("time")["starting"].to_numpy()
        assert starting.sum() <= np.ceil(r.startup_time / 3600.0) * rows["started"].sum()
        assert rows.loc[rows["starting"], "net_flow_kg_s"].eq(0).all()  # no flow starting
    comparison = secured.comparison.set_index("way")
    keep = comparison.loc["keep initial commitment"]
    if keep["infeasible_periods"] == 0 and "trip" not in keep["note"]:
        assert secured.costs["total"] <= keep["total_cost_USD"] * (1 + 1e-3)  # MIP gap 0.1 %
    free = comparison.loc["schedule without trip reserve", "total_cost_USD"]
    assert free <= secured.costs["total"] * (1 + 1e-3)  # security costs, never saves
    totals = p.groupby("time")["net_flow_kg_s"].sum().to_numpy()
    assert totals.min() > 0
    json.dumps(secured.to_dict())  # every value JSON-ready


def _forecast(path, frame):
    frame.to_csv(path, index=False)
    return path


def test_demand_above_capacity_names_periods(demo_case, week, tmp_path):
    frame = week.head(6).copy()
    frame.loc[[2, 3], "demand [MMSCMD]"] = 90.0
    with pytest.raises(InputError, match=r"2 period\(s\) \(2024-01-08 02:00, 2024-01-08 "
                       r"03:00\); the largest shortfall is .* kg/s"):
        schedule(demo_case, _forecast(tmp_path / "f.csv", frame), compare=False)


def test_forecast_not_covering_the_horizon(demo_case):
    with pytest.raises(InputError, match="covers 168 h .* the horizon is 200 h"):
        schedule(demo_case, WEEK, hours=200)


def test_forecast_gap_and_time_going_backwards_refused(demo_case, week, tmp_path):
    gap = week.head(8).drop(index=4)
    with pytest.raises(InputError, match="fill the gap"):
        schedule(demo_case, _forecast(tmp_path / "gap.csv", gap))
    back = week.head(8).iloc[[0, 1, 3, 2, 4]]
    with pytest.raises(InputError, match="go backwards"):
        schedule(demo_case, _forecast(tmp_path / "back.csv", back))


def test_initial_state_breaking_min_up_time(demo_case):
    rules = dict(demo_case.unit_rules)
    rules["D"] = dataclasses.replace(rules["D"], initial_running=True, hours_in_state=3600.0,
                                     min_up_time=6 * 3600.0)
    trains = tuple(dataclasses.replace(t, status=t.status.__class__("offline"))
                   if t.name == "D" else t for t in demo_case.trains)
    case = dataclasses.replace(demo_case, unit_rules=rules, trains=trains)
    with pytest.raises(InputError, match=r"units\[3\].commitment.initial_state: D is running "
                       r"for 1 period\(s\).*offline"):
        schedule(case, WEEK, hours=4)


def test_rules_allowing_no_schedule_say_which_rule_and_period(demo_case, week, tmp_path):
    rules = {n: dataclasses.replace(r, initial_running=False, hours_in_state=3600.0,
                                    min_down_time=4 * 3600.0)
             for n, r in demo_case.unit_rules.items()}
    case = dataclasses.replace(demo_case, unit_rules=rules)
    with pytest.raises(InputError, match=r"commitment rules: no schedule meets every rule; "
                       r"(initial_state|min_down_time): the demand cannot be met in 3 "
                       r"period\(s\) from 2024-01-08 00:00"):
        schedule(case, WEEK, hours=5, compare=False)


def test_rule_breaks_counts_short_runs_and_busy_days():
    from trainopt.dispatch.commitment_model import CommitmentRules
    from trainopt.studies.schedule import rule_breaks

    rules = {"A": CommitmentRules(min_up=3, min_down=2, max_starts=1, initial_on=False,
                                  initial_periods=5)}
    # hand count: run of 2 on (< 3), run of 1 off (< 2), a second start inside 6 periods in
    # the windows ending at periods 3, 4 and 5 (the last run is cut by the horizon)
    on = np.array([[1], [1], [0], [1], [1], [1]], bool)
    assert rule_breaks(on, rules, 6) == 2 + 3
    assert rule_breaks(np.array([[0], [0], [1], [1], [1], [0]], bool), rules, 6) == 0
