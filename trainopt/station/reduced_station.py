"""Many answers from one set-up: a station kept reduced at one set of conditions.

:class:`ReducedStation` reduces each unit once and keeps one persistent HiGHS model per
offline set and objective (:class:`~trainopt.dispatch.solve.Dispatcher`), so a new demand
costs one re-solve, the truth check and the refinement, not a reduction and a model build.

- A new demand re-solves the persistent model: only the demand parameter changes.
- A new offline set reuses every curve: a unit's least-power curve does not depend on
  which other units run. The first time a set is asked for, its model is built.
- A new objective reuses the single-section curves: the objective at a breakpoint is the
  shaft power, the driver's energy input or its cost, all kept on the curve. A series
  train's interstage pressure is chosen for the objective, so its curve is reduced again.
- Units kept running (``must_run``) change the model, not the curves: each set of them
  has its own model, as each offline set has.
- The speed and margin profiles the load-sharing rules sample along each unit's curve
  depend only on the conditions, so each kept station computes them once
  (:class:`KeptStation`).

:func:`answer` is the one path from a reduced station and a demand to a
:class:`~trainopt.station.result.StationResult`; :func:`trainopt.optimize` takes it too,
so both give the same answer.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

from trainopt.case.loading import Case
from trainopt.dispatch.solve import Dispatcher
from trainopt.errors import InputError
from trainopt.machines.train import UnitStatus
from trainopt.station.baselines import compare_both
from trainopt.station.reduced import Station, chosen_objective, requested_demand, station_result
from trainopt.station.result import StationResult

__all__ = ["KeptStation", "ReducedStation", "answer", "objective_error_bound"]


def no_unit_reason(station: Station) -> str:
    """Why no unit can run: none is available, or none of the available ones meets the duty."""
    bad = [f"{n}: {c.reason}" for n, c in station.curves.items() if not c.feasible]
    if bad:
        return "no available unit can meet today's duty: " + "; ".join(bad)
    return "no unit is available"


def infeasible_units_text(station: Station) -> str:
    """The units that cannot meet today's duty and why, as a clause of a reason."""
    bad = [f"{n}: {c.reason}" for n, c in station.curves.items() if not c.feasible]
    return ("; units that cannot meet today's duty: " + "; ".join(bad)) if bad else ""


def answer(station: Station, m_demand: float, dispatcher: Dispatcher | None = None,
           baselines: bool = True, trip_reserve=None) -> StationResult:
    """The least-objective split of a demand on a reduced station.

    Parameters
    ----------
    station : Station
        The station reduced at today's conditions, with its offline set and objective.
    m_demand : float
        Station net mass flow [kg/s].
    dispatcher : Dispatcher, optional
        A dispatch model of ``station.unit_curves()`` to re-solve; built here if None.
    baselines : bool
        Also evaluate equal-flow, equal-speed and equal-margin sharing.
    trip_reserve : float or str, optional
        Share of the demand the running units must still carry with any one of them
        tripped (see :func:`trainopt.optimize`); solved afresh, not on ``dispatcher``.

    Returns
    -------
    StationResult
        ``"optimal"`` with the per-unit table, or ``"infeasible"`` with the reason.
    """
    case = station.case
    if dispatcher is None:
        curves = station.unit_curves()
        if not curves:
            reason = no_unit_reason(station)
            return StationResult.infeasible(case, m_demand, reason, station.objective)
        dispatcher = Dispatcher(curves)
    dispatch = dispatcher.solve(m_demand)
    security = None
    if trip_reserve is not None and dispatch.status != "infeasible":
        from trainopt.dispatch.trip_reserve import solve_secure_dispatch, trip_share_of

        share = trip_share_of(trip_reserve)
        plain = dispatch
        dispatch = solve_secure_dispatch(station.unit_curves(), m_demand, share)
        security = {"share": share, "piecewise_objective_without": plain.objective,
                    "piecewise_objective_with": dispatch.objective}
    if dispatch.status == "infeasible":
        return StationResult.infeasible(case, m_demand, dispatch.reason
                                        + infeasible_units_text(station), station.objective)
    through = {n: dispatch.through_flow.get(n, 0.0) for n in station.curves}
    recycle = {n: dispatch.recycle.get(n, 0.0) for n in station.curves}
    piecewise = dispatch.objective
    refined = station.refine({n: through[n] for n in through if recycle[n] <= 0.0})
    through.update(refined)
    result = station_result(station, through, recycle, m_demand)
    result.solver = {"piecewise_objective": piecewise, "formulation": dispatch.formulation,
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
    if security is not None:
        result.solver["trip_reserve"] = security
    if baselines:
        result.baselines, result.baselines_all_units = compare_both(station, result,
                                                                    m_demand)
    return result


class KeptStation(Station):
    """A :class:`~trainopt.station.reduced.Station` kept for many demands.

    It remembers the speed and margin profiles the load-sharing rules ask for
    (:meth:`Station.profile`), which depend on the conditions only, not on the demand.
    """

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self._profiles: dict[tuple, tuple[np.ndarray, np.ndarray]] = {}

    def profile(self, name: str, through_flow) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`Station.profile`, remembered per unit and flows (copies returned)."""
        m = np.asarray(through_flow, float)
        key = (name, m.tobytes())
        if key not in self._profiles:
            self._profiles[key] = tuple(np.asarray(v, float)
                                        for v in super().profile(name, m))
        speed, margin = self._profiles[key]
        return speed.copy(), margin.copy()


def objective_error_bound(station: Station, name: str) -> float:
    """Largest gap between a unit's piecewise-linear objective and its true sample.

    The breakpoints are chosen on shaft power (:mod:`trainopt.dispatch.reduction`); the
    dispatch model interpolates the objective between them. For ``energy_input`` and
    ``cost`` the driver's curve bends the objective differently, so its own gap is
    measured here on the same fine true-model sample.

    Parameters
    ----------
    station : Station
    name : str
        A unit with a feasible curve.

    Returns
    -------
    float
        [W] for ``shaft_power`` and ``energy_input``, [currency/s] for ``cost``.
    """
    curve = station.curves[name]
    if station.objective == "shaft_power":
        return float(curve.error_bound)
    exact = station.curve_cost(name, sample=True)
    chords = np.interp(curve.sample_flow, curve.mass_flow, station.curve_cost(name))
    return float(np.max(np.abs(chords - exact)))


class ReducedStation:
    """A case at one set of conditions, reduced once, answering many questions.

    Parameters
    ----------
    case : Case
        The validated case (a station without a shared interstage header).
    objective : str, optional
        The objective when a question names none; the case's by default.

    Examples
    --------
    One reduction, then a demand sweep, an offline set and another objective::

        station = ReducedStation(trainopt.load_case("cases/demo/station.yaml"))
        sweep = [station.optimize(f"{d} MMSCFD") for d in (250, 275, 300)]
        spare = station.optimize("250 MMSCFD", offline=["B"], objective="cost")
    """

    def __init__(self, case: Case, objective: str | None = None):
        if case.interstage_header is not None:
            raise InputError("interstage_header", "a station with a shared interstage header "
                             "has two groups of units, not one", "use trainopt.optimize (it "
                             "searches the header pressure)")
        self.case = case
        self.objective = chosen_objective(case, objective)
        self._duties: dict = {}
        self._single: dict = {}  # single-section curves: the same for every objective
        self._series: dict[str, dict] = {}  # objective -> series train curves
        self._stations: dict[tuple, Station] = {}
        self._dispatchers: dict[tuple, Dispatcher | None] = {}

    def _key(self, offline: Iterable[str], must_run: Iterable[str],
             objective: str | None) -> tuple:
        """The kept station's key; refuses unknown names and a unit offline and kept running."""
        objective = chosen_objective(self.case, objective or self.objective)
        offline, must_run = frozenset(offline), frozenset(must_run)
        for name in offline | must_run:
            self.case.train(name)  # refuses an unknown name
        clash = sorted(n for n in must_run if n in offline
                       or self.case.train(n).status is UnitStatus.OFFLINE)
        if clash:
            raise InputError("must_run", f"unit '{clash[0]}' is also offline",
                             "give each unit one status")
        return offline, must_run, objective

    def station(self, offline: Iterable[str] = (), objective: str | None = None,
                must_run: Iterable[str] = ()) -> Station:
        """The reduced :class:`Station` for an offline set, units kept running and an objective.

        The sets come on top of the case's own statuses; each unit is reduced once.
        """
        key = self._key(offline, must_run, objective)
        if key not in self._stations:
            offline, must_run, objective = key
            series = self._series.setdefault(objective, {})
            station = KeptStation(self.case, sorted(offline), objective,
                                  reuse={**self._single, **series}, duties=self._duties)
            for name in must_run:
                station.status[name] = UnitStatus.MUST_RUN
            for name, curve in station.curves.items():
                if self.case.train(name).is_single_section:
                    self._single[name] = curve
                else:
                    series[name] = curve
            self._stations[key] = station
        return self._stations[key]

    def dispatcher(self, offline: Iterable[str] = (), objective: str | None = None,
                   must_run: Iterable[str] = ()) -> Dispatcher | None:
        """The persistent dispatch model of a station (:meth:`station`); None if no unit."""
        station = self.station(offline, objective, must_run)
        key = self._key(offline, must_run, objective)
        if key not in self._dispatchers:
            curves = station.unit_curves()
            self._dispatchers[key] = Dispatcher(curves) if curves else None
        return self._dispatchers[key]

    def optimize(self, demand=None, offline: Iterable[str] = (), objective: str | None = None,
                 baselines: bool = True, trip_reserve=None,
                 must_run: Iterable[str] = ()) -> StationResult:
        """Least-objective split of a demand: the same answer as :func:`trainopt.optimize`.

        Parameters
        ----------
        demand : str or float, optional
            Throughput with a unit (``"280 MMSCFD"``) or a mass flow [kg/s]; the case's
            demand by default.
        offline : iterable of str, optional
            Units to take offline on top of the case's own status.
        objective : str, optional
            ``shaft_power``, ``energy_input`` or ``cost``; this station's by default.
        baselines : bool
            Also evaluate the load-sharing baselines.
        trip_reserve : float or str, optional
            As for :func:`trainopt.optimize` (its secure dispatch is solved afresh).
        must_run : iterable of str, optional
            Units to keep running on top of the case's own status.

        Returns
        -------
        StationResult
        """
        offline, must_run = list(offline), list(must_run)
        station = self.station(offline, objective, must_run)
        m_demand = requested_demand(self.case, demand)
        dispatcher = self.dispatcher(offline, station.objective, must_run)
        if dispatcher is None:
            reason = no_unit_reason(station)
            return StationResult.infeasible(self.case, m_demand, reason, station.objective)
        return answer(station, m_demand, dispatcher, baselines, trip_reserve)
