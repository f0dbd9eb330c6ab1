"""Speed and optimality of the commitment schedule, each against a reference in the same run.

Run from the repository root::

    python benchmarks/schedule_speed.py

It prints, side by side:

1. **4 units x 168 hourly periods**, convex synthetic curves, minimum up/down times,
   start-up time, warm and cold starts: the MILP (build + solve, gap 0.1 %; wall and CPU
   time, the target met if either is under it on a shared machine) against the
   exact dynamic program over commitment states (:mod:`trainopt.dispatch.commitment_dp`):
   time of each and the MILP's true gap to the exact optimum. Target: under 20 s, gap at
   most 0.5 %.
2. **8 units x 24 hourly periods**, synthetic curves, every rule including starts per day:
   the MILP against the hour-by-hour optimum (each hour alone, its starts charged
   afterwards): time of each, HiGHS's proven gap, and the costs. Target: under 10 s, gap at
   most 0.5 %.
3. **The invented demo week** (4 units x 168 periods, curves reduced from the demo's maps
   per condition bin, every rule, 90 % trip reserve): reduction time, MILP time, proven
   gap, against the hour-by-hour optimum.

Synthetic curves are invented for timing only; the demo data are invented too.
"""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from trainopt.dispatch.commitment_dp import dp_commitment  # noqa: E402
from trainopt.dispatch.commitment_model import RULE_FAMILIES, CommitmentRules  # noqa: E402
from trainopt.dispatch.commitment_solve import solve_commitment  # noqa: E402
from trainopt.dispatch.unit_curve import UnitCurve  # noqa: E402

HOUR = 3600.0


def _units(n: int, seed: int) -> dict[str, UnitCurve]:
    rng = np.random.default_rng(seed)
    out = {}
    for i in range(n):
        lo, hi = rng.uniform(8, 16), rng.uniform(28, 45)
        flow = np.linspace(lo, hi, 9)
        cost = rng.uniform(1.5, 3.5) + rng.uniform(0.25, 0.35) * flow \
            + rng.uniform(0.002, 0.006) * flow**2
        out[f"U{i + 1}"] = UnitCurve(f"U{i + 1}", flow, cost)
    return out


def _demand(n: int, scale: float, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    hour = np.arange(n) % 24
    wave = 0.65 + 0.25 * np.sin((hour - 9) / 24 * 2 * np.pi) + rng.normal(0, 0.04, n)
    return np.clip(wave, 0.05, 0.95) * scale


def _hourly(curves, demand, rules):
    from trainopt.studies.schedule import switching_costs

    free = {n: CommitmentRules(initial_on=r.initial_on, initial_periods=r.initial_periods)
            for n, r in rules.items()}
    clock = time.perf_counter()
    sol = solve_commitment(curves, demand, HOUR, free, mip_gap=1e-3,
                           relax=frozenset(RULE_FAMILIES))
    seconds = time.perf_counter() - clock
    starts, stops, count = switching_costs(sol.on, rules)
    return seconds, sol.energy_cost.sum() + starts.sum() + stops.sum(), count


def case_four_by_week() -> list[str]:
    units = _units(4, 1)
    rules = {n: CommitmentRules(start_cost=600.0 + 150 * i, stop_cost=80.0, min_up=3,
                                min_down=2, startup_periods=1 if i == 2 else 0,
                                cold_start_cost=1400.0 if i == 3 else None,
                                cold_after=2 if i == 3 else 0, initial_on=i < 2,
                                initial_periods=4)
             for i, n in enumerate(units)}
    curves = [units] * 168
    demand = _demand(168, 120.0, 2)
    clock, cpu = time.perf_counter(), time.process_time()
    sol = solve_commitment(curves, demand, HOUR, rules, mip_gap=1e-3)
    milp, milp_cpu = time.perf_counter() - clock, time.process_time() - cpu
    clock, cpu = time.perf_counter(), time.process_time()
    exact = dp_commitment(curves, demand, HOUR, rules)
    dp, dp_cpu = time.perf_counter() - clock, time.process_time() - cpu
    gap = (sol.total_cost - exact) / exact
    ok = min(milp, milp_cpu) < 20.0 and gap <= 5e-3
    return [f"4 units x 168 h   MILP wall {milp:6.2f} s, CPU {milp_cpu:6.2f} s (build "
            f"{sol.build_seconds:.2f} s) | exact DP wall {dp:6.2f} s, CPU {dp_cpu:6.2f} s | "
            f"cost {sol.total_cost:,.0f} vs {exact:,.0f}: true gap {gap:.4%} | target < 20 s, "
            f"<= 0.5 %: {'met' if ok else 'NOT met'}"]


def case_eight_by_day() -> list[str]:
    units = _units(8, 3)
    rules = {n: CommitmentRules(start_cost=500.0 + 100 * i, stop_cost=60.0, min_up=2 + i % 3,
                                min_down=2, startup_periods=i % 2, max_starts=2,
                                initial_on=i < 4, initial_periods=3)
             for i, n in enumerate(units)}
    curves = [units] * 24
    demand = _demand(24, 230.0, 4)
    clock, cpu = time.perf_counter(), time.process_time()
    sol = solve_commitment(curves, demand, HOUR, rules, mip_gap=1e-3)
    milp, milp_cpu = time.perf_counter() - clock, time.process_time() - cpu
    hourly_s, hourly_cost, starts = _hourly(curves, demand, rules)
    ok = min(milp, milp_cpu) < 10.0 and sol.gap <= 5e-3
    return [f"8 units x 24 h    MILP wall {milp:6.2f} s, CPU {milp_cpu:6.2f} s (build "
            f"{sol.build_seconds:.2f} s), proven gap "
            f"{sol.gap:.4%}, cost {sol.total_cost:,.0f}, {int(sol.start.sum())} starts | "
            f"hour-by-hour {hourly_s:6.2f} s, cost {hourly_cost:,.0f}, {starts} starts | "
            f"target < 10 s, <= 0.5 %: {'met' if ok else 'NOT met'}"]


def case_demo_week() -> list[str]:
    from trainopt.case.loading import load_case
    from trainopt.studies.audit_binning import Binning
    from trainopt.studies.schedule_forecast import read_forecast
    from trainopt.studies.schedule_periods import commitment_rules, reduce_periods

    case = load_case(ROOT / "cases" / "demo" / "station.yaml")
    forecast = read_forecast(ROOT / "cases" / "demo" / "forecast" / "week.csv", case)
    clock = time.perf_counter()
    bins = reduce_periods(case, forecast.frame, Binning())
    reduce_s = time.perf_counter() - clock
    curves = bins.period_curves()
    demand = forecast.frame["demand"].to_numpy()
    rules = commitment_rules(case, forecast.period)
    clock = time.perf_counter()
    sol = solve_commitment(curves, demand, HOUR, rules, mip_gap=1e-3, trip_share=0.9)
    milp = time.perf_counter() - clock
    hourly_s, hourly_cost, starts = _hourly(curves, demand, rules)
    return [f"demo week 4 x 168 reductions {reduce_s:5.2f} s ({len(bins.stations)} bins) | MILP "
            f"{milp:6.2f} s, proven gap {sol.gap:.4%}, cost {sol.total_cost:,.0f} USD "
            f"(90 % trip reserve), {int(sol.start.sum())} starts | hour-by-hour (no reserve) "
            f"{hourly_s:6.2f} s, {hourly_cost:,.0f} USD, {starts} starts"]


def main() -> int:
    """Run the three cases and print their figures."""
    load = os.getloadavg()[0]
    lines = [f"cores {os.cpu_count()}, load average {load:.1f} at the start (wall times "
             "stretch when other work shares the cores; CPU time is this process's own)"]
    lines += case_four_by_week() + case_eight_by_day() + case_demo_week()
    sys.stdout.write("\n".join(lines) + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
