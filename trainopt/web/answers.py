"""Answers for the web page and API, from stations kept reduced between requests.

Reducing the station (one least-power curve per unit) is the slow part of an answer; it
depends only on the header pressures and temperatures, not on the demand, the unit
statuses or the objective. :class:`Answers` keeps a
:class:`~trainopt.station.reduced_station.ReducedStation` for each of the last few sets
of conditions; it reduces each unit once and keeps a persistent HiGHS model per offline
set, set of units kept running and objective. A new demand costs one re-solve, the
refinement and the true-model check; a change of statuses or objective reuses the
curves; a change of conditions reduces once.

The answer is :meth:`ReducedStation.optimize`, the path :func:`trainopt.optimize` takes
too (:func:`trainopt.station.reduced_station.answer`), so the API gives what the command
line prints.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Mapping
from dataclasses import replace

from trainopt.case.loading import Case
from trainopt.machines.train import UnitStatus
from trainopt.station.reduced import Station, requested_demand
from trainopt.station.reduced_station import ReducedStation
from trainopt.station.result import StationResult
from trainopt.station.split import evaluate, optimize
from trainopt.web.inputs import Conditions, case_at

STATIONS_KEPT = 6
"""Sets of conditions kept reduced (each a few hundred kB of curves per unit) [-]."""

RESULTS_KEPT = 32
"""Optimum results kept, and as many evaluated splits, for the page's map pictures and
repeated questions [-]."""


def _physical(conditions: Conditions) -> Conditions:
    """The conditions a reduction depends on: every unit free to start, no objective.

    Statuses and the objective are asked of the kept station for each request.
    """
    return replace(conditions, statuses=tuple((n, UnitStatus.AVAILABLE.value)
                                              for n, _ in conditions.statuses),
                   objective="")


def _with_status(conditions: Conditions, status: UnitStatus) -> list[str]:
    return [n for n, s in conditions.statuses if s == status.value]


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
        self._stations: OrderedDict[Conditions, ReducedStation] = OrderedDict()
        self._results: OrderedDict[tuple, StationResult] = OrderedDict()
        self._evaluated: OrderedDict[tuple, StationResult] = OrderedDict()
        self._lock = threading.RLock()
        self.reductions = 0
        """How many times a station was reduced at new conditions (a cache miss) [-]."""

    def reduced(self, conditions: Conditions) -> ReducedStation:
        """The station kept at these conditions' pressures and temperatures, or a new one."""
        key = _physical(conditions)
        with self._lock:
            if key in self._stations:
                self._stations.move_to_end(key)
                return self._stations[key]
            kept = ReducedStation(case_at(self.case, key), conditions.objective)
            self.reductions += 1
            self._stations[key] = kept
            while len(self._stations) > STATIONS_KEPT:
                self._stations.popitem(last=False)
            return kept

    def station(self, conditions: Conditions) -> Station:
        """The station reduced at these conditions, statuses and objective."""
        with self._lock:
            return self.reduced(conditions).station(
                _with_status(conditions, UnitStatus.OFFLINE), conditions.objective,
                _with_status(conditions, UnitStatus.MUST_RUN))

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
                result = self.reduced(conditions).optimize(
                    m_demand, _with_status(conditions, UnitStatus.OFFLINE),
                    conditions.objective,
                    must_run=_with_status(conditions, UnitStatus.MUST_RUN))
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
