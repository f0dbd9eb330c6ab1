"""Two groups of parallel units joined by a shared interstage header.

An upstream group takes gas from the suction header into the interstage header; a
downstream group takes it, after the header's cooler, to the discharge header. Every
unit of a group shares the header pressure, so the groups are coupled through it: the
split that saves power is as much about that pressure as about the flows.

The header pressure is searched in an outer loop around the station model: at each
pressure both groups are reduced to least-objective curves (on the gas table,
see :func:`trainopt.dispatch.series_reduction.reduce_under`) and each group's dispatch is
solved by HiGHS
(:func:`trainopt.dispatch.solve.solve_dispatch`); the station objective is the sum. The search
takes :data:`HEADER_GRID` pressures evenly in ln p across the allowed range, then
:data:`HEADER_GOLDEN_STEPS` golden-section steps around the best (the two-step
bracket shrinks by 0.618^10, to about 1/60 of a grid step). At the chosen pressure both
groups are reduced again on the exact model (:class:`trainopt.station.reduced.Station`) and
reported as usual.
The objective is not guaranteed unimodal in the header pressure (units start and stop
along it); the grid guards against a wrong valley, the brute-force check in
``benchmarks/series_trains.py`` measures what is left.
"""

from __future__ import annotations

import math
import time
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from trainopt.case.loading import Case
from trainopt.dispatch.model import UnitCurve
from trainopt.dispatch.reduction import LIMIT_NAMES
from trainopt.dispatch.series_reduction import reduce_under
from trainopt.dispatch.solve import solve_dispatch
from trainopt.errors import InputError
from trainopt.machines.train import Train, UnitStatus
from trainopt.machines.train_operation import TrainConditions, gas_table_for
from trainopt.physics.compression import HeadBasis
from trainopt.physics.gas_table import GasTable
from trainopt.station.baselines import compare_all_units, compare_baselines, objective_unit
from trainopt.station.reduced import (
    Station,
    chosen_objective,
    driver_price,
    evaluate_split,
    requested_demand,
    station_result,
)
from trainopt.station.result import StationResult

HEADER_GRID = 9
"""Header pressures of the coarse grid [-]."""

HEADER_GOLDEN_STEPS = 10
"""Golden-section steps refining the header pressure [-]."""

_GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0
SIDES = ("upstream", "downstream")


def group_case(case: Case, side: str, pressure: float) -> Case:
    """The case of one group alone at a header pressure [Pa].

    The upstream group runs from the suction header to the header pressure; the
    downstream group from the header pressure less the cooler's drop, at the cooler's
    outlet temperature, to the discharge header.
    """
    header = case.interstage_header
    names = header.upstream_units if side == "upstream" else header.downstream_units
    trains = tuple(t for t in case.trains if t.name in names)
    if side == "upstream":
        return replace(case, discharge_pressure=pressure, trains=trains, interstage_header=None)
    return replace(case, suction_pressure=pressure - header.cooler.pressure_drop,
                   suction_temperature=header.cooler.outlet_temperature, trains=trains,
                   interstage_header=None)


@dataclass(frozen=True)
class HeaderPoint:
    """The station at one header pressure (fast model).

    Attributes
    ----------
    pressure : float
        Header pressure [Pa].
    objective : float
        Sum of both groups' dispatch objectives [W or currency/s]; inf if either group
        cannot carry the demand.
    reason : str
        Why infeasible, if it is.
    """

    pressure: float
    objective: float
    reason: str = ""


class HeaderSearch:
    """A shared-header station at today's conditions, ready to try header pressures.

    Parameters
    ----------
    case : Case
        A case with an ``interstage_header``.
    offline : iterable of str
        Units to take offline.
    objective : str, optional
        ``shaft_power``, ``energy_input`` or ``cost``; the case's by default.
    """

    def __init__(self, case: Case, offline: Iterable[str] = (), objective: str | None = None):

        if case.interstage_header is None:
            raise InputError("interstage_header", "the case has no shared interstage header",
                             "use trainopt.optimize for a station of parallel units")
        self.case = case
        self.objective = chosen_objective(case, objective)
        self.offline = list(offline)
        for name in self.offline:
            case.train(name)
        header = case.interstage_header
        temps = [case.suction_temperature, header.cooler.outlet_temperature]
        for t in case.trains:
            temps += [s.cooler.outlet_temperature for s in t.sections if s.cooler is not None]
        self.table = gas_table_for(case.gas, (case.suction_pressure, case.discharge_pressure),
                                   temps)
        self.base = TrainConditions(self.table, case.suction_pressure, case.suction_temperature,
                                    case.discharge_pressure, case.ambient_temperature,
                                    self.objective,
                                    lambda driver: driver_price(case.economics, driver))
        self.pressure_min = _cooled_pressure(self.table, case)
        self.pressure_max = header.pressure_max
        self.evaluations: list[HeaderPoint] = []

    def status(self, train: Train) -> UnitStatus:
        """The unit's status with this search's offline units applied."""
        return UnitStatus.OFFLINE if train.name in self.offline else train.status

    def conditions(self, side: str, pressure: float) -> TrainConditions:
        """What one group works against at a header pressure [Pa]."""
        if side == "upstream":
            return replace(self.base, discharge_pressure=pressure)
        cooler = self.case.interstage_header.cooler
        return replace(self.base, suction_pressure=pressure - cooler.pressure_drop,
                       suction_temperature=cooler.outlet_temperature)

    def group_curves(self, side: str, pressure: float) -> tuple[list[UnitCurve], list[str]]:
        """Least-objective curves of one group's available units at a header pressure.

        Returns the curves and, for units that cannot run there, why. Units of one
        ``group`` key are identical: each such set is reduced once.
        """
        c = self.conditions(side, pressure)
        key = "cost_rate" if self.objective == "cost" else self.objective
        group = group_case(self.case, side, pressure).trains
        done, curves, reasons = {}, [], []
        for train in group:
            status = self.status(train)
            if status is UnitStatus.OFFLINE:
                continue
            tag = train.group or train.name
            if tag not in done:
                done[tag] = reduce_under(c, train)
            curve = done[tag]
            if not curve.feasible:
                reasons.append(f"{train.name}: {curve.reason}")
                continue
            curves.append(UnitCurve(train.name, curve.mass_flow,
                                    np.asarray(getattr(curve, key), float), status.value,
                                    train.group,
                                    largest_flow_limit=LIMIT_NAMES.get(curve.high_limit)))
        return curves, reasons

    def evaluate(self, pressure: float, demand: float) -> HeaderPoint:
        """Both groups reduced and dispatched at a header pressure [Pa] (fast model)."""
        total, reasons = 0.0, []
        for side in SIDES:
            curves, why = self.group_curves(side, pressure)
            if not curves:
                total = math.inf
                reasons.append(f"no {side} unit can run" + (": " + "; ".join(why) if why
                                                             else ""))
                continue
            d = solve_dispatch(curves, demand)
            if d.status == "infeasible":
                total = math.inf
                reasons.append(f"{side} group: {d.reason}")
            else:
                total += d.objective
        point = HeaderPoint(pressure, total, "; ".join(reasons))
        self.evaluations.append(point)
        return point

    def search(self, demand: float) -> HeaderPoint:
        """The header pressure of least station objective for a demand [kg/s].

        Returns
        -------
        HeaderPoint
            The best point tried (infinite objective with the reason if none works).
        """
        lo, hi = self.pressure_min, self.pressure_max
        grid = np.exp(np.linspace(math.log(lo), math.log(hi), HEADER_GRID))
        points = [self.evaluate(float(p), demand) for p in grid]
        k = int(np.argmin([p.objective for p in points]))
        best = points[k]
        if not math.isfinite(best.objective):
            return best
        a = math.log(grid[max(k - 1, 0)])
        b = math.log(grid[min(k + 1, HEADER_GRID - 1)])
        x1, x2 = b - _GOLDEN * (b - a), a + _GOLDEN * (b - a)
        f1, f2 = (self.evaluate(math.exp(x), demand) for x in (x1, x2))
        for _ in range(HEADER_GOLDEN_STEPS):
            best = min((best, f1, f2), key=lambda p: p.objective)
            if f1.objective <= f2.objective:
                b, x2, f2 = x2, x1, f1
                x1 = b - _GOLDEN * (b - a)
                f1 = self.evaluate(math.exp(x1), demand)
            else:
                a, x1, f1 = x1, x2, f2
                x2 = a + _GOLDEN * (b - a)
                f2 = self.evaluate(math.exp(x2), demand)
        return min((best, f1, f2), key=lambda p: p.objective)


def _cooled_pressure(table: GasTable, case: Case) -> float:
    """Lowest header pressure [Pa] at which the header's cooler never heats the gas.

    The upstream units discharge no colder than the isentropic discharge temperature
    from the suction header; where that lies below the cooler's outlet temperature, the
    cooler would have to heat the gas. The search starts at the pressure where it equals
    the outlet (or at ``pressure_min`` if higher).

    Raises
    ------
    InputError
        If the cooler's outlet lies above the isentropic discharge temperature even at
        ``pressure_max``.
    """
    header = case.interstage_header
    t_out = header.cooler.outlet_temperature
    grid = np.exp(np.linspace(math.log(header.pressure_min), math.log(header.pressure_max), 65))
    # Efficiency 1: the isentropic discharge, the coldest any compressor can deliver.
    t2s = table.compress(case.suction_pressure, case.suction_temperature, grid, 1.0,
                         HeadBasis.ISENTROPIC).discharge_temperature
    if not t_out <= np.nanmax(t2s):
        raise InputError(
            "interstage_header.cooler.outlet_temperature",
            f"{t_out - 273.15:.1f} degC is above the gas entering the cooler at every header "
            f"pressure up to pressure_max {header.pressure_max / 1e3:.0f} kPa: the upstream "
            f"units discharge at {np.nanmax(t2s) - 273.15:.1f} degC or less at this case's "
            f"conditions (isentropic, suction {case.suction_temperature - 273.15:.1f} degC)",
            "a cooler never heats the gas: give a lower outlet temperature or a higher "
            "pressure_max")
    if t2s[0] >= t_out:
        return header.pressure_min
    return float(np.exp(np.interp(t_out, t2s, np.log(grid))))


def _rows_of(search: HeaderSearch, side: str, pressure: float, demand: float):
    """One group's optimum at the chosen header pressure, on the exact model."""
    case = group_case(search.case, side, pressure)
    offline = [n for n in search.offline if any(t.name == n for t in case.trains)]
    station = Station(case, offline, search.objective)
    curves = station.unit_curves()
    if not curves:
        return None, station, "no unit can run"
    dispatch = solve_dispatch(curves, demand)
    if dispatch.status == "infeasible":
        return None, station, dispatch.reason
    through = {n: dispatch.through_flow.get(n, 0.0) for n in station.curves}
    recycle = {n: dispatch.recycle.get(n, 0.0) for n in station.curves}
    through.update(station.refine({n: through[n] for n in through if recycle[n] <= 0.0}))
    result = station_result(station, through, recycle, demand)
    result.solver = {"piecewise_objective": dispatch.objective,
                     "solve_seconds": dispatch.solve_seconds,
                     "formulation": dispatch.formulation}
    return result, station, ""


def optimize_header(case: Case, demand=None, offline: Iterable[str] = (),
                    objective: str | None = None, baselines: bool = True) -> StationResult:
    """Least-objective header pressure and split for a shared-header station.

    Parameters
    ----------
    case : Case
        With an ``interstage_header``.
    demand : str or float, optional
        Throughput with a unit, or a mass flow [kg/s]; the case's by default.
    offline : iterable of str, optional
    objective : str, optional
    baselines : bool, optional
        Also evaluate the usual load-sharing rules in each group at the chosen header
        pressure.

    Returns
    -------
    StationResult
        Rows of both groups (``stage`` says which), and ``header`` with the pressure and
        the search's figures.
    """
    start = time.perf_counter()
    search = HeaderSearch(case, offline, objective)
    m_demand = requested_demand(case, demand)
    best = search.search(m_demand)
    search_seconds = time.perf_counter() - start
    if not math.isfinite(best.objective):
        return StationResult.infeasible(case, m_demand, "no header pressure works: "
                                        + best.reason, search.objective)
    return evaluate_header(case, m_demand, best.pressure, search, baselines, extra={
        "search_seconds": search_seconds, "evaluations": len(search.evaluations),
        "search_objective": best.objective,
        "searched_from_kPa": search.pressure_min / 1e3,
        "searched_to_kPa": search.pressure_max / 1e3})


def evaluate_header(case: Case, demand: float, pressure: float,
                    search: HeaderSearch | None = None, baselines: bool = False,
                    extra: Mapping | None = None) -> StationResult:
    """A shared-header station at a given header pressure [Pa], each group dispatched.

    Parameters
    ----------
    case : Case
    demand : float
        Station net flow [kg/s].
    pressure : float
        Header pressure [Pa].
    search : HeaderSearch, optional
        Carries offline units and the objective.
    baselines : bool, optional
    extra : mapping, optional
        Added to the result's ``header`` entry.

    Returns
    -------
    StationResult
    """
    search = search or HeaderSearch(case)
    header = case.interstage_header
    if not header.pressure_min <= pressure <= header.pressure_max:
        raise InputError("interstage_header", f"{pressure / 1e3:.0f} kPa is outside the "
                         f"header's range {header.pressure_min / 1e3:.0f} to "
                         f"{header.pressure_max / 1e3:.0f} kPa", "give a pressure inside it")
    rows, solver, stations, results = [], {}, {}, {}
    for side in SIDES:
        result, station, reason = _rows_of(search, side, pressure, demand)
        if result is None:
            return StationResult.infeasible(case, demand, f"{side} group at "
                                            f"{pressure / 1e3:.0f} kPa: {reason}",
                                            search.objective)
        for row in result.units.to_dict("records"):
            row["stage"] = side
            row["interstage_pressure_kPa"] = pressure / 1e3
            rows.append(row)
        solver[side] = result.solver
        stations[side], results[side] = station, result
    out = StationResult(case, "optimal", "", demand, search.objective, pd.DataFrame(rows),
                        solver=solver)
    out.header = {"pressure_kPa": pressure / 1e3,
                  "downstream_suction_pressure_kPa": (pressure - header.cooler.pressure_drop)
                  / 1e3, "downstream_suction_temperature_C":
                  header.cooler.outlet_temperature - 273.15, **(extra or {})}
    if baselines:
        out.baselines = _baselines(stations, results, demand, out)
        out.baselines_all_units = _baselines(stations, results, demand, out, all_units=True)
    return out


def evaluate_header_split(case: Case, net: Mapping[str, float], pressure: float
                          ) -> StationResult:
    """A given split of a shared-header station at a given header pressure [Pa].

    Parameters
    ----------
    case : Case
    net : mapping of str to float
        Net flow [kg/s] of each running unit of both groups; the groups' totals must agree
        (all gas goes through both).
    pressure : float
        Header pressure [Pa].

    Returns
    -------
    StationResult
    """
    header = case.interstage_header
    if not header.pressure_min <= pressure <= header.pressure_max:
        raise InputError("split.interstage_header", f"{pressure / 1e3:.0f} kPa is outside the "
                         f"header's range {header.pressure_min / 1e3:.0f} to "
                         f"{header.pressure_max / 1e3:.0f} kPa", "give a pressure inside it")
    totals = {side: sum(v for n, v in net.items() if n in (
        header.upstream_units if side == "upstream" else header.downstream_units))
        for side in SIDES}
    if abs(totals["upstream"] - totals["downstream"]) > 1e-6 * max(totals.values(), default=1):
        raise InputError("split", f"the upstream units deliver {totals['upstream']:.3f} kg/s and "
                         f"the downstream units take {totals['downstream']:.3f} kg/s",
                         "give both groups the same total")
    rows = []
    for side in SIDES:
        group = group_case(case, side, pressure)
        mine = {n: v for n, v in net.items() if any(t.name == n for t in group.trains)}
        left_out = [t.name for t in group.trains if t.name not in mine]
        station = Station(group, left_out)
        for name in left_out:  # stopped (not reduced), not offline: the case's status
            station.status[name] = group.train(name).status
        result = evaluate_split(station, mine)
        if result.status == "infeasible":
            return StationResult.infeasible(case, totals["upstream"], f"{side} group: "
                                            f"{result.reason}", case.objective)
        for row in result.units.to_dict("records"):
            row["stage"] = side
            row["interstage_pressure_kPa"] = pressure / 1e3
            rows.append(row)
    out = StationResult(case, "evaluated", "", totals["upstream"], case.objective,
                        pd.DataFrame(rows))
    out.header = {"pressure_kPa": pressure / 1e3,
                  "downstream_suction_pressure_kPa": (pressure - header.cooler.pressure_drop)
                  / 1e3, "downstream_suction_temperature_C":
                  header.cooler.outlet_temperature - 273.15}
    return out


def _baselines(stations, results, demand: float, optimum: StationResult,
               all_units: bool = False) -> dict:
    """Each load-sharing rule applied in both groups at the optimum's header pressure.

    With ``all_units`` the rules run every available unit of each group, otherwise the
    optimum's running units.
    """
    per_side = {side: (compare_all_units(stations[side], results[side], demand) if all_units
                       else compare_baselines(stations[side], results[side], demand))
                for side in SIDES}
    out = {}
    best = optimum.total_shaft_power
    currency = optimum.case.economics.currency
    best_value = optimum.objective_value() * (3600.0 if optimum.objective == "cost" else 1e-3)
    for rule in per_side["upstream"]:
        parts = [per_side[side].get(rule, {}) for side in SIDES]
        units = [n for p in parts for n in p.get("running_units", [])]
        if all(p.get("status") == "feasible" for p in parts):
            power = sum(p["total_shaft_power_kW"] for p in parts) * 1e3
            value = sum(p["total_objective"] for p in parts)
            out[rule] = {"status": "feasible", "reason": "", "running_units": units,
                         "objective_unit": objective_unit(optimum.objective, currency),
                         "total_objective": value,
                         "objective_saving": value - best_value,
                         "objective_saving_pct": (100.0 * (value - best_value) / value
                                                  if value > 0 else 0.0),
                         "total_shaft_power_kW": power / 1e3,
                         "saving_kW": (power - best) / 1e3,
                         "saving_pct": 100.0 * (power - best) / power if power > 0 else 0.0}
        else:
            out[rule] = {"status": "infeasible", "running_units": units, "reason": "; ".join(
                p.get("reason", "") for p in parts if p.get("status") != "feasible")}
    return out
