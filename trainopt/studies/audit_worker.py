"""The per-bin worker of the history audit, and the recorded split on the true model.

:func:`audit_bin` audits the rows of one condition bin: it reduces the bin's units once,
converts the recorded flows to through, recycle and net mass flows, evaluates the recorded
split on the true model (map, gas, driver) with its flags and broken limits, and asks
:mod:`~trainopt.studies.audit_optimum` for the optimum split of the same demands.
"""

from __future__ import annotations

import dataclasses
import threading
import time
from dataclasses import dataclass

import numpy as np

from trainopt.dispatch.reduction import LIMIT_NAMES, operate
from trainopt.errors import TrainoptError, TwoPhaseError
from trainopt.machines.train import UnitStatus
from trainopt.studies.audit_binning import Binning
from trainopt.studies.audit_optimum import _Curves, _evaluate_optimum, _optimum, _power_limited
from trainopt.studies.history_reader import mass_flow
from trainopt.studies.recycle_valve import valve_mass_flow

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

_LOCK = threading.Lock()


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
    from trainopt.physics.gas import Gas

    components, eos = recipe
    return Gas.from_composition(dict(components), eos)


def audit_bin(task: _BinTask) -> dict:
    """Audit the rows of one condition bin (a task for :func:`.parallel.run_tasks`).

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
    from trainopt.station.reduced import Station

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
