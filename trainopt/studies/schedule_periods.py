"""The schedule's periods: condition bins reduced once each, and the rules counted in periods.

Periods with equal conditions (the history audit's bins of suction and discharge pressure
and suction temperature, :mod:`~trainopt.studies.audit_binning`, split further by ambient
temperature) share one :class:`~trainopt.station.reduced.Station`, reduced at the bin's
mean pressures and suction temperature and its warmest ambient (the least driver power).
This module also turns the case's start-stop rules into periods and refuses, by name, an
initial state that breaks a rule and demand above what the available units can carry.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from trainopt.dispatch.commitment_model import CommitmentRules
from trainopt.dispatch.unit_curve import UnitCurve
from trainopt.errors import InputError
from trainopt.machines.train import UnitStatus
from trainopt.station.reduced import Station
from trainopt.studies.audit_binning import Binning, condition_bins

DAY = 86_400.0


@dataclass
class PeriodBins:
    """Each period's reduced station and curves.

    Attributes
    ----------
    bin_of : numpy.ndarray of int
        Per period, the index of its bin.
    stations : list of Station
        Per bin, the station reduced at the bin's conditions (objective ``cost``).
    curves : list of dict of str to UnitCurve
        Per bin, the curves of the units that can run [currency/s].
    """

    bin_of: np.ndarray
    stations: list
    curves: list

    def period_curves(self) -> list[dict[str, UnitCurve]]:
        """Per period, its bin's curves (the same dict object within a bin)."""
        return [self.curves[b] for b in self.bin_of]


def reduce_periods(case, frame: pd.DataFrame, binning: Binning) -> PeriodBins:
    """Bin the forecast's periods by conditions and reduce each bin once.

    Parameters
    ----------
    case : trainopt.Case
    frame : pandas.DataFrame
        :attr:`~trainopt.studies.schedule_forecast.Forecast.frame`.
    binning : Binning

    Returns
    -------
    PeriodBins
    """
    data = frame.reset_index(drop=True).assign(gas="case")
    bin_of = np.full(len(data), -1)
    stations, curves = [], []
    trains = tuple(t if t.status is UnitStatus.OFFLINE else
                   dataclasses.replace(t, status=UnitStatus.AVAILABLE) for t in case.trains)
    must = {t.name for t in case.trains if t.status is UnitStatus.MUST_RUN}
    for _, rows in condition_bins(data, binning):
        ambient = data["ambient_temperature"].to_numpy()[rows]
        keys = np.round(ambient / binning.ambient)
        for key in np.unique(keys):
            part = rows[keys == key]
            sub = data.iloc[part]
            here = dataclasses.replace(
                case, suction_pressure=float(sub["suction_pressure"].mean()),
                discharge_pressure=float(sub["discharge_pressure"].mean()),
                suction_temperature=float(sub["suction_temperature"].mean()),
                ambient_temperature=float(sub["ambient_temperature"].max()), trains=trains)
            station = Station(here, objective="cost")
            bin_of[part] = len(stations)
            stations.append(station)
            curves.append({c.name: dataclasses.replace(
                c, status="must_run" if c.name in must else "available", group=None)
                for c in station.unit_curves()})
    return PeriodBins(bin_of, stations, curves)


def periods_of(seconds: float, period: float) -> int:
    """A duration in whole periods, rounded up [-]."""
    return int(math.ceil(seconds / period - 1e-9))


def commitment_rules(case, period: float) -> dict[str, CommitmentRules]:
    """The case's start-stop rules counted in periods, start fuel priced in currency.

    Parameters
    ----------
    case : trainopt.Case
    period : float
        Period length [s].

    Returns
    -------
    dict of str to CommitmentRules
    """
    out = {}
    for train in case.trains:
        r = case.unit_rules[train.name]
        fuel = r.start_fuel * case.economics.fuel_price
        initial = (train.status is not UnitStatus.OFFLINE if r.initial_running is None
                   else r.initial_running)
        out[train.name] = CommitmentRules(
            start_cost=r.start_cost + fuel, stop_cost=r.stop_cost,
            cold_start_cost=None if r.cold_start_cost is None else r.cold_start_cost + fuel,
            cold_after=0 if r.cold_after is None else periods_of(r.cold_after, period),
            startup_periods=periods_of(r.startup_time, period),
            min_up=max(1, periods_of(r.min_up_time, period)),
            min_down=max(1, periods_of(r.min_down_time, period)),
            max_starts=r.max_starts_per_day, initial_on=initial,
            initial_periods=max(1, int(r.hours_in_state // period)))
    return out


def check_initial_state(case, rules: dict[str, CommitmentRules], curves, labels) -> None:
    """Refuse an initial state that a unit's status or availability makes impossible.

    A unit still inside its minimum up time must keep running, so it must be able to
    run; one still inside its minimum down time must stay stopped, so it must not be
    must-run.
    """
    for i, train in enumerate(case.trains):
        r = rules[train.name]
        key = f"units[{i}].commitment.initial_state"
        if r.initial_on:
            keep = r.min_up_effective - r.initial_periods
            blocked = [t for t in range(min(keep, len(curves))) if train.name not in curves[t]]
            if train.status is UnitStatus.OFFLINE and keep > 0:
                raise InputError(key, f"{train.name} is running for {r.initial_periods} "
                                 f"period(s) and its minimum up time keeps it on for {keep} "
                                 "more, but it is offline", "set initial_state: stopped, a "
                                 "longer hours_in_state, or make the unit available")
            if blocked:
                raise InputError(key, f"{train.name} must keep running until period "
                                 f"{keep} (minimum up time) but cannot run at "
                                 f"{labels[blocked[0]]}", "check its initial state and "
                                 "hours_in_state, or the forecast conditions")
        else:
            keep = r.min_down - r.initial_periods
            if train.status is UnitStatus.MUST_RUN and keep > 0:
                raise InputError(key, f"{train.name} is stopped for {r.initial_periods} "
                                 f"period(s), its minimum down time keeps it off {keep} more, "
                                 "but it is must-run", "set initial_state: running, a longer "
                                 "hours_in_state, or status: available")


def check_capacity(curves, demand, labels) -> None:
    """Refuse periods whose demand is above every available unit's largest flow together.

    The message names the periods (first few), the largest shortfall [kg/s] and what sets
    each unit's largest flow.
    """
    capacity = np.array([sum(c.flow_max for c in p.values()) for p in curves])
    short = np.asarray(demand, float) - capacity
    bad = np.flatnonzero(short > 1e-9 * np.maximum(capacity, 1.0))
    if not bad.size:
        return
    worst = int(bad[np.argmax(short[bad])])
    limits = ", ".join(f"{n}: {c.flow_max:.1f} kg/s ({c.largest_flow_limit or 'limit'})"
                       for n, c in curves[worst].items()) or "no unit can run"
    names = ", ".join(str(labels[k]) for k in bad[:4]) + (" ..." if bad.size > 4 else "")
    raise InputError("forecast demand", f"above the station's capacity in {bad.size} "
                     f"period(s) ({names}); the largest shortfall is {short[worst]:.2f} kg/s "
                     f"at {labels[worst]}, where the units give at most {limits}",
                     "lower the demand in those periods or make more units available")
