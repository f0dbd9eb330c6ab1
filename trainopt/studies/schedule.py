"""The commitment schedule over a forecast: which units run when, with start-stop rules.

:func:`schedule` reads the forecast (:mod:`~trainopt.studies.schedule_forecast`), reduces
each condition bin once (:mod:`~trainopt.studies.schedule_periods`), solves the
multi-period model (:mod:`trainopt.dispatch.commitment_model`) for least energy cost plus
start and stop costs, evaluates every period on the true model, and sets the schedule
beside what people do: the hour-by-hour optimum (its starts and stops charged afterwards)
and keeping the initial commitment. With a trip reserve, it also solves without it, to
price that security, and checks every period's trip on the true model.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pandas as pd

from trainopt.dispatch.commitment_model import RULE_FAMILIES, CommitmentRules
from trainopt.dispatch.commitment_solve import diagnose, solve_commitment
from trainopt.dispatch.solve import solve_dispatch
from trainopt.dispatch.trip_reserve import trip_share_of
from trainopt.errors import InputError
from trainopt.station.reduced import evaluate_split
from trainopt.studies.audit_binning import Binning
from trainopt.studies.schedule_forecast import Forecast, read_forecast
from trainopt.studies.schedule_periods import (
    DAY,
    check_capacity,
    check_initial_state,
    commitment_rules,
    reduce_periods,
)
from trainopt.studies.schedule_result import ScheduleResult, period_table, starts_table

__all__ = ["ScheduleResult", "rule_breaks", "schedule", "switching_costs", "trip_share_of"]


def schedule(case, forecast, *, columns=None, trip_reserve=None, hours: float | None = None,
             binning: Binning | None = None, mip_gap: float = 1e-3, time_limit: float = 120.0,
             compare: bool = True, check_trips: bool = True) -> ScheduleResult:
    """Least-cost commitment schedule of a station over a forecast.

    Parameters
    ----------
    case : trainopt.Case or path
        The station, with each unit's ``commitment`` rules (docs/case.md).
    forecast : Forecast or path
        Demand and conditions per period (docs/schedule.md).
    columns : path, optional
        Forecast column mapping (YAML); without it headers carry units.
    trip_reserve : float or str, optional
        With any one carrying unit tripped, the others can carry at least this share of
        the demand (``0.9`` or ``"90 %"``), steady state only.
    hours : float, optional
        Horizon [h] from the forecast's first period; refused if the forecast is
        shorter. Default: the whole forecast.
    binning : Binning, optional
        Condition bins (the history audit's default).
    mip_gap : float
        Relative MIP gap [-].
    time_limit : float
        HiGHS time limit per solve [s].
    compare : bool
        Also solve the hour-by-hour optimum and keeping the initial commitment.
    check_trips : bool
        With a trip reserve, check every period's trip on the true model.

    Returns
    -------
    ScheduleResult

    Raises
    ------
    InputError
        Bad forecast, demand above capacity (periods and shortfall named), an initial
        state breaking a rule, a forecast shorter than the horizon, or rules allowing no
        schedule (the rule and the periods named).
    """
    if not hasattr(case, "trains"):
        from trainopt.case.loading import load_case

        case = load_case(case)
    if case.interstage_header is not None:
        raise InputError("interstage_header", "the schedule handles stations of parallel "
                         "units only", "schedule each group of units as its own case")
    if not isinstance(forecast, Forecast):
        forecast = read_forecast(forecast, case, columns)
    share = trip_share_of(trip_reserve)
    frame = _horizon(forecast, hours)
    period = forecast.period
    labels = [t.strftime("%Y-%m-%d %H:%M") for t in frame.index]
    bins = reduce_periods(case, frame, binning or Binning())
    curves = bins.period_curves()
    demand = frame["demand"].to_numpy(float)
    rules = commitment_rules(case, period)
    check_initial_state(case, rules, curves, labels)
    check_capacity(curves, demand, labels)
    window = max(1, int(round(DAY / period)))
    options = {"window": window, "trip_share": share}
    sol = solve_commitment(curves, demand, period, rules, mip_gap=mip_gap,
                           time_limit=time_limit, **options)
    if sol.status == "infeasible":
        why = diagnose(curves, demand, period, rules, labels, time_limit=time_limit, **options)
        raise InputError("commitment rules", f"no schedule meets every rule; {why}",
                         "relax that rule (case units[].commitment or --trip-reserve)")
    times = frame.index
    periods = period_table(times, sol, bins, case.economics.currency)
    costs = {"energy": float(sol.energy_cost.sum()), "starts": float(sol.start_cost.sum()),
             "stops": float(sol.stop_cost.sum()), "total": sol.total_cost,
             "start_count": int(sol.start.sum()), "stop_count": int(sol.stop.sum())}
    rows = [_row("schedule", sol.energy_cost.sum(), sol.start_cost.sum(), sol.stop_cost.sum(),
                 int(sol.start.sum()), 0, "")]
    notes = []
    if share is not None:
        free = solve_commitment(curves, demand, period, rules, mip_gap=mip_gap,
                                time_limit=time_limit, window=window)
        rows.append(_row("schedule without trip reserve", free.energy_cost.sum(),
                         free.start_cost.sum(), free.stop_cost.sum(), int(free.start.sum()),
                         0, "the cost of the trip reserve is the difference"))
    if compare:
        rows += _compare(curves, demand, period, rules, window, share, mip_gap, time_limit,
                         labels)
    comparison = pd.DataFrame(rows)
    comparison["schedule_saving"] = comparison["total"] - comparison["total"].iloc[0]
    cur = case.economics.currency
    comparison = comparison.rename(columns={
        "energy": f"energy_cost_{cur}", "starts": f"start_cost_{cur}",
        "stops": f"stop_cost_{cur}", "total": f"total_cost_{cur}",
        "schedule_saving": f"schedule_saving_{cur}"})
    trip = _trip_check(times, sol, bins, demand, share) if share and check_trips else None
    if trip is not None and not trip["feasible"].all():
        bad = trip[~trip["feasible"]].iloc[0]
        notes.append(f"trip of {bad['tripped']} at {bad['time']}: the others cannot carry "
                     f"{share:.0%} of demand on the true model")
    solver = {"status": sol.status, "mip_gap": sol.gap, "bound": sol.bound,
              "build_seconds": sol.build_seconds, "solve_seconds": sol.solve_seconds,
              "condition_bins": len(bins.stations), "periods": len(times),
              "units": len(sol.units)}
    return ScheduleResult(case.name, case.economics.currency, period, periods,
                          starts_table(times, sol, case.economics.currency), costs,
                          comparison, share, solver, notes,
                          trip)


def _horizon(forecast: Forecast, hours: float | None) -> pd.DataFrame:
    frame = forecast.frame
    if hours is None:
        return frame
    if not (isinstance(hours, int | float) and hours > 0):
        raise InputError("hours", f"{hours!r} is not a horizon", "give a number of hours > 0")
    needed = int(math.ceil(hours * 3600.0 / forecast.period - 1e-9))
    if needed > len(frame):
        covered = len(frame) * forecast.period / 3600.0
        raise InputError(str(forecast.source), f"covers {covered:g} h from {frame.index[0]}, "
                         f"the horizon is {hours:g} h", "give a forecast for the whole horizon "
                         "or a shorter horizon")
    return frame.iloc[:needed]


def _row(way, energy, starts, stops, count, infeasible, note) -> dict:
    return {"way": way, "energy": float(energy), "starts": float(starts),
            "stops": float(stops), "total": float(energy + starts + stops),
            "start_count": int(count), "infeasible_periods": int(infeasible), "note": note}


def switching_costs(on: np.ndarray, rules: dict[str, CommitmentRules]):
    """Start and stop costs of a commitment (periods by units) under the rules [currency].

    Returns
    -------
    (start_cost, stop_cost, starts) : numpy.ndarray, numpy.ndarray, int
        Per period and unit; a start after more than ``cold_after`` stopped periods
        costs the cold start cost.
    """
    names = list(rules)
    start_cost, stop_cost = np.zeros(on.shape), np.zeros(on.shape)
    for j, n in enumerate(names):
        r = rules[n]
        state, age = r.initial_on, r.initial_periods
        for t in range(on.shape[0]):
            now = bool(on[t, j])
            if now and not state:
                cold = r.cold_start_cost is not None and age > r.cold_after
                start_cost[t, j] = r.cold_start_cost if cold else r.start_cost
            elif state and not now:
                stop_cost[t, j] = r.stop_cost
            age = age + 1 if now == state else 1
            state = now
    before = np.vstack([[rules[n].initial_on for n in names], on[:-1]])
    return start_cost, stop_cost, int(np.sum(on & ~before))


def rule_breaks(on: np.ndarray, rules: dict[str, CommitmentRules], window: int) -> int:
    """Count the times a commitment breaks minimum up/down times or starts per day [-].

    ``on`` is periods by units. Counted: runs shorter than the rule (the run cut by the
    horizon's end excepted, the run before the horizon counted with its periods), and
    windows of ``window`` periods with too many starts.
    """
    count = 0
    for j, n in enumerate(rules):
        r = rules[n]
        states = np.concatenate([[int(r.initial_on)], on[:, j].astype(int)])
        edges = np.flatnonzero(np.diff(states)) + 1
        starts_at = np.concatenate([[0], edges])
        ends = np.concatenate([edges, [states.size]])
        for k, (a, b) in enumerate(zip(starts_at, ends, strict=True)):
            if b == states.size:
                continue
            length = b - a + (r.initial_periods - 1 if k == 0 else 0)
            count += length < (r.min_up_effective if states[a] else r.min_down)
        if r.max_starts is not None:
            started = np.flatnonzero(np.diff(states) == 1)
            count += sum(np.sum((started <= t) & (started > t - window)) > r.max_starts
                         for t in range(on.shape[0]))
    return int(count)


def _compare(curves, demand, period, rules, window, share, mip_gap, time_limit, labels):
    free = {n: CommitmentRules(initial_on=r.initial_on, initial_periods=r.initial_periods)
            for n, r in rules.items()}
    relax = frozenset(set(RULE_FAMILIES) - {"trip_reserve"})
    hourly = solve_commitment(curves, demand, period, free, mip_gap=mip_gap,
                              time_limit=time_limit, window=window, trip_share=share,
                              relax=relax)
    out = []
    if hourly.status != "infeasible":
        starts, stops, count = switching_costs(hourly.on, rules)
        broken = rule_breaks(hourly.on, rules, window)
        out.append(_row("hour-by-hour optimum", hourly.energy_cost.sum(), starts.sum(),
                        stops.sum(), count, 0, "each period optimal alone; its starts and "
                        "stops charged afterwards; run-time rules not applied"
                        + (f", broken {broken} time(s)" if broken else ", none broken")))
    fixed = {(n, t): int(r.initial_on) for n, r in rules.items() for t in range(len(curves))
             if n in curves[t]}
    keep = solve_commitment(curves, demand, period, free, mip_gap=mip_gap,
                            time_limit=time_limit, window=window, relax=relax, elastic=True,
                            fixed_on=fixed, trip_share=share)
    secure = share is None or keep.status != "infeasible"
    if not secure:
        keep = solve_commitment(curves, demand, period, free, mip_gap=mip_gap,
                                time_limit=time_limit, window=window, relax=relax,
                                elastic=True, fixed_on=fixed)
    short = np.flatnonzero(keep.shortfall > 1e-6)
    starts, stops, count = switching_costs(keep.on, rules)
    note = "feasible in every period" if not short.size else (
        f"cannot carry the demand in {short.size} period(s) from {labels[short[0]]}; cost "
        "over the periods it can")
    if not secure:
        note += "; does not meet the trip reserve"
    out.append(_row("keep initial commitment", keep.energy_cost.sum(), starts.sum(),
                    stops.sum(), count, short.size, note))
    return out


def _trip_check(times, sol, bins, demand, share) -> pd.DataFrame:
    """Check, per period and carrying unit, that the others carry the share on the true model.

    Each unit's net flow can be anything from zero to its largest flow (recycle below its
    least through-flow), so feasibility falls as demand rises; the true model is therefore
    evaluated once per bin and set of remaining units, at the largest share of demand among
    its periods, and that verdict is given to each of them.
    """
    rows, worst = [], {}
    for t in range(len(times)):
        carrying = [u for j, u in enumerate(sol.units) if sol.carrying[t, j]]
        for k in carrying:
            others = tuple(u for u in carrying if u != k)
            key = (int(bins.bin_of[t]), others)
            need = share * demand[t]
            if need > worst.get(key, -1.0):
                worst[key] = need
            rows.append({"time": times[t], "tripped": k, "others": ", ".join(others),
                         "share_demand_kg_s": need, "key": key})
    verdict = {}
    for key, need in worst.items():
        b, others = key
        station = bins.stations[b]
        here = [dataclasses.replace(bins.curves[b][u], status="available") for u in others]
        capacity = sum(c.flow_max for c in here)
        if not here or need > capacity * (1 + 1e-9):
            verdict[key] = (False, capacity)
            continue
        dispatch = solve_dispatch(here, need, recycle="least_cost")
        if dispatch.status == "infeasible":
            verdict[key] = (False, capacity)
            continue
        net = {u: dispatch.net_flow.get(u, 0.0) for u in others}
        result = evaluate_split(station, {u: m for u, m in net.items() if m > 0})
        verdict[key] = (result.status != "infeasible", capacity)
    frame = pd.DataFrame(rows, columns=["time", "tripped", "others", "share_demand_kg_s",
                                        "key"])
    frame["others_capacity_kg_s"] = [verdict[k][1] for k in frame["key"]]
    frame["feasible"] = [verdict[k][0] for k in frame["key"]]
    return frame.drop(columns="key")
