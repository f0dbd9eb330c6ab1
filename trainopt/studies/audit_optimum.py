"""The optimum split of the history audit: least-objective flows for each row's demand.

In a bin, one dispatch model per pattern of available units serves every demand; demands
between two grid demands that run the same units interpolate them. Rows whose optimum puts
a driver at its power limit and that are much cooler than the bin's warmest row are
re-reduced at their own ambient. The optimum split is then evaluated on the true model.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from trainopt.dispatch.reduction import operate


@dataclass
class _Curves:
    """Least-power curves of a bin: by name, and as the dispatch model's curves."""

    least: dict
    dispatch: list
    case: object

    def at_ambient(self, ambient: float, objective: str) -> _Curves:
        """The same curves with the ambient-sensitive drivers re-reduced at ``ambient`` [K]."""
        from trainopt.station.reduced import Station

        case = dataclasses.replace(self.case, ambient_temperature=ambient)
        sensitive = [t.name for t in case.trains if _ambient_sensitive(t, ambient)]
        if not sensitive:
            return self
        part = Station(case, offline=[t.name for t in case.trains if t.name not in sensitive],
                       objective=objective)
        order = [t.name for t in case.trains]
        dispatch = [c for c in self.dispatch if c.name not in sensitive] + part.unit_curves()
        dispatch.sort(key=lambda c: order.index(c.name))
        return _Curves({**self.least, **part.curves}, dispatch, case)


def _ambient_sensitive(train, ambient: float) -> bool:
    """Whether the driver's available power or energy input changes with ambient."""
    driver = train.driver
    speed = 0.5 * (train.speed_min + train.speed_max)
    power = [float(driver.available_shaft_power(speed, t)) for t in (ambient, ambient + 10.0)]
    energy = [float(driver.energy_input(0.5 * power[0], speed, t))
              for t in (ambient, ambient + 10.0)]
    return power[0] != power[1] or energy[0] != energy[1]


def _optimum(curves: _Curves, available, demand, binning, out) -> dict:
    """Least-objective net and through-flows per unit for each row's demand [kg/s]."""
    from trainopt.dispatch.solve import Dispatcher

    least = curves.least
    names = list(least)
    n = len(demand)
    net = np.zeros((n, len(names)))
    running = np.zeros((n, len(names)), bool)
    feasible = np.zeros(n, bool)
    step = binning.demand_step * curves.case.demand_mass_flow()
    solves = 0
    for pattern in {tuple(r) for r in available}:
        idx = np.flatnonzero((available == pattern).all(axis=1))
        usable = [u for u, a in zip(names, pattern, strict=True) if a and least[u].feasible]
        chosen = _without_split_groups([c for c in curves.dispatch if c.name in usable],
                                       curves.case)
        if not chosen:
            out["skip"][idx[out["skip"][idx] == ""]] = "optimum: no available unit can run"
            continue
        dispatcher = Dispatcher(chosen)
        capacity = sum(c.flow[-1] for c in chosen)
        solved = {}

        def solve(d, dispatcher=dispatcher, solved=solved):
            key = round(float(d), 9)
            if key not in solved:
                solved[key] = dispatcher.solve(key)
            return solved[key]

        for i in idx:
            d = demand[i]
            if not np.isfinite(d) or d > capacity * (1 + 1e-9):
                if out["skip"][i] == "":
                    out["skip"][i] = ("optimum: the delivered flow is above the model's "
                                      "capacity with the units available")
                continue
            flows, on = _interpolated(solve, d, step, capacity)
            if flows is None:
                out["skip"][i] = out["skip"][i] or f"optimum: {on}"
                continue
            feasible[i] = True
            for j, u in enumerate(names):
                net[i, j] = flows.get(u, 0.0)
                running[i, j] = on.get(u, False)
        solves += len(solved)
    out["solves"] = out.get("solves", 0) + solves
    low = [least[u].min_flow if least[u].feasible else 0.0 for u in names]
    high = [least[u].max_flow if least[u].feasible else 0.0 for u in names]
    through = np.where(running, np.maximum(net, low), 0.0)
    return {"net": net, "through": through, "running": running, "feasible": feasible,
            "max": np.repeat([high], n, axis=0),
            "power_limited": np.repeat([[least[u].high_limit == "power" for u in names]], n,
                                       axis=0)}


def _interpolated(solve, demand: float, step: float, capacity: float):
    """Net flows and running flags for a demand [kg/s] from dispatches on a demand grid.

    The bracket of grid demands around ``demand`` is halved until both ends run the same
    units (then the net flows are interpolated linearly, which keeps their sum equal to
    the demand) or it is 1/16 of the step wide (then the demand is solved itself). Every
    solve is cached, so rows of a bin share their brackets.
    """
    lo = np.floor(demand / step) * step
    hi = min(lo + step, capacity)
    while True:
        a, b = solve(lo), solve(hi)
        if hi > lo and a.status == b.status == "optimal" and a.running == b.running:
            w = (demand - lo) / (hi - lo)
            return {u: (1 - w) * a.net_flow[u] + w * b.net_flow[u] for u in a.net_flow}, \
                a.running
        if hi - lo <= step / 16:
            r = solve(demand)
            return (None, r.reason) if r.status == "infeasible" else (r.net_flow, r.running)
        mid = 0.5 * (lo + hi)
        lo, hi = (lo, mid) if demand <= mid else (mid, hi)


def _without_split_groups(curves, case) -> list:
    """Drop the group of units whose group mates are not all among the curves."""
    present = [c.name for c in curves]
    out = []
    for c in curves:
        mates = [t.name for t in case.trains if c.group is not None and t.group == c.group]
        out.append(c if all(m in present for m in mates) else dataclasses.replace(c, group=None))
    return out


def _power_limited(opt, ambient, t_warm: float, width: float) -> np.ndarray:
    """Sub-bin index of rows whose optimum is at a driver's power limit and much cooler."""
    at_limit = (opt["running"] & opt["power_limited"]
                & (opt["through"] >= opt["max"] * (1 - 1e-6))).any(axis=1)
    cooler = np.floor((t_warm - ambient) / width).astype(int)
    return np.where(at_limit & (cooler >= 1), cooler, -1)


def _evaluate_optimum(station, train, opt, ambient, out) -> None:
    j = list(station.curves).index(train.name) if train.name in station.curves else None
    n = len(ambient)
    shaft, energy = np.zeros(n), np.zeros(n)
    net = opt["net"][:, j] if j is not None else np.zeros(n)
    through = opt["through"][:, j] if j is not None else np.zeros(n)
    on = through > 0
    if on.any():
        op = operate(train, station.duty(train), through[on], ambient[on])
        shaft[on], energy[on] = op.shaft_power, op.energy_input
    price, co2 = station.price(train)
    share = np.divide(through - net, through, out=np.zeros(n), where=on)
    u = train.name
    out.update({f"{u}.opt_net": net, f"{u}.opt_through": through,
                f"{u}.opt_recycle": through - net, f"{u}.opt_shaft": shaft,
                f"{u}.opt_input": energy, f"{u}.opt_recycle_power": shaft * share,
                f"{u}.opt_cost_rate": energy * price, f"{u}.opt_co2_rate": energy * co2})
    out["opt_feasible"] = opt["feasible"]
