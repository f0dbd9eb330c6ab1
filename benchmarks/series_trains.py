"""Series trains and a shared header: solve times and the gap against brute force.

Run: ``python benchmarks/series_trains.py`` (about two minutes; the brute force is most
of it). Cases are the invented demo cases: ``cases/demo/trains.yaml`` (two-section trains
on one shaft with an intercooler: T1 motor-driven, T2 gas-turbine-driven with an older HP
section) repeated to 1, 3 and 6 parallel trains (copies of a type share a group key, so
each type is reduced once), and ``cases/demo/shared_header.yaml`` (three LP and two HP
units joined by an interstage header).

Figures printed:

Times are the shortest of three runs (the machine may be shared).

- ``table``: the gas table, built once per gas and range (seconds, not in the others);
- ``reduce``: every train reduced to its least-power curve (:class:`Station`);
- ``dispatch``: the HiGHS solve of the station model alone (model build + solve);
- ``optimize``: :func:`trainopt.optimize` end to end without baselines (reduction,
  dispatch, refinement on the sampled true curves, result rows on CoolProp states);
- ``gap``: (optimize's shaft power - brute force) / brute force. The brute force is an
  exhaustive dynamic programme over commitments and splits on a 0.25 kg/s grid of net
  flows, every train's power taken on the true model at every grid flow (its own speed
  search there; not the breakpoints, the dispatch model or the refinement). Negative:
  the optimiser found less than the grid.

For the shared header: ``search`` (the outer loop on the gas-table model, each step a
reduction of both groups and two HiGHS solves), ``optimize`` (search plus the exact
final evaluation), and the gap against a brute force over 41 + 21 header pressures, each
with both groups' exhaustive split on CoolProp duties (:func:`trainopt.dispatch.reduction.operate`,
independent of the gas table and of the search).
"""

import time
from dataclasses import replace
from pathlib import Path

import numpy as np

import trainopt
from trainopt.dispatch.reduction import operate
from trainopt.dispatch.series_reduction import train_conditions
from trainopt.machines.train_operation import operate_train
from trainopt.physics.duty import Duty
from trainopt.station.header import HeaderSearch, group_case
from trainopt.station.reduced import Station

ROOT = Path(__file__).resolve().parents[1]
GRID = 0.25
"""Net-flow step of the brute force [kg/s] (adjusted so that the demand is a grid point)."""


REPEATS = 3
"""Timings are the shortest of this many runs (the machine may be shared)."""


def best_time(call, *args, **kwargs) -> tuple[float, object]:
    """Shortest wall time of ``call(*args, **kwargs)`` over :data:`REPEATS` runs [s], and its
    last result."""
    times = []
    for _ in range(REPEATS):
        start = time.perf_counter()
        out = call(*args, **kwargs)
        times.append(time.perf_counter() - start)
    return min(times), out


def net_grid(demand: float) -> np.ndarray:
    """Net flows [kg/s] from 0 to the demand in steps of about :data:`GRID`."""
    return np.linspace(0.0, demand, int(round(demand / GRID)) + 1)


def stations_of(case, capacity: dict, count: int):
    """``count`` parallel trains alternating the demo's two types, and a demand [kg/s].

    The demand is 72 % of the trains' largest through-flows together.
    """
    t1, t2 = case.trains
    trains = []
    for i in range(count):
        base = (t1, t2)[i % 2]
        trains.append(replace(base, name=f"{base.name}-{i + 1}", group=f"{base.name} type"))
    demand = 0.72 * sum(capacity[(t1, t2)[i % 2].name] for i in range(count))
    return replace(case, trains=tuple(trains)), demand


def dp_combine(value: np.ndarray, cost: np.ndarray) -> np.ndarray:
    """``out[j] = min_i value[j - i] + cost[i]``: one more unit in the dynamic programme."""
    n = value.size
    out = np.full(n, np.inf)
    for start in range(0, n, 256):
        rows = np.arange(start, min(start + 256, n))
        i = np.arange(n)
        j_minus_i = rows[:, None] - i[None, :]
        ok = j_minus_i >= 0
        total = np.where(ok, value[np.clip(j_minus_i, 0, None)] + cost[None, :], np.inf)
        out[rows] = total.min(axis=1)
    return out


def unit_cost(power: np.ndarray, feasible: np.ndarray, net: np.ndarray) -> np.ndarray:
    """Power at each net flow of the grid: 0 stopped, least flow's power while recycling."""
    ok = np.flatnonzero(feasible & (net > 0))
    if ok.size == 0:
        return np.where(net <= 0, 0.0, np.inf)
    cost = np.where(feasible, power, np.inf)
    cost[: ok[0]] = power[ok[0]]
    cost[0] = 0.0
    return cost


def brute_force_trains(station, demand: float) -> float:
    c = train_conditions(station)
    net = net_grid(demand)
    value = np.full(net.size, np.inf)
    value[0] = 0.0
    costs = {}
    for train in station.case.trains:
        if train.group not in costs:
            tp = operate_train(c, train, np.maximum(net, net[1]))
            costs[train.group] = unit_cost(tp.shaft_power, tp.feasible, net)
        value = dp_combine(value, costs[train.group])
    return float(value[-1])


def brute_force_header(case, demand: float, pressures: np.ndarray) -> tuple[float, float]:
    net = net_grid(demand)
    best = (np.inf, np.nan)
    for p in pressures:
        total = 0.0
        for side in ("upstream", "downstream"):
            group = group_case(case, side, float(p))
            value = np.full(net.size, np.inf)
            value[0] = 0.0
            duties, costs = {}, {}
            for train in group.trains:
                basis = train.sections[0].compressor_map.basis
                if basis not in duties:
                    duties[basis] = Duty.build(group.gas, group.suction_pressure,
                                               group.suction_temperature,
                                               group.discharge_pressure, basis)
                key = train.group or train.name
                if key not in costs:
                    op = operate(train, duties[basis], np.maximum(net, net[1]),
                                 group.ambient_temperature)
                    bad = np.zeros(net.size, bool)
                    for v in op.violations(train).values():
                        bad |= v
                    costs[key] = unit_cost(op.shaft_power, ~bad, net)
                value = dp_combine(value, costs[key])
            total += value[-1]
        if total < best[0]:
            best = (total, float(p))
    return best


def main() -> None:
    start = time.perf_counter()
    demo = trainopt.load_case(ROOT / "cases" / "demo" / "trains.yaml")
    print(f"load demo case: {time.perf_counter() - start:.2f} s (dew-point envelope included)")
    start = time.perf_counter()
    train_conditions(Station(replace(demo, trains=())))
    print(f"gas table: {time.perf_counter() - start:.2f} s")
    capacity = {name: c.max_flow for name, c in Station(demo).curves.items()}
    print()
    print(f"{'trains':>6s} {'demand kg/s':>11s} {'reduce s':>9s} {'dispatch s':>10s} "
          f"{'optimize s':>10s} {'power kW':>10s} {'brute kW':>10s} {'gap %':>8s}")
    for count in (1, 3, 6):
        case, demand = stations_of(demo, capacity, count)
        reduce_s, station = best_time(Station, case)
        optimize_s, result = best_time(trainopt.optimize, case, demand=demand, baselines=False)
        dispatch_s = result.solver["build_seconds"] + result.solver["solve_seconds"]
        brute = brute_force_trains(station, demand)
        power = result.total_shaft_power
        print(f"{count:6d} {demand:11.2f} {reduce_s:9.3f} {dispatch_s:10.3f} {optimize_s:10.3f}"
              f" {power / 1e3:10.1f} {brute / 1e3:10.1f} {100 * (power - brute) / brute:8.4f}")

    print("\nshared interstage header (3 LP + 2 HP units)")
    case = trainopt.load_case(ROOT / "cases" / "demo" / "shared_header.yaml")
    demand = case.demand_mass_flow()

    def searched():
        search = HeaderSearch(case)
        search.search(demand)
        return search

    search_s, search = best_time(searched)
    optimize_s, result = best_time(trainopt.optimize, case, baselines=False)
    solves = sum(v["solve_seconds"] for v in result.solver.values())
    lo, hi = search.pressure_min, search.pressure_max
    coarse = np.exp(np.linspace(np.log(lo), np.log(hi), 41))
    t0 = time.perf_counter()
    brute, at = brute_force_header(case, demand, coarse)
    step = coarse[1] / coarse[0]
    fine = at * np.exp(np.linspace(-np.log(step), np.log(step), 21))
    brute, at = min((brute, at),
                    brute_force_header(case, demand, fine[(fine >= lo) & (fine <= hi)]))
    brute_s = time.perf_counter() - t0
    power = result.total_shaft_power
    print(f"search {search_s:.2f} s ({len(search.evaluations)} header pressures, fast model); "
          f"optimize {optimize_s:.2f} s (search + exact final; final dispatch solves "
          f"{solves:.3f} s)")
    print(f"header pressure: optimiser {result.header['pressure_kPa']:.1f} kPa, brute force "
          f"{at / 1e3:.1f} kPa ({brute_s:.0f} s)")
    print(f"shaft power: optimiser {power / 1e3:.1f} kW, brute force {brute / 1e3:.1f} kW, "
          f"gap {100 * (power - brute) / brute:.4f} %")


if __name__ == "__main__":
    main()
