"""The station's main job: least-power load split, and the evaluation of a given split.

``optimize`` reduces every unit to a least-power curve at today's conditions
(:class:`~trainopt.station.reduced.Station`), hands the curves to the dispatch model
(:mod:`trainopt.dispatch.model`, solved by HiGHS in :mod:`trainopt.dispatch.solve`),
evaluates the chosen split on the true model, refines it there, and compares it with the
usual load-sharing baselines. ``evaluate`` takes a split the user gives and reports it the
same way.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import replace

from trainopt.case.loading import Case
from trainopt.errors import InputError
from trainopt.machines.train import UnitStatus
from trainopt.physics.units import Kind, parse_flow, parse_quantity
from trainopt.station.header import evaluate_header_split, optimize_header
from trainopt.station.reduced import Station, evaluate_split, requested_demand
from trainopt.station.reduced_station import answer
from trainopt.station.result import StationResult


def optimize(case: Case, demand=None, offline: Iterable[str] = (), objective: str | None = None,
             baselines: bool = True, throttle: bool | None = None,
             trip_reserve=None) -> StationResult:
    """Least-objective split of the demand across the station's units.

    Parameters
    ----------
    case : Case
        From :func:`trainopt.load_case`.
    demand : str or float, optional
        Throughput with a unit (``"280 MMSCFD"``, ``"70 kg/s"``) or a mass flow [kg/s];
        the case's demand by default.
    offline : iterable of str, optional
        Units to take offline.
    objective : str, optional
        ``shaft_power`` (default of cases), ``energy_input`` or ``cost``.
    baselines : bool, optional
        Also evaluate equal-flow, equal-speed and equal-margin sharing.
    throttle : bool, optional
        Let single-section units run at minimum speed with a discharge throttle where the
        pressure ratio puts their head below the minimum-speed line (the case's
        ``throttle`` by default); rows then show the throttled pressure drop and the lost
        power.
    trip_reserve : float or str, optional
        With any one running unit tripped, the others can carry at least this share of
        the demand within their limits (``0.9`` or ``"90 %"``; steady state only, see
        docs/schedule.md). ``result.solver["trip_reserve"]`` then gives the objective
        with and without it.

    Returns
    -------
    StationResult
        Status ``"optimal"`` with the per-unit table, or ``"infeasible"`` with the reason.
    """
    if throttle is not None and bool(throttle) != case.throttle:
        case = replace(case, throttle=bool(throttle))
    if case.interstage_header is not None:
        if trip_reserve is not None:
            raise InputError("trip_reserve", "is not available for a station with a shared "
                             "interstage header", "leave it out for this case")
        return optimize_header(case, demand, offline, objective, baselines)
    station = Station(case, offline, objective)
    return answer(station, requested_demand(case, demand), baselines=baselines,
                  trip_reserve=trip_reserve)


SPLIT_TOLERANCE = 1e-3
"""Relative difference allowed between a split's total and the demand it should meet [-]."""


def evaluate(case: Case, split: Mapping[str, object], demand=None) -> StationResult:
    """Evaluate a given split on the true model.

    Parameters
    ----------
    case : Case
    split : mapping of str to str or float
        Unit (or train) name to net mass flow [kg/s] (or a flow string with its unit).
        Units absent are stopped (they keep the case's status; they are not offline).
        Each running unit gets the least recycle it needs. For
        a station with a shared interstage header, the key ``interstage_header`` gives
        its pressure (``"48 bar"`` or [Pa]).
    demand : str or float, optional
        The station throughput the split must add up to (a flow with its unit, or a mass
        flow [kg/s]); when given, a split whose net flows differ from it by more than
        :data:`SPLIT_TOLERANCE` is refused. By default the split's own sum is the demand
        (the case's demand is not imposed on a split).

    Returns
    -------
    StationResult
        ``"infeasible"`` with the reason if a unit cannot carry its share.
    """
    names = {t.name for t in case.trains}
    flows = {}
    split = dict(split)
    header_pressure = split.pop("interstage_header", None)
    if case.interstage_header is None and header_pressure is not None:
        raise InputError("split.interstage_header", "the case has no shared interstage header",
                         "leave it out of the split")
    if case.interstage_header is not None and header_pressure is None:
        raise InputError("split.interstage_header", "is missing: a shared-header station needs "
                         "the header pressure", "add interstage_header='48 bar' to the split")
    for name, value in split.items():
        if name not in names:
            raise InputError(f"split.{name}", f"no unit named '{name}'",
                             f"use one of {', '.join(sorted(names))}")
        if isinstance(value, str):
            value = case.demand_mass_flow(parse_flow(value, f"split.{name}"))
        if not float(value) >= 0:
            raise InputError(f"split.{name}", f"{value} is negative", "give a net flow >= 0")
        flows[name] = float(value)
    if demand is not None:
        target = requested_demand(case, demand)
        total = sum(flows.values())
        if abs(total - target) > SPLIT_TOLERANCE * max(target, 1e-9):
            raise InputError("split", f"the shares add up to {total:.3f} kg/s but the demand is "
                             f"{target:.3f} kg/s", "make the shares add up to the demand, or "
                             "state the demand they meet (--demand)")
    left_out = [t.name for t in case.trains if t.name not in flows]
    for name in flows:
        if case.train(name).status is UnitStatus.OFFLINE:
            raise InputError(f"split.{name}", "the case marks this unit offline",
                             "leave it out of the split or change its status")
    if header_pressure is not None:
        pressure = (float(header_pressure) if isinstance(header_pressure, int | float) else
                    parse_quantity(header_pressure, Kind.PRESSURE, "split.interstage_header",
                                   atmospheric=case.atmospheric_pressure))
        return evaluate_header_split(case, flows, pressure)
    # units left out of the split are not reduced (they do not run), but they are stopped,
    # not offline: they keep the status the case gives them
    station = Station(case, left_out)
    for name in left_out:
        station.status[name] = case.train(name).status
    return evaluate_split(station, flows)


