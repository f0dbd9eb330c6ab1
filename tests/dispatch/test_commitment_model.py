"""The commitment model against an exact dynamic program and a published unit-commitment optimum.

References: the exact forward dynamic program of :mod:`trainopt.dispatch.commitment_dp`
(Wood, Wollenberg and Sheble 2014, ch. 4), computed in the same run; the ten-unit system of
Kazarlis, Bakirtzis and Petridis (1996) with its published optimum (tests/data/unit_commitment,
from memory). Rule checks are written here independently of the model.
"""

from pathlib import Path

import numpy as np
import pytest
import yaml

from trainopt.dispatch.commitment_dp import convex_dispatch_cost, dp_commitment
from trainopt.dispatch.commitment_model import CommitmentRules
from trainopt.dispatch.commitment_solve import diagnose, solve_commitment
from trainopt.dispatch.unit_curve import UnitCurve

DATA = Path(__file__).parents[1] / "data" / "unit_commitment" / "ten_unit_system.yaml"
HOUR = 3600.0


def _curve(name, lo, hi, a, b, c, points=7):
    flow = np.linspace(lo, hi, points)
    return UnitCurve(name, flow, a + b * flow + c * flow**2)  # [currency/s], convex


UNITS = {"A": _curve("A", 10, 30, 2.0, 0.30, 0.004), "B": _curve("B", 12, 35, 2.5, 0.28, 0.005),
         "C": _curve("C", 15, 45, 3.5, 0.25, 0.003), "D": _curve("D", 8, 25, 1.5, 0.35, 0.006)}


def _demand(n, seed):
    rng = np.random.default_rng(seed)
    return np.clip(55 + 35 * np.sin(np.arange(n) / 24 * 2 * np.pi) + rng.normal(0, 5, n), 0, 120)


def rule_breaks(sol, rules, window):
    """Every rule broken by a solution, checked from its on/carrying arrays alone."""
    out = []
    for j, name in enumerate(sol.units):
        r = rules[name]
        on = np.concatenate([[r.initial_on], sol.on[:, j]]).astype(int)
        runs, state, length = [], on[0], r.initial_periods
        for t in range(1, on.size):
            if on[t] == state:
                length += 1
            else:
                runs.append((state, length, t - 1))
                state, length = on[t], 1
        for state, length, end in runs:  # completed runs only; the last may be cut by the horizon
            need = r.min_up_effective if state else r.min_down
            if length < need:
                out.append(f"{name}: {'up' if state else 'down'} {length} < {need} ending {end}")
        starts = np.flatnonzero(np.diff(on) == 1)
        if r.max_starts is not None:
            for t in range(sol.on.shape[0]):
                count = np.sum((starts <= t) & (starts > t - window))
                if count > r.max_starts:
                    out.append(f"{name}: {count} starts in the window ending {t}")
        for s in starts:
            late = range(s, min(s + r.startup_periods, sol.on.shape[0]))
            if any(sol.carrying[k, j] or sol.through_flow[k, j] > 0 for k in late):
                out.append(f"{name}: carries flow during its start-up from {s}")
    balance = sol.net_flow.sum(axis=1)
    return out, balance


def test_milp_matches_exact_dp_three_units_48_periods():
    rules = {"A": CommitmentRules(start_cost=800, stop_cost=100, min_up=3, min_down=2,
                                  initial_on=True, initial_periods=1),
             "B": CommitmentRules(start_cost=600, min_up=2, min_down=3, startup_periods=1,
                                  initial_on=False, initial_periods=1),
             "C": CommitmentRules(start_cost=900, cold_start_cost=1600, cold_after=4,
                                  min_up=4, min_down=2, initial_on=True, initial_periods=10)}
    curves = [{n: UNITS[n] for n in rules}] * 48
    demand = _demand(48, 3) * 0.8
    sol = solve_commitment(curves, demand, HOUR, rules, mip_gap=1e-6)
    exact = dp_commitment(curves, demand, HOUR, rules)
    # the bar is 0.1 %; the MILP is exact on these piecewise curves (gap 1e-6)
    assert sol.total_cost == pytest.approx(exact, rel=1e-3)
    assert not rule_breaks(sol, rules, 24)[0]
    assert np.allclose(sol.net_flow.sum(axis=1), demand, atol=1e-5)


def test_milp_matches_exact_dp_four_units_24_periods():
    rules = {n: CommitmentRules(start_cost=700 + 100 * i, stop_cost=50, min_up=2 + i % 2,
                                min_down=2, startup_periods=1 if n == "C" else 0,
                                initial_on=n in "AB", initial_periods=2)
             for i, n in enumerate(UNITS)}
    curves = [dict(UNITS)] * 24
    demand = _demand(24, 5)
    sol = solve_commitment(curves, demand, HOUR, rules, mip_gap=1e-6)
    exact = dp_commitment(curves, demand, HOUR, rules)
    assert sol.total_cost == pytest.approx(exact, rel=1e-3)  # the 0.1 % bar


def test_convex_dispatch_cost_fills_cheapest_segments_first():
    # two linear units, slopes 1 and 2 per kg/s above 10 each: 35 kg/s = 10 + 10 + 15 on the
    # cheaper one -> cost 10 + 20 + 15 * 1 (hand calculation)
    a = UnitCurve("a", [10.0, 30.0], [10.0, 30.0])
    b = UnitCurve("b", [10.0, 30.0], [20.0, 60.0])
    assert convex_dispatch_cost([a, b], 35.0) == pytest.approx(45.0, rel=1e-12)
    assert convex_dispatch_cost([a, b], 5.0) == pytest.approx(30.0, rel=1e-12)  # recycle
    assert convex_dispatch_cost([a, b], 61.0) == np.inf


def test_ten_unit_system_kazarlis_1996_published_optimum():
    d = yaml.safe_load(DATA.read_text())
    units, rules = {}, {}
    for i in range(10):
        name = f"U{i + 1}"
        flow = np.linspace(d["p_min"][i], d["p_max"][i], 13)
        cost = (d["a"][i] + d["b"][i] * flow + d["c"][i] * flow**2) / HOUR  # $/h -> $/s
        units[name] = UnitCurve(name, flow, cost)
        rules[name] = CommitmentRules(
            start_cost=d["hot_start"][i], cold_start_cost=d["cold_start"][i],
            cold_after=d["min_down"][i] + d["cold_hours"][i], min_up=d["min_up"][i],
            min_down=d["min_down"][i], initial_on=d["initial"][i] > 0,
            initial_periods=abs(d["initial"][i]))
    sol = solve_commitment([units] * 24, d["demand"], HOUR, rules, mip_gap=1e-5,
                           allow_recycle=False, reserve_share=d["spinning_reserve"])
    # 12 chords per quadratic over-state cost by at most c (w/2)^2 per unit-hour (about
    # 0.05 $/h here): well inside 0.1 %
    assert sol.total_cost == pytest.approx(d["optimum"], rel=1e-3)
    assert sol.total_cost >= d["optimum"] * (1 - 1e-5)


@pytest.mark.parametrize("seed", range(10))
def test_every_schedule_keeps_the_rules_over_random_forecasts(seed):
    """Property check over seeded random forecasts and rules (a seeded sweep, not hypothesis:
    the hypothesis pytest plugin trips the suite's warnings-as-errors here)."""
    rng = np.random.default_rng(seed)
    up, down, startup = (int(x) for x in rng.integers([1, 1, 0], [5, 5, 3]))
    starts = None if rng.random() < 0.3 else int(rng.integers(1, 4))
    periods = int(rng.integers(8, 15))
    rules = {n: CommitmentRules(start_cost=float(rng.uniform(0, 2000)),
                                stop_cost=float(rng.uniform(0, 300)), min_up=up, min_down=down,
                                startup_periods=startup if n == "C" else 0, max_starts=starts,
                                initial_on=bool(rng.integers(0, 2)) or n == "A",
                                initial_periods=int(rng.integers(1, 6)))
             for n in "ABC"}
    demand = rng.uniform(0, 45, periods)
    units = {"A": UNITS["C"], "B": UNITS["A"], "C": UNITS["B"]}
    curves = [{n: UnitCurve(n, c.flow, c.cost) for n, c in units.items()}] * periods
    sol = solve_commitment(curves, demand, HOUR, rules, mip_gap=1e-4, window=6)
    assert sol.status != "infeasible"  # A starts running and may carry 45 kg/s alone
    breaks, balance = rule_breaks(sol, rules, 6)
    assert not breaks
    assert np.allclose(balance, demand, atol=1e-5)


def test_no_schedule_names_the_rule_and_the_period():
    rules = {"A": CommitmentRules(initial_on=True),
             "B": CommitmentRules(startup_periods=2, initial_on=False, initial_periods=5)}
    curves = [{"A": UNITS["C"], "B": UNITS["B"].__class__("B", UNITS["C"].flow,
                                                           UNITS["C"].cost)}] * 4
    demand = [80.0] * 4  # needs both units; B is stopped and needs two periods to start
    labels = ["t0", "t1", "t2", "t3"]
    assert solve_commitment(curves, demand, HOUR, rules).status == "infeasible"
    why = diagnose(curves, demand, HOUR, rules, labels)
    assert why.startswith("startup_time")
    assert "from t0" in why


def test_trip_reserve_needs_a_second_unit():
    rules = {"A": CommitmentRules(), "B": CommitmentRules(start_cost=500.0)}
    curves = [{"A": UNITS["C"], "B": UNITS["D"]}] * 3
    demand = [30.0, 40.0, 20.0]
    plain = solve_commitment(curves, demand, HOUR, rules)
    secure = solve_commitment(curves, demand, HOUR, rules, trip_share=0.5)
    assert plain.on[:, 1].sum() == 0  # A alone is cheapest
    # with A tripped, B (largest 25 kg/s) must carry half the demand: B runs every period
    assert secure.carrying[:, 1].all()
    assert secure.carrying[:, 0].all()
    assert secure.total_cost > plain.total_cost
