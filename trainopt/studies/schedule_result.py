"""The schedule's answer: per period and unit on the true model, the starts, the costs.

:func:`period_table` evaluates every carrying unit's through-flow on the true model
(map, gas, driver; :func:`trainopt.dispatch.reduction.operate`) at its period bin's
conditions, one vectorised call per bin and unit. :class:`ScheduleResult` holds the
tables and the comparisons, with :meth:`ScheduleResult.to_dict` for JSON.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from trainopt.dispatch.reduction import operate
from trainopt.station.result import CAUTION

SCOPE = ("Steady state per period: the start-up transient, a trip's transient and the "
         "anti-surge controller's response are not modelled.")


def _pct(x):
    return 100.0 * np.asarray(x, float)


def period_table(times, solution, bins, currency: str) -> pd.DataFrame:
    """One row per period and unit.

    Parameters
    ----------
    times : pandas.DatetimeIndex
        Start of each period.
    solution : CommitmentSolution
    bins : PeriodBins
    currency : str
        Label of the cost columns.

    Returns
    -------
    pandas.DataFrame
        ``time``, ``unit``, ``running`` (running or starting), ``starting`` (in its
        start-up time), ``started``, ``stopped``, ``net_flow_kg_s``, ``recycle_kg_s``,
        ``through_flow_kg_s``, ``flow_share_pct``, ``speed_rpm``, ``shaft_power_kW``,
        ``driver_input_kW``, ``energy_cost_<currency>``, ``start_stop_cost_<currency>``,
        ``control_line_margin_pct``, ``surge_margin_pct``, ``stonewall_margin_pct``,
        ``driver_power_margin_pct``, ``speed_max_margin_pct``.
    """
    n, k = solution.on.shape
    cols = {c: np.full((n, k), math.nan) for c in (
        "speed_rpm", "shaft_power_kW", "driver_input_kW", "control_line_margin_pct",
        "surge_margin_pct", "stonewall_margin_pct", "driver_power_margin_pct",
        "speed_max_margin_pct")}
    for b, station in enumerate(bins.stations):
        rows = np.flatnonzero(bins.bin_of == b)
        for j, name in enumerate(solution.units):
            here = rows[solution.carrying[rows, j]]
            if not here.size:
                continue
            train = station.case.train(name)
            m = solution.through_flow[here, j]
            if train.is_single_section:
                op = operate(train, station.duty(train), m, station.case.ambient_temperature)
                cols["speed_rpm"][here, j] = op.speed * 60.0
                cols["shaft_power_kW"][here, j] = op.shaft_power / 1e3
                cols["driver_input_kW"][here, j] = op.energy_input / 1e3
                cols["control_line_margin_pct"][here, j] = _pct(
                    (op.volume_flow - op.control_line_flow) / op.control_line_flow)
                cols["surge_margin_pct"][here, j] = _pct(
                    (op.volume_flow - op.surge_flow) / op.surge_flow)
                cols["stonewall_margin_pct"][here, j] = _pct(
                    (op.stonewall_flow - op.volume_flow) / op.stonewall_flow)
                cols["driver_power_margin_pct"][here, j] = _pct(
                    (op.available_power - op.shaft_power) / op.available_power)
                cols["speed_max_margin_pct"][here, j] = _pct(
                    (train.speed_max - op.speed) / train.speed_max)
            else:
                speed, margin = station.profile(name, m)
                cols["speed_rpm"][here, j] = speed * train.speed_max * 60.0
                cols["control_line_margin_pct"][here, j] = _pct(margin)
                curve = station.curves[name]
                cols["shaft_power_kW"][here, j] = np.interp(m, curve.mass_flow,
                                                            curve.shaft_power) / 1e3
    total = solution.net_flow.sum(axis=1, keepdims=True)
    share = np.divide(solution.net_flow, total, out=np.zeros_like(solution.net_flow),
                      where=total > 0) * 100.0
    data = {
        "time": np.repeat(times, k), "unit": np.tile(solution.units, n),
        "running": solution.on.ravel(), "starting": (solution.on & ~solution.carrying).ravel(),
        "started": solution.start.ravel(), "stopped": solution.stop.ravel(),
        "net_flow_kg_s": solution.net_flow.ravel(), "recycle_kg_s": solution.recycle.ravel(),
        "through_flow_kg_s": solution.through_flow.ravel(), "flow_share_pct": share.ravel(),
        f"energy_cost_{currency}": solution.energy_cost.ravel(),
        f"start_stop_cost_{currency}": (solution.start_cost + solution.stop_cost).ravel()}
    data.update({c: v.ravel() for c, v in cols.items()})
    return pd.DataFrame(data)


def starts_table(times, solution, currency: str) -> pd.DataFrame:
    """One row per start or stop: ``time``, ``unit``, ``event``, ``cost_<currency>``."""
    rows = []
    for t, j in zip(*np.nonzero(solution.start | solution.stop), strict=True):
        started = bool(solution.start[t, j])
        rows.append({"time": times[t], "unit": solution.units[j],
                     "event": "start" if started else "stop",
                     f"cost_{currency}": float(solution.start_cost[t, j] if started
                                               else solution.stop_cost[t, j])})
    return pd.DataFrame(rows, columns=["time", "unit", "event", f"cost_{currency}"])


@dataclass
class ScheduleResult:
    """A commitment schedule over a forecast horizon.

    Attributes
    ----------
    case_name : str
    currency : str
    period : float
        Period length [s].
    periods : pandas.DataFrame
        Per period and unit (:func:`period_table`).
    starts : pandas.DataFrame
        Starts and stops with their costs (:func:`starts_table`).
    costs : dict
        ``energy``, ``starts``, ``stops``, ``total`` [currency] of the schedule, and the
        ``start_count`` and ``stop_count``.
    comparison : pandas.DataFrame
        One row per way of running: ``schedule``, ``hour-by-hour optimum``, ``keep initial
        commitment`` (and ``schedule without trip reserve`` when one is asked), with
        energy, start and stop costs, total, starts, and the schedule's saving (columns
        ``..._<currency>``).
    trip_share : float or None
        Trip reserve asked [-].
    solver : dict
        Gap, bound, seconds, number of condition bins.
    notes : list of str
    """

    case_name: str
    currency: str
    period: float
    periods: pd.DataFrame
    starts: pd.DataFrame
    costs: dict
    comparison: pd.DataFrame
    trip_share: float | None = None
    solver: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)
    trip_check: pd.DataFrame | None = None

    caution: str = CAUTION
    scope: str = SCOPE

    def to_dict(self) -> dict:
        """JSON-ready form: tables as lists of records, times in ISO 8601."""
        def records(frame):
            if frame is None:
                return None
            out = frame.copy()
            for c in out.columns:
                if pd.api.types.is_datetime64_any_dtype(out[c]):
                    out[c] = out[c].map(lambda x: x.isoformat())
            out = out.astype(object).where(pd.notna(out), None)
            return out.to_dict(orient="records")

        return {"case": self.case_name, "currency": self.currency,
                "period_h": self.period / 3600.0, "trip_reserve_share": self.trip_share,
                "costs": self.costs, "comparison": records(self.comparison),
                "starts": records(self.starts), "periods": records(self.periods),
                "trip_check": records(self.trip_check), "solver": self.solver,
                "notes": list(self.notes), "scope": self.scope, "caution": self.caution}
