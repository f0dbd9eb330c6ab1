"""History audit: the power spent on recycle and on poor load sharing, hour by hour.

For every row of a :class:`~trainopt.studies.history_io.History` the audit evaluates the
recorded split on the station's true model (map, gas, driver) and the split the optimiser
would have chosen for the same delivered flow, units available and conditions. The
definitions (``docs/studies.md``):

- **useful power** of a unit: ``P_shaft * m_net / m_through``; **recycle power**:
  ``P_shaft * m_recycle / m_through``. Every kilogram through the compressor takes the same
  specific work, so the recycle power is the share of shaft power that compresses gas the
  recycle valve lets back to suction; the two parts add up to the shaft power.
- **avoidable power**: the recorded split's model power less the optimum's model power,
  both at the same conditions, so that a meter's offset from the model cancels. It
  includes the recycle that a better commitment or split avoids, and the loss of unequal
  efficiency between the units.
- the row stands for the median spacing of the timestamps; energies are power times it.

Speed comes from quantising the conditions: rows are grouped into bins of suction and
discharge pressure and suction temperature (:class:`Binning`); each bin's units are reduced
once (:class:`~trainopt.station.Station`) at the mean conditions of its rows and one
dispatch model serves every demand in the bin. Ambient temperature changes only the
drivers: each row's drivers are evaluated at its own ambient, and a bin is reduced at the
warmest ambient of its rows so that the optimum never counts on gas-turbine power a row did
not have. Bins run on all cores or on a Dask cluster (:mod:`~trainopt.studies.parallel`).
"""

from __future__ import annotations

import dataclasses
import threading
import time
from dataclasses import dataclass

import numpy as np
import pandas as pd

from trainopt.errors import InputError, TrainoptError, TwoPhaseError
from trainopt.machines import UnitStatus
from trainopt.reduction import LIMIT_NAMES, operate
from trainopt.result import CAUTION
from trainopt.studies.history_io import History, mass_flow, valve_mass_flow
from trainopt.studies.parallel import run_tasks

RUNNING_FRACTION = 0.05
"""A unit runs when its through-flow exceeds this fraction of its surge flow at lowest
tested speed [-]; smaller readings are a stopped unit's meter noise."""

RECYCLE_EXCESS = 0.05
"""Recycle above the through-flow by more than this fraction skips the row [-]; up to it,
the recycle is taken equal to the through-flow (valve-characteristic error)."""

LIMIT_TOLERANCE = 0.02
"""Recorded points count as breaking a limit (surge, surge control line, stonewall, speed,
driver power) only beyond this fraction of it, and the discharge-temperature limit only
beyond 2 K: the spread of meters and model [-]."""

HEAD_TOLERANCE = 0.05
"""A row is flagged 'head off the map' when the header pressures need a head further than
this fraction from the map's head at the recorded speed and flow [-]."""

FLOW_BALANCE_TOLERANCE = 0.02
"""A row is flagged when the station meter and the units' net flows differ by more [-]."""

_LOCK = threading.Lock()


@dataclass(frozen=True)
class Binning:
    """How finely conditions are quantised.

    Attributes
    ----------
    pressure : float
        Width of suction and discharge pressure bins [Pa] (default 0.25 bar).
    temperature : float
        Width of suction temperature bins [K] (default 1 K).
    ambient : float
        Ambient spread allowed under a power-limited optimum [K]: rows whose optimum puts
        a driver at its power limit and that are cooler than the bin's warmest row by
        more are re-reduced in sub-bins of this width (default 5 K).
    demand_step : float
        Spacing of the demands solved in a bin, as a fraction of the case's demand [-];
        rows in between interpolate the two neighbouring dispatches when both run the
        same units, and are solved exactly otherwise (default 0.02).
    min_rows : int
        A bin of fewer rows joins the nearest bin of the same gas with at least this many
        whose mean conditions lie within one bin width in every condition (default 24):
        a reduction costs about a second, whatever the number of rows.
    """

    pressure: float = 0.25e5
    temperature: float = 2.0
    ambient: float = 10.0
    demand_step: float = 0.02
    min_rows: int = 24

    def __post_init__(self):
        for name in ("pressure", "temperature", "ambient", "demand_step"):
            if not getattr(self, name) > 0:
                raise InputError(f"binning.{name}", f"{getattr(self, name)!r} is not a "
                                 "positive width", "give a positive number")
        if not (isinstance(self.min_rows, int) and self.min_rows >= 1):
            raise InputError("binning.min_rows", f"{self.min_rows!r} is not a row count",
                             "give a whole number of 1 or more")


@dataclass
class _BinTask:
    case: object
    gas: tuple
    conditions: tuple
    rows: dict
    history: dict
    objective: str
    binning: Binning


def _gas(recipe: tuple):
    from trainopt.gas import Gas

    components, eos = recipe
    return Gas.from_composition(dict(components), eos)


def audit_bin(task: _BinTask) -> dict:
    """Audit the rows of one condition bin (a task for :func:`run_tasks`).

    Parameters
    ----------
    task : _BinTask

    Returns
    -------
    dict
        Per-row arrays (``skip`` reason, ``demand``) and per unit ``<unit>.<field>``.
    """
    with _LOCK:  # CoolProp states and solver models are not shared between threads
        try:
            return _audit_bin(task)
        except TrainoptError as exc:  # e.g. a state CoolProp cannot evaluate: skip the bin
            n = len(task.rows["ambient"])
            return {"skip": np.full(n, f"bin conditions: {str(exc)[:160]}", dtype=object)}


def _audit_bin(task: _BinTask) -> dict:
    from trainopt.station import Station

    p1, p2, t1, t_warm = task.conditions
    gas = _gas(task.gas)
    trains = tuple(dataclasses.replace(t, status=UnitStatus.AVAILABLE) for t in task.case.trains)
    case = dataclasses.replace(task.case, gas=gas, suction_pressure=p1, discharge_pressure=p2,
                               suction_temperature=t1, ambient_temperature=t_warm, trains=trains)
    rows, hist = task.rows, task.history
    n = len(rows["ambient"])
    out = {"skip": np.full(n, "", dtype=object)}
    try:
        gas.check_gas_phase(p1, t1, "suction")
    except TwoPhaseError as exc:
        out["skip"][:] = f"suction state near the dew point ({str(exc).split(';')[0]})"
        return out
    clock = time.perf_counter()
    station = Station(case, objective=task.objective)
    out["stats"] = {"reductions": 1, "solves": 0}
    flows = _recorded_flows(station, rows, hist, out)
    demand = sum(flows[u][2] for u in flows)
    out["demand"] = demand
    if "station_flow" in rows:
        rho1 = gas.state(p1, t1).density
        out["station_meter"] = mass_flow(rows["station_flow"], hist["basis"]["station_flow"],
                                         gas, rho1)
    for train in case.trains:
        _actual(station, train, flows[train.name], rows, hist, out)
    available = np.column_stack([rows.get(f"{u}.available", np.ones(n, bool)) | (flows[u][0] > 0)
                                 for u in flows])
    curves = _Curves(dict(station.curves), station.unit_curves(), case)
    opt = _optimum(curves, available, demand, task.binning, out)
    out["stats"]["solves"] += out.pop("solves")
    hot = _power_limited(opt, rows["ambient"], t_warm, task.binning.ambient)
    for k in sorted(set(hot[hot >= 0])):
        idx = np.flatnonzero(hot == k)
        cooler = curves.at_ambient(float(rows["ambient"][idx].max()), task.objective)
        part = {"skip": out["skip"][idx].copy()}
        sub = _optimum(cooler, available[idx], demand[idx], task.binning, part)
        out["skip"][idx] = part["skip"]
        out["stats"]["reductions"] += 1
        out["stats"]["solves"] += part["solves"]
        for key in opt:
            opt[key][idx] = sub[key]
    for train in case.trains:
        _evaluate_optimum(station, train, opt, rows["ambient"], out)
    out["stats"]["seconds"] = time.perf_counter() - clock
    return out


def _recorded_flows(station, rows, hist, out) -> dict:
    """Through, recycle and net mass flows [kg/s] per unit, from the recorded columns."""
    case = station.case
    rho1 = case.gas.state(case.suction_pressure, case.suction_temperature).density
    flows = {}
    for train in case.trains:
        u = train.name
        flow = mass_flow(rows[f"{u}.flow"], hist["basis"][f"{u}.flow"], case.gas, rho1)
        if f"{u}.recycle" in rows:
            recycle = mass_flow(rows[f"{u}.recycle"], hist["basis"][f"{u}.recycle"], case.gas, rho1)
        elif f"{u}.valve" in rows:
            spec = hist["valves"][u]
            t_in = case.suction_temperature if spec.inlet_temperature is None else \
                hist["valve_temperature"][u]
            recycle = valve_mass_flow(spec, rows[f"{u}.valve"], case.gas, case.discharge_pressure,
                                      t_in, case.suction_pressure)
        else:
            recycle = np.zeros_like(flow)
        if hist["measures"][u] == "through":
            through = flow
        else:
            through = flow + recycle
        cmap = train.sections[0].compressor_map
        surge = float(cmap.surge_flow_at_speed(cmap.speed_min, warn=False))
        floor = RUNNING_FRACTION * surge * rho1
        running = through > floor
        excess = running & (recycle > through * (1 + RECYCLE_EXCESS))
        out["skip"][excess & (out["skip"] == "")] = f"{u}: recycle above the through-flow"
        recycle = np.where(running, np.minimum(recycle, through), 0.0)
        through = np.where(running, through, 0.0)
        flows[u] = (through, recycle, through - recycle)
    return flows


def _actual(station, train, flow, rows, hist, out) -> None:
    """The recorded split of one unit on the true model, with its flags."""
    u, (through, recycle, net) = train.name, flow
    n = len(through)
    cmap = train.sections[0].compressor_map
    ratio = train.sections[0].speed_ratio
    cols = {k: np.full(n, np.nan) for k in (
        "speed", "volume_flow", "head", "efficiency", "shaft", "input", "available_power",
        "surge_margin", "control_line_margin", "head_deviation", "discharge_temperature")}
    flags = {k: np.zeros(n, bool) for k in ("left_of_surge_without_recycle", "head_off_map",
                                             "outside_tested_map", "ran_while_unavailable")}
    limits = np.full(n, "", dtype=object)
    on = through > 0
    if on.any():
        op = operate(train, station.duty(train), through[on], rows["ambient"][on])
        q, head = op.volume_flow, op.head
        for key, value in (("speed", op.speed), ("volume_flow", q), ("head", head),
                           ("efficiency", op.efficiency), ("shaft", op.shaft_power),
                           ("input", op.energy_input), ("available_power", op.available_power),
                           ("surge_margin", q / op.surge_flow - 1),
                           ("control_line_margin", q / op.control_line_flow - 1),
                           ("discharge_temperature", op.discharge_temperature)):
            cols[key][on] = value
        recorded = rows.get(f"{u}.speed", np.full(n, np.nan))[on] * ratio
        known = np.isfinite(recorded) & (recorded > 0)
        speed = np.where(known, recorded, op.speed * ratio)
        map_head = cmap.head(q, np.where(np.isfinite(speed), speed, cmap.speed_max), warn=False)
        top = cmap.head(q, cmap.speed_max, warn=False)
        bottom = cmap.head(q, cmap.speed_min, warn=False)
        nearest = np.where(np.isfinite(op.speed), head, np.clip(head, bottom, top))
        reference = np.where(known, map_head, nearest)
        with np.errstate(invalid="ignore"):
            cols["head_deviation"][on] = head / reference - 1
            inside = cmap.in_tested_range(q, np.where(np.isfinite(speed), speed, 0.0))
            flags["left_of_surge_without_recycle"][on] = (
                (recycle[on] <= 0) & (q < op.surge_flow * (1 - LIMIT_TOLERANCE)))
        flags["head_off_map"][on] = np.abs(cols["head_deviation"][on]) > HEAD_TOLERANCE
        flags["outside_tested_map"][on] = ~inside
        broken = _broken_limits(train, op)
        text = [", ".join(LIMIT_NAMES[k] for k, v in broken.items() if v[i] and k != "map")
                for i in range(int(on.sum()))]
        limits[on] = text
        if f"{u}.available" in rows:
            flags["ran_while_unavailable"][on] = ~rows[f"{u}.available"][on]
    price, co2 = station.price(train)
    measured = rows.get(f"{u}.power", np.full(n, np.nan))
    kind = hist["power_measures"].get(u)
    model = cols["shaft"] if kind == "shaft" else cols["input"]
    used_input = np.where(np.isfinite(measured) & (kind == "driver_input"), measured,
                          cols["input"])
    share = np.divide(recycle, through, out=np.zeros(n), where=through > 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        gap = np.where(on & np.isfinite(measured), measured / model - 1, np.nan)
    out.update({f"{u}.{k}": v for k, v in cols.items()})
    out.update({f"{u}.{k}": v for k, v in flags.items()})
    out.update({f"{u}.through": through, f"{u}.recycle": recycle, f"{u}.net": net,
                f"{u}.running": on, f"{u}.limits_broken": limits,
                f"{u}.recycle_power": np.where(on, cols["shaft"] * share, 0.0),
                f"{u}.useful_power": np.where(on, cols["shaft"] * (1 - share), 0.0),
                f"{u}.measured_power": measured,
                f"{u}.model_gap": gap,
                f"{u}.cost_rate": np.where(on, used_input * price, 0.0),
                f"{u}.model_cost_rate": np.where(on, cols["input"] * price, 0.0),
                f"{u}.model_co2_rate": np.where(on, cols["input"] * co2, 0.0),
                f"{u}.recycle_cost_rate": np.where(on, used_input * price * share, 0.0),
                f"{u}.co2_rate": np.where(on, used_input * co2, 0.0)})
    for key in ("shaft", "input", "recycle_power", "useful_power"):
        out[f"{u}.{key}"] = np.where(on, out[f"{u}.{key}"], 0.0)


def _broken_limits(train, op) -> dict:
    """The model's limit checks, widened by :data:`LIMIT_TOLERANCE` for recorded points."""
    tol = LIMIT_TOLERANCE
    relaxed = dataclasses.replace(
        op, control_line_flow=op.control_line_flow * (1 - tol),
        stonewall_flow=op.stonewall_flow * (1 + tol),
        available_power=op.available_power * (1 + tol),
        discharge_temperature=op.discharge_temperature - 2.0)
    wide = dataclasses.replace(train, speed_min=train.speed_min * (1 - tol),
                               speed_max=train.speed_max * (1 + tol))
    return relaxed.violations(wide)


@dataclass
class _Curves:
    """Least-power curves of a bin: by name, and as the dispatch model's curves."""

    least: dict
    dispatch: list
    case: object

    def at_ambient(self, ambient: float, objective: str) -> _Curves:
        """The same curves with the ambient-sensitive drivers re-reduced at ``ambient`` [K]."""
        from trainopt.station import Station

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
    from trainopt.solve import Dispatcher

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


@dataclass
class AuditResult:
    """What the audit found, row by row, with the counts of what it could not audit.

    Attributes
    ----------
    case : Case
    hours : pandas.DataFrame
        One row per history row (index ``time``): ``status`` (``"audited"`` or why not),
        conditions, delivered flow, station power totals [kW] of the recorded split and of
        the optimum, recycle and avoidable power, cost and CO2 rates.
    unit_hours : pandas.DataFrame
        One row per history row and unit (columns ``time``, ``unit``, ...): operating
        point, margins, powers, flags, and the optimum's share.
    skipped : dict of str to int
        Rows not audited, by reason (reading and auditing).
    rows_read : int
        Data rows in the file.
    interval : float
        Duration each row stands for [s].
    bins : pandas.DataFrame
        The condition bins: gas label, mean conditions, warmest ambient, rows.
    seconds : float
        Wall time of the bin work [s].
    """

    case: object
    hours: pd.DataFrame
    unit_hours: pd.DataFrame
    skipped: dict
    rows_read: int
    interval: float
    bins: pd.DataFrame
    binning: Binning
    seconds: float = 0.0

    @property
    def audited(self) -> pd.DataFrame:
        """The rows audited (status ``"audited"``)."""
        return self.hours[self.hours["status"] == "audited"]

    def totals(self) -> dict:
        """Period totals over the audited rows: energies [MWh], cost, CO2 [t], counts."""
        h = self.audited
        hours = self.interval / 3600.0

        def mwh(column):
            return float(h[column].sum()) * hours / 1e3

        return {
            "rows_read": self.rows_read,
            "rows_audited": len(h),
            "rows_skipped": int(sum(self.skipped.values())),
            "hours_audited": len(h) * hours,
            "shaft_energy_MWh": mwh("shaft_power_kW"),
            "recycle_energy_MWh": mwh("recycle_power_kW"),
            "optimum_shaft_energy_MWh": mwh("optimum_shaft_power_kW"),
            "avoidable_energy_MWh": mwh("avoidable_power_kW"),
            "driver_input_MWh": mwh("driver_input_kW"),
            "avoidable_driver_input_MWh": mwh("avoidable_driver_input_kW"),
            "fuel_GJ": float(h["fuel_kW"].sum()) * hours * 3.6e-3,
            "cost": float(h["cost_per_h"].sum()) * hours,
            "avoidable_cost": float((h["model_cost_per_h"] - h["optimum_cost_per_h"]).sum())
            * hours,
            "co2_t": float(h["co2_t_h"].sum()) * hours,
            "avoidable_co2_t": float((h["model_co2_t_h"] - h["optimum_co2_t_h"]).sum()) * hours,
            "currency": self.case.economics.currency,
            "rows_flagged": int((self.hours["flags"] > 0).sum()),
            "bins": len(self.bins),
            "seconds": self.seconds,
        }

    def summary(self) -> str:
        """Totals and skip counts as text, ending with the caution."""
        from trainopt.studies.history_io import describe_skips

        t = self.totals()
        lines = [
            f"Rows read {t['rows_read']}, audited {t['rows_audited']} "
            f"({t['hours_audited']:.0f} h), skipped {t['rows_skipped']}, flagged "
            f"{t['rows_flagged']}; {t['bins']} condition bins, {t['seconds']:.1f} s",
            f"Shaft energy {t['shaft_energy_MWh']:.0f} MWh, of which recycle "
            f"{t['recycle_energy_MWh']:.0f} MWh; optimum {t['optimum_shaft_energy_MWh']:.0f} "
            f"MWh; avoidable {t['avoidable_energy_MWh']:.0f} MWh",
            f"Driver input {t['driver_input_MWh']:.0f} MWh (fuel {t['fuel_GJ']:.0f} GJ); "
            f"avoidable {t['avoidable_driver_input_MWh']:.0f} MWh, {t['avoidable_cost']:.0f} "
            f"{t['currency']}, {t['avoidable_co2_t']:.0f} t CO2",
            "Skipped rows:", describe_skips(self.skipped), "", CAUTION,
        ]
        return "\n".join(lines)


def gas_recipes(case, history: History) -> dict:
    """Gas label to (components, equation of state), building each gas once to check it."""
    from trainopt.gas import Gas
    from trainopt.io_gas import load_gas

    eos = case.gas.equation_of_state
    out = {}
    for label, value in history.gases.items():
        field = f"{history.mapping.where}: station.gas.compositions.{label}"
        if isinstance(value, str) and value == "case":
            gas = case.gas
        elif isinstance(value, dict):
            gas = Gas.from_composition(value, eos, field)
        else:
            gas = load_gas(value, eos)
        out[label] = (gas.components, eos)
    return out


def single_section_only(case, study: str) -> None:
    """Refuse a case with series trains: the studies evaluate single-section units so far."""
    for train in case.trains:
        if not train.is_single_section:
            raise InputError(f"units.{train.name}", f"is a train of {len(train.sections)} "
                             f"sections; {study} evaluates single-section units so far",
                             "take the train offline for this study, or audit it separately")


def condition_bins(frame: pd.DataFrame, binning: Binning) -> list[tuple[tuple, np.ndarray]]:
    """Group rows into condition bins; small bins join a near big one.

    Parameters
    ----------
    frame : pandas.DataFrame
        :attr:`History.frame`.
    binning : Binning

    Returns
    -------
    list of (key, positions)
        ``key`` is (gas, suction pressure, discharge pressure, suction temperature) in
        bin widths; positions index ``frame``'s rows.
    """
    scaled = pd.DataFrame({"p1": frame["suction_pressure"].to_numpy() / binning.pressure,
                           "p2": frame["discharge_pressure"].to_numpy() / binning.pressure,
                           "t1": frame["suction_temperature"].to_numpy() / binning.temperature})
    keys = scaled.round().assign(gas=frame["gas"].to_numpy())
    groups = dict(keys.groupby(["gas", "p1", "p2", "t1"], sort=True).indices)
    means = {k: scaled.iloc[pos].mean().to_numpy() for k, pos in groups.items()}
    big = [k for k, pos in groups.items() if len(pos) >= binning.min_rows]
    for key in [k for k in groups if k not in big]:
        near = [(np.max(np.abs(means[key] - means[b])), b) for b in big if b[0] == key[0]]
        if near and min(near)[0] <= 1.0:
            target = min(near)[1]
            groups[target] = np.sort(np.concatenate([groups[target], groups.pop(key)]))
    return sorted(groups.items(), key=lambda kv: kv[0])


def audit_history(case, history: History, *, binning: Binning | None = None,
                  objective: str | None = None, workers: int | None = None, scheduler=None,
                  progress: bool = True) -> AuditResult:
    """Audit a history: recorded split against the optimum, row by row.

    Parameters
    ----------
    case : Case
        The station (its units' statuses are ignored: the history says which ran and,
        through ``available`` columns, which could have).
    history : History
        From :func:`~trainopt.studies.history_io.read_history`.
    binning : Binning, optional
        Condition bins and demand step.
    objective : str, optional
        What the optimum minimises (``shaft_power``, ``energy_input``, ``cost``); the
        case's by default.
    workers : int, optional
        Local processes (default every core; 1 runs here).
    scheduler : str or distributed.Client, optional
        Dask scheduler address (``tcp://host:8786``) instead of local processes.
    progress : bool
        Show a progress bar.

    Returns
    -------
    AuditResult
    """
    from trainopt.station import OBJECTIVES
    from trainopt.units import Kind, parse_quantity

    single_section_only(case, "the history audit")
    binning = binning or Binning()
    objective = objective or case.objective
    if objective not in OBJECTIVES:
        raise InputError("objective", f"unknown objective '{objective}'",
                         f"use one of {', '.join(OBJECTIVES)}")
    recipes = gas_recipes(case, history)
    frame = history.frame
    mapping = history.mapping
    meta = {"basis": history.flow_basis, "measures": {}, "power_measures": {}, "valves": {},
            "valve_temperature": {}}
    for u, spec in mapping.units.items():
        meta["measures"][u] = spec.flow.measures
        if spec.power is not None:
            meta["power_measures"][u] = spec.power.measures
        if spec.recycle_valve is not None:
            meta["valves"][u] = spec.recycle_valve
            if spec.recycle_valve.inlet_temperature is not None:
                meta["valve_temperature"][u] = parse_quantity(
                    spec.recycle_valve.inlet_temperature, Kind.TEMPERATURE,
                    f"{mapping.where}: units.{u}.recycle_valve.inlet_temperature")
    if frame.empty:
        from trainopt.studies.history_io import describe_skips

        raise InputError(str(history.source or "history"), "no row is left to audit; "
                         + describe_skips(history.skipped).replace("\n", "; "),
                         "check the column mapping and the file against the skip reasons")
    groups = condition_bins(frame, binning)
    transport = dataclasses.replace(case, gas=None)
    data_columns = [c for c in frame.columns if "." in c]
    tasks, bins = [], []
    for number, (key, pos) in enumerate(groups):
        sub = frame.iloc[pos]
        cond = (float(sub["suction_pressure"].mean()), float(sub["discharge_pressure"].mean()),
                float(sub["suction_temperature"].mean()), float(sub["ambient_temperature"].max()))
        rows = {"ambient": sub["ambient_temperature"].to_numpy(float)}
        rows.update({c: sub[c].to_numpy() for c in data_columns})
        tasks.append(_BinTask(transport, recipes[key[0]], cond, rows, meta, objective, binning))
        bins.append({"bin": number, "gas": key[0], "rows": len(pos),
                     "suction_pressure_bar": cond[0] / 1e5,
                     "discharge_pressure_bar": cond[1] / 1e5,
                     "suction_temperature_C": cond[2] - 273.15,
                     "warmest_ambient_C": cond[3] - 273.15})
    start = time.perf_counter()
    results = run_tasks(audit_bin, tasks, workers=workers, scheduler=scheduler,
                        weights=[len(pos) for _, pos in groups], progress=progress,
                        description="audit", unit="row")
    seconds = time.perf_counter() - start
    bins = pd.DataFrame(bins)
    hours, units = _assemble(case, history, recipes, groups, results, bins)
    skipped = dict(history.skipped)
    for reason, count in hours.loc[hours["status"] != "audited", "status"].value_counts().items():
        skipped[str(reason)] = skipped.get(str(reason), 0) + int(count)
    return AuditResult(case, hours, units, skipped, len(frame) + len(history.skipped_rows),
                       history.interval, bins, binning, seconds)


_UNIT_COLUMNS = {  # audit field -> (column, factor to the column's unit)
    "net": ("net_mass_flow_kg_s", 1.0), "through": ("through_mass_flow_kg_s", 1.0),
    "recycle": ("recycle_kg_s", 1.0), "speed": ("speed_rpm", 60.0),
    "recorded_speed": ("recorded_speed_rpm", 60.0),
    "volume_flow": ("inlet_volume_flow_m3_h", 3600.0), "head": ("head_kJ_kg", 1e-3),
    "efficiency": ("efficiency", 1.0), "shaft": ("shaft_power_kW", 1e-3),
    "useful_power": ("useful_power_kW", 1e-3), "recycle_power": ("recycle_power_kW", 1e-3),
    "input": ("driver_input_kW", 1e-3), "available_power": ("available_power_kW", 1e-3),
    "measured_power": ("measured_power_kW", 1e-3), "model_gap": ("model_gap_pct", 100.0),
    "surge_margin": ("surge_margin_pct", 100.0),
    "control_line_margin": ("control_line_margin_pct", 100.0),
    "head_deviation": ("head_deviation_pct", 100.0),
    "discharge_temperature": ("discharge_temperature_C", 1.0),
    "cost_rate": ("cost_per_h", 3600.0), "recycle_cost_rate": ("recycle_cost_per_h", 3600.0),
    "model_cost_rate": ("model_cost_per_h", 3600.0), "model_co2_rate": ("model_co2_t_h", 3.6),
    "co2_rate": ("co2_t_h", 3.6), "opt_net": ("optimum_net_mass_flow_kg_s", 1.0),
    "opt_through": ("optimum_through_mass_flow_kg_s", 1.0),
    "opt_recycle": ("optimum_recycle_kg_s", 1.0), "opt_shaft": ("optimum_shaft_power_kW", 1e-3),
    "opt_recycle_power": ("optimum_recycle_power_kW", 1e-3),
    "opt_input": ("optimum_driver_input_kW", 1e-3),
    "opt_cost_rate": ("optimum_cost_per_h", 3600.0), "opt_co2_rate": ("optimum_co2_t_h", 3.6),
}
_UNIT_FLAGS = ("running", "left_of_surge_without_recycle", "head_off_map", "outside_tested_map",
               "ran_while_unavailable")


def _assemble(case, history, recipes, groups, results, bins):
    """Per-row and per-unit tables from the bins' arrays, in the history's row order."""
    from trainopt.gas import Gas

    frame = history.frame
    parts = []
    for number, ((_key, pos), res) in enumerate(zip(groups, results, strict=True)):
        stats = res.pop("stats", {})
        for key, value in stats.items():
            bins.loc[number, key] = value
        part = pd.DataFrame({k: v for k, v in res.items()}, index=pos)
        part["bin"] = number
        parts.append(part)
    r = pd.concat(parts).sort_index()
    names = [t.name for t in case.trains]
    for u in names:
        r[f"{u}.recorded_speed"] = frame[f"{u}.speed"].to_numpy() if f"{u}.speed" in frame \
            else np.nan
    status = r["skip"].to_numpy(dtype=object).copy()
    off_map = np.zeros(len(r), bool)
    for u in names:
        if f"{u}.running" in r:
            running = r[f"{u}.running"].fillna(False).to_numpy(bool)
            off_map |= running & ~np.isfinite(r[f"{u}.shaft"].to_numpy(float))
    open_rows = status == ""
    status[open_rows & off_map] = "recorded split off the map (no model power)"
    status[status == ""] = "audited"
    density = {label: Gas.from_composition(dict(c), e).standard_density("iso")
               for label, (c, e) in recipes.items()}
    rho_std = frame["gas"].map(density).to_numpy(float)
    hours = pd.DataFrame(index=frame.index)
    hours["status"] = status
    hours["bin"] = r["bin"].to_numpy()
    hours["gas"] = frame["gas"].to_numpy()
    hours["suction_pressure_bar"] = frame["suction_pressure"].to_numpy() / 1e5
    hours["discharge_pressure_bar"] = frame["discharge_pressure"].to_numpy() / 1e5
    hours["suction_temperature_C"] = frame["suction_temperature"].to_numpy() - 273.15
    hours["ambient_temperature_C"] = frame["ambient_temperature"].to_numpy() - 273.15
    demand = r["demand"].to_numpy(float) if "demand" in r else np.full(len(r), np.nan)
    hours["delivered_kg_s"] = demand
    hours["delivered_MMSCMD"] = demand / rho_std * 86_400 / 1e6
    meter = r["station_meter"].to_numpy(float) if "station_meter" in r else np.full(len(r), np.nan)
    hours["station_meter_kg_s"] = meter
    with np.errstate(invalid="ignore", divide="ignore"):
        hours["flow_balance_off"] = np.abs(meter - demand) > FLOW_BALANCE_TOLERANCE * meter
    for label, run_key in (("running", "running"), ("optimum_running", "opt_through")):
        cols = [r[f"{u}.{run_key}"].fillna(0).to_numpy() > 0 if f"{u}.{run_key}" in r else
                np.zeros(len(r), bool) for u in names]
        hours[label] = ["+".join(u for u, c in zip(names, row, strict=True) if c)
                        for row in zip(*cols, strict=True)]
    sums = {"shaft_power_kW": "shaft", "useful_power_kW": "useful_power",
            "recycle_power_kW": "recycle_power", "optimum_shaft_power_kW": "opt_shaft",
            "optimum_recycle_power_kW": "opt_recycle_power", "driver_input_kW": "input",
            "optimum_driver_input_kW": "opt_input", "cost_per_h": "cost_rate",
            "optimum_cost_per_h": "opt_cost_rate", "co2_t_h": "co2_rate",
            "optimum_co2_t_h": "opt_co2_rate"}
    for column, field in sums.items():
        _, factor = _UNIT_COLUMNS[field]
        hours[column] = sum(r[f"{u}.{field}"].to_numpy(float) if f"{u}.{field}" in r else 0.0
                            for u in names) * factor
    hours["avoidable_power_kW"] = hours["shaft_power_kW"] - hours["optimum_shaft_power_kW"]
    hours["avoidable_driver_input_kW"] = (hours["driver_input_kW"]
                                          - hours["optimum_driver_input_kW"])
    fuel = [t.name for t in case.trains if "motor" not in t.driver.kind]
    hours["fuel_kW"] = sum(r[f"{u}.input"].to_numpy(float) if f"{u}.input" in r else 0.0
                           for u in fuel) / 1e3
    for column, field in (("model_cost_per_h", "model_cost_rate"),
                          ("model_co2_t_h", "model_co2_rate")):
        _, factor = _UNIT_COLUMNS[field]
        hours[column] = sum(r[f"{u}.{field}"].to_numpy(float) if f"{u}.{field}" in r else 0.0
                            for u in names) * factor
    units = []
    for u in names:
        table = pd.DataFrame({"time": frame.index, "unit": u, "status": status})
        for field, (column, factor) in _UNIT_COLUMNS.items():
            key = f"{u}.{field}"
            table[column] = r[key].to_numpy(float) * factor if key in r else np.nan
        for flag in _UNIT_FLAGS:
            key = f"{u}.{flag}"
            table[flag] = r[key].fillna(False).to_numpy(bool) if key in r else False
        table["limits_broken"] = r[f"{u}.limits_broken"].fillna("").to_numpy() \
            if f"{u}.limits_broken" in r else ""
        table["discharge_temperature_C"] -= 273.15
        units.append(table)
    unit_hours = pd.concat(units, ignore_index=True)
    flag_cols = [f for f in _UNIT_FLAGS if f != "running"]
    per_row = unit_hours.groupby("time", sort=False)[flag_cols].sum().sum(axis=1)
    broken = (unit_hours["limits_broken"] != "").groupby(unit_hours["time"], sort=False).sum()
    hours["flags"] = (per_row.reindex(hours.index).to_numpy()
                      + broken.reindex(hours.index).to_numpy()
                      + hours["flow_balance_off"].to_numpy(int))
    return hours, unit_hours
