"""Answers for the web page and API, from stations kept reduced between requests.

Reducing the station (one least-power curve per unit) is the slow part of an answer; it
depends only on the conditions and statuses (:class:`~trainopt.web.inputs.Conditions`),
not on the demand. :class:`Answers` keeps the last few reduced stations, keyed by
conditions, so a new demand costs one dispatch solve and its true-model check. A change of
conditions reduces once.

A kept station also keeps what does not depend on the demand: its dispatch model, built
once and re-solved by the persistent HiGHS interface for each demand
(:class:`~trainopt.dispatch.solve.Dispatcher`), and the speed and margin profiles along
each unit's curve that the load-sharing baselines sample.

The optimum on a kept station follows :func:`trainopt.station.split.optimize` step by step
(dispatch, refine on the sampled true model, true-model rows, baselines); the API tests
check that both give the same JSON. Where the station API gains a reusable reduced station
of its own, :meth:`Answers.station` and :meth:`Answers.optimize` are the two places to
switch to it.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Mapping

import numpy as np

from trainopt.case.loading import Case
from trainopt.dispatch.solve import Dispatcher
from trainopt.station.baselines import compare_all_units, compare_baselines
from trainopt.station.reduced import Station, requested_demand, station_result
from trainopt.station.result import StationResult
from trainopt.station.split import (
    _infeasible_units_text,
    evaluate,
    objective_error_bound,
    optimize,
)
from trainopt.web.inputs import Conditions, case_at

STATIONS_KEPT = 6
"""Reduced stations kept (each a few hundred kB of curves) [-]."""

RESULTS_KEPT = 32
"""Optimum results kept, and as many evaluated splits, for the page's map pictures and
repeated questions [-]."""


class Answers:
    """Optimum and evaluation for one case at the conditions a request gives.

    Parameters
    ----------
    case : Case
        The case the server was started with; never changed.

    Notes
    -----
    One lock serialises the work: the solver and the kept stations are shared between
    the server's worker threads.
    """

    def __init__(self, case: Case):
        self.case = case
        self._stations: OrderedDict[Conditions, Station] = OrderedDict()
        self._results: OrderedDict[tuple, StationResult] = OrderedDict()
        self._evaluated: OrderedDict[tuple, StationResult] = OrderedDict()
        self._lock = threading.RLock()
        self.reductions = 0
        """How many times a station was reduced (a cache miss) [-]."""

    def station(self, conditions: Conditions) -> Station:
        """The station reduced at these conditions: kept, or reduced now and kept."""
        with self._lock:
            if conditions in self._stations:
                self._stations.move_to_end(conditions)
                return self._stations[conditions]
            station = KeptStation(case_at(self.case, conditions), conditions.objective)
            self.reductions += 1
            self._stations[conditions] = station
            while len(self._stations) > STATIONS_KEPT:
                self._stations.popitem(last=False)
            return station

    def optimize(self, conditions: Conditions, demand=None) -> StationResult:
        """The least-objective split, as :func:`trainopt.optimize` gives it.

        Parameters
        ----------
        conditions : Conditions
        demand : str or float, optional
            Throughput with its unit, or a mass flow [kg/s]; the case's by default.
        """
        with self._lock:
            case = case_at(self.case, conditions)
            m_demand = requested_demand(case, demand)
            key = (conditions, m_demand)
            if key in self._results:
                self._results.move_to_end(key)
                return self._results[key]
            if case.interstage_header is not None:
                result = optimize(case, m_demand, (), conditions.objective)
            else:
                result = _optimize_on(self.station(conditions), m_demand)
            self._results[key] = result
            while len(self._results) > RESULTS_KEPT:
                self._results.popitem(last=False)
            return result

    def evaluate(self, conditions: Conditions, split: Mapping[str, object],
                 demand=None) -> StationResult:
        """A given split on the true model, as :func:`trainopt.evaluate` gives it.

        When a demand is given, the split must add up to it, as on the command line.
        """
        with self._lock:
            key = (conditions, tuple(sorted(split.items())), demand)
            if key in self._evaluated:
                self._evaluated.move_to_end(key)
                return self._evaluated[key]
            result = evaluate(case_at(self.case, conditions), split, demand=demand)
            self._evaluated[key] = result
            while len(self._evaluated) > RESULTS_KEPT:
                self._evaluated.popitem(last=False)
            return result


class KeptStation(Station):
    """A :class:`~trainopt.station.reduced.Station` kept between requests.

    It keeps its dispatch model (built at the first demand) and the profiles the baselines
    ask for, which depend only on the conditions. Both return what a fresh station gives.
    """

    def __init__(self, case: Case, objective: str | None = None):
        super().__init__(case, (), objective)
        self._dispatcher: Dispatcher | None = None
        self._profiles: dict[tuple, tuple[np.ndarray, np.ndarray]] = {}

    def dispatcher(self) -> Dispatcher:
        """The dispatch model of the feasible units' curves, built once."""
        if self._dispatcher is None:
            self._dispatcher = Dispatcher(self.unit_curves())
        return self._dispatcher

    def profile(self, name: str, through_flow) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`Station.profile`, remembered per unit and flows (copies returned)."""
        m = np.asarray(through_flow, float)
        key = (name, m.tobytes())
        if key not in self._profiles:
            self._profiles[key] = super().profile(name, m)
        speed, margin = self._profiles[key]
        return speed.copy(), margin.copy()


def _optimize_on(station: KeptStation, m_demand: float) -> StationResult:
    """:func:`trainopt.station.split.optimize` on a station already reduced [kg/s]."""
    case = station.case
    curves = station.unit_curves()
    if not curves:
        reason = "no unit is available" + _infeasible_units_text(station)
        return StationResult.infeasible(case, m_demand, reason, station.objective)
    dispatch = station.dispatcher().solve(m_demand)
    if dispatch.status == "infeasible":
        return StationResult.infeasible(case, m_demand, dispatch.reason
                                        + _infeasible_units_text(station), station.objective)
    through = {n: dispatch.through_flow.get(n, 0.0) for n in station.curves}
    recycle = {n: dispatch.recycle.get(n, 0.0) for n in station.curves}
    refined = station.refine({n: through[n] for n in through if recycle[n] <= 0.0})
    through.update(refined)
    result = station_result(station, through, recycle, m_demand)
    result.solver = {"piecewise_objective": dispatch.objective,
                     "formulation": dispatch.formulation,
                     "build_seconds": dispatch.build_seconds,
                     "solve_seconds": dispatch.solve_seconds,
                     "mip_gap": dispatch.mip_gap_achieved,
                     "breakpoint_error_W": {n: c.error_bound for n, c in station.curves.items()},
                     "objective_error_bound": {n: objective_error_bound(station, n)
                                               for n, c in station.curves.items()
                                               if c.feasible},
                     "objective_unit": ("W" if station.objective != "cost" else
                                        f"{case.economics.currency}/s"),
                     "convex": {n: c.convex for n, c in station.curves.items()}}
    result.baselines = compare_baselines(station, result, m_demand)
    result.baselines_all_units = compare_all_units(station, result, m_demand, result.baselines)
    return result

