"""Solving the dispatch model with HiGHS: one-off solves, persistent re-solves for sweeps.

:func:`solve_dispatch` answers one demand. :class:`Dispatcher` builds the model once and
re-solves it for each demand of a sweep by changing the mutable demand parameter; HiGHS
keeps the model between solves (the persistent interface of
``pyomo.contrib.solver``), so only the changed numbers travel to it.

Before any solve the demand is checked against the station's range: with recycle, a
running unit delivers any net flow from zero to its largest through-flow, so a demand is
reachable exactly when ``0 <= demand <= sum of the available units' largest flows``. A
demand outside gives an ``"infeasible"`` result whose ``reason`` says so in words, with
the station capacity in kg/s. A solver status other than optimal becomes either such a
result or a :class:`DispatchSolveError`; an empty answer is never returned.

No unit recycles unless it must (:class:`RecyclePolicy`): whenever some commitment
carries the demand without recycle, the answer is the least-cost dispatch among those;
a least-cost policy that recycles where that is cheaper is available too.
"""

from __future__ import annotations

import math
import time
from collections.abc import Sequence
from typing import NamedTuple

import numpy as np
import pyomo.core as pyo
from pyomo.contrib.solver.common.results import SolutionStatus, TerminationCondition
from pyomo.contrib.solver.solvers.highs import Highs

from trainopt.dispatch.model import (
    CONVEXITY_RTOL,
    Formulation,
    UnitCurve,
    UnitStatus,
    build_model,
    check_curves,
    check_demand,
    is_convex,
)
from trainopt.dispatch.solution import (
    DispatchResult,
    DispatchSolveError,
    RecyclePolicy,
    station_range_reason,
)
from trainopt.errors import InputError

__all__ = ["DispatchResult", "DispatchSolveError", "Dispatcher", "RecyclePolicy",
           "solve_dispatch", "station_range_reason"]

HIGHS_OPTIONS: dict[str, object] = {
    "presolve": "off",
    "mip_heuristic_run_feasibility_jump": False,
    "threads": 1,
}
"""HiGHS options passed on every solve, beyond the gap and the time limit.

Each measured on synthetic stations like those of ``benchmarks/dispatch_scaling.py``
(median per persistent re-solve, on a shared two-core machine):

- presolve off: on models of a few hundred columns it gains nothing and its restarts
  cost time (CPU time over 120 demands per size; 8 units: 72 to 40 ms; 16: 95 to 62 ms);
- the feasibility-jump heuristic off: it has a fixed cost of about 10 ms a solve, even on
  a 14-column model (wall time over 60 demands per size; 2 units: 28 to 14 ms; 8 units:
  78 to 37 ms; 16 units: 106 to 51 ms);
- one thread: waking HiGHS's worker threads costs more than they return on models this
  small, the more so on a busy machine (wall, 60 demands; 2 units: 23 to 8 ms; 8 units:
  51 to 26 ms; 16 units: about the same).

HiGHS fixes its thread count at the first solve in the process; if some other code ran
HiGHS first with another count, HiGHS refuses ``threads = 1`` and the solve is repeated
once with the default (see :func:`_threads_refused`).
"""

_THREADS_REFUSED = False
"""Set once HiGHS has refused ``threads = 1`` in this process."""


FLOW_SNAP = 1e-6
"""Flows closer than this to a bound are put on it [kg/s] (HiGHS feasibility is 1e-7)."""


class _Attempt(NamedTuple):
    results: object
    running: dict[str, bool]
    through_flow: dict[str, float]
    recycle: dict[str, float]
    net_flow: dict[str, float]
    unit_cost: dict[str, float]
    objective: float


class Dispatcher:
    """A station's dispatch model, built once and re-solved for any number of demands.

    Parameters
    ----------
    curves : sequence of UnitCurve
        One least-cost curve per unit.
    formulation : Formulation or str
        How the curves enter the model (default: automatic, see
        :class:`~trainopt.dispatch.model.Formulation`).
    mip_gap : float
        Relative MIP gap at which HiGHS stops [-].
    time_limit : float
        HiGHS time limit per solve [s].
    convexity_rtol : float
        Relative tolerance of the convexity test [-].
    recycle : RecyclePolicy or str
        When recycle may be advised (default: only when no commitment avoids it).

    Notes
    -----
    Under ``RecyclePolicy.AVOID`` a demand is first solved with every recycle bounded to
    zero (skipped when the demand is below every unit's least through-flow, or below the
    must-run units' total); if HiGHS proves that infeasible, it is solved again with
    recycle allowed. Re-solves change only mutable parameters (the demand and the recycle
    bounds), which the persistent interface passes to HiGHS without rebuilding.

    Examples
    --------
    >>> import numpy as np
    >>> from trainopt.dispatch.model import UnitCurve
    >>> flow = np.array([10.0, 20.0, 30.0])
    >>> a = UnitCurve("A", flow, 1e5 * flow + 2e3 * flow**2)
    >>> b = UnitCurve("B", flow, 1.2e5 * flow + 1e3 * flow**2)
    >>> sweep = Dispatcher([a, b])
    >>> [round(sweep.solve(d).objective / 1e6, 3) for d in (5.0, 25.0)]
    [1.2, 3.25]
    """

    def __init__(self, curves: Sequence[UnitCurve], *,
                 formulation: Formulation | str = Formulation.AUTO, mip_gap: float = 1e-4,
                 time_limit: float = 30.0, convexity_rtol: float = CONVEXITY_RTOL,
                 recycle: RecyclePolicy | str = RecyclePolicy.AVOID):
        self.curves = check_curves(curves)
        try:
            self.recycle = RecyclePolicy(recycle)
        except ValueError:
            choices = ", ".join(p.value for p in RecyclePolicy)
            raise InputError("recycle", f"{recycle!r} is not a recycle policy",
                             f"use one of {choices}") from None
        if not (isinstance(mip_gap, int | float) and 0.0 <= mip_gap < 1.0):
            raise InputError("mip_gap", f"{mip_gap!r} is not a relative gap",
                             "give a number from 0 to below 1, such as 1e-4")
        if not (isinstance(time_limit, int | float) and 0.0 < time_limit < math.inf):
            raise InputError("time_limit", f"{time_limit!r} is not a time",
                             "give a positive number of seconds")
        self.mip_gap = float(mip_gap)
        self.time_limit = float(time_limit)
        start = time.perf_counter()
        self.model = build_model(self.curves, 0.0, formulation=formulation,
                                 convexity_rtol=convexity_rtol)
        self.build_seconds = time.perf_counter() - start
        self._build_pending = self.build_seconds
        groups: dict[str, list[str]] = {}
        for c in self.curves:
            if c.group is not None and is_convex(c.flow, c.cost, convexity_rtol):
                groups.setdefault(c.group, []).append(c.name)
        self._convex_groups = list(groups.values())
        self._solver = _persistent_highs()

    def solve(self, demand: float) -> DispatchResult:
        """Least-cost dispatch for one demand.

        Parameters
        ----------
        demand : float
            Station net flow to deliver [kg/s], zero or more.

        Returns
        -------
        DispatchResult
            The dispatch, or an ``"infeasible"`` result with the reason in words.

        Raises
        ------
        InputError
            If the demand is negative or not a number.
        DispatchSolveError
            If HiGHS stops without any dispatch.
        """
        demand = check_demand(demand)
        build, self._build_pending = self._build_pending, 0.0
        reason = station_range_reason(self.curves, demand)
        if reason:
            return self._infeasible(demand, reason, build, 0.0)
        self.model.demand.set_value(demand)
        start = time.perf_counter()
        avoidable = self._recycle_may_be_avoidable(demand)
        if self.recycle is RecyclePolicy.AVOID:
            answer = self._attempt(forbid_recycle=True) if avoidable else None
            if answer is None:
                answer = self._attempt(forbid_recycle=False)
        else:
            answer = self._attempt(forbid_recycle=False)
            if answer is not None and sum(answer.recycle.values()) > 0.0 and avoidable:
                other = self._attempt(forbid_recycle=True)
                bound = answer.results.objective_bound
                if other is not None and (bound is None or other.objective * (1.0 - self.mip_gap)
                                          <= bound * self.model.cost_scale + 1e-9):
                    answer = other
        seconds = time.perf_counter() - start
        if answer is None:
            return self._infeasible(demand, self._unexpected_infeasible(demand), build, seconds)
        status = "optimal"
        if answer.results.termination_condition == TerminationCondition.maxTimeLimit:
            status = "time_limit"
        return DispatchResult(
            status=status, reason="", demand=demand, running=answer.running,
            through_flow=answer.through_flow, recycle=answer.recycle, net_flow=answer.net_flow,
            unit_cost=answer.unit_cost, objective=answer.objective,
            formulation=self.model.formulation_summary, build_seconds=build,
            solve_seconds=seconds, mip_gap_achieved=_gap(answer.results))

    def _attempt(self, forbid_recycle: bool) -> _Attempt | None:
        """Solve with recycle allowed or forbidden; None if HiGHS proves infeasibility."""
        m = self.model
        if forbid_recycle:
            for n in m.UNITS:
                m.recycle_bound[n].set_value(0.0)
        try:
            results = self._run()
        finally:
            if forbid_recycle:
                for c in self.curves:
                    m.recycle_bound[c.name].set_value(c.flow_min)
        return None if results is None else self._read(results)

    def _run(self):
        """Solve; return the results, or None when HiGHS proves infeasibility."""
        global _THREADS_REFUSED
        options = dict(HIGHS_OPTIONS)
        if _THREADS_REFUSED:
            options["threads"] = 0  # HiGHS's default: the count fixed at its first solve
        results = self._solver.solve(
            self.model, load_solutions=False, raise_exception_on_nonoptimal_result=False,
            rel_gap=self.mip_gap, time_limit=self.time_limit, solver_options=options)
        if options.get("threads") == 1 and _threads_refused(results):
            _THREADS_REFUSED = True
            return self._run()
        tc = results.termination_condition
        has_solution = results.solution_status in (SolutionStatus.feasible,
                                                   SolutionStatus.optimal)
        if tc in (TerminationCondition.provenInfeasible,
                  TerminationCondition.infeasibleOrUnbounded):
            return None
        if not has_solution:
            if tc == TerminationCondition.maxTimeLimit:
                raise DispatchSolveError(
                    f"HiGHS reached its time limit of {self.time_limit:g} s before finding any "
                    f"dispatch; allow more time or give fewer breakpoints")
            raise DispatchSolveError(f"HiGHS stopped without a dispatch ({tc.name})")
        results.solution_loader.load_vars()
        return results

    def _read(self, results) -> _Attempt:
        """The loaded solution, flows snapped onto their bounds, costs read off the curves."""
        m = self.model
        running, through, recycle, net, cost = {}, {}, {}, {}, {}
        for c in self.curves:
            n = c.name
            on = pyo.value(m.run[n]) > 0.5
            running[n] = on
            if not on:
                through[n] = recycle[n] = net[n] = cost[n] = 0.0
                continue
            x = float(np.clip(pyo.value(m.through_flow[n]), c.flow_min, c.flow_max))
            q = float(np.clip(pyo.value(m.net_flow[n]), 0.0, x))
            if x - q <= FLOW_SNAP:
                q = x
            through[n], net[n], recycle[n] = x, q, x - q
        for members in self._convex_groups:
            on = [n for n in members if running[n]]
            if len(on) > 1:  # identical convex units: an equal share costs no more (Jensen)
                x = sum(through[n] for n in on) / len(on)
                q = sum(net[n] for n in on) / len(on)
                for n in on:
                    through[n], net[n], recycle[n] = x, q, x - q
        for c in self.curves:
            cost[c.name] = c.cost_at(through[c.name]) if running[c.name] else 0.0
        return _Attempt(results, running, through, recycle, net, cost, float(sum(cost.values())))

    def _recycle_may_be_avoidable(self, demand: float) -> bool:
        free = [c.flow_min for c in self.curves if c.status is not UnitStatus.OFFLINE]
        must = sum(c.flow_min for c in self.curves if c.status is UnitStatus.MUST_RUN)
        return bool(free) and demand >= min(free) and demand >= must

    def _unexpected_infeasible(self, demand: float) -> str:
        capacity = sum(c.flow_max for c in self.curves if c.status is not UnitStatus.OFFLINE)
        return (f"HiGHS found no dispatch for {demand:.6g} kg/s although the demand lies in "
                f"the station's range of 0 to {capacity:.6g} kg/s; the unit curves may be "
                f"inconsistent (check their through-flow bounds)")

    def _infeasible(self, demand: float, reason: str, build: float,
                    seconds: float) -> DispatchResult:
        zero = {c.name: 0.0 for c in self.curves}
        return DispatchResult(
            status="infeasible", reason=reason, demand=demand,
            running={c.name: False for c in self.curves}, through_flow=dict(zero),
            recycle=dict(zero), net_flow=dict(zero), unit_cost=dict(zero),
            objective=math.nan, formulation=self.model.formulation_summary,
            build_seconds=build, solve_seconds=seconds, mip_gap_achieved=math.nan)


def solve_dispatch(curves: Sequence[UnitCurve], demand: float, *, mip_gap: float = 1e-4,
                   time_limit: float = 30.0,
                   formulation: Formulation | str = Formulation.AUTO,
                   recycle: RecyclePolicy | str = RecyclePolicy.AVOID) -> DispatchResult:
    """Least-cost dispatch of one demand across a station's units.

    Parameters
    ----------
    curves : sequence of UnitCurve
        One least-cost curve per unit.
    demand : float
        Station net flow to deliver [kg/s], zero or more.
    mip_gap : float
        Relative MIP gap at which HiGHS stops [-].
    time_limit : float
        HiGHS time limit [s].
    formulation : Formulation or str
        How the curves enter the model.
    recycle : RecyclePolicy or str
        When recycle may be advised (see :class:`RecyclePolicy`).

    Returns
    -------
    DispatchResult
        The dispatch, or an ``"infeasible"`` result with the reason in words.

    Raises
    ------
    InputError
        If a curve or the demand is malformed.
    DispatchSolveError
        If HiGHS stops without any dispatch.
    """
    return Dispatcher(curves, formulation=formulation, mip_gap=mip_gap, time_limit=time_limit,
                      recycle=recycle).solve(demand)


def _persistent_highs():
    solver = Highs()
    updates = solver.config.auto_updates
    # Only parameter values change between solves: skip the scans for new components.
    updates.check_for_new_or_removed_constraints = False
    updates.check_for_new_or_removed_vars = False
    updates.check_for_new_or_removed_params = False
    updates.check_for_new_objective = False
    updates.update_constraints = False
    updates.update_vars = False
    updates.update_named_expressions = False
    updates.update_objective = False
    updates.update_parameters = True
    return solver


def _threads_refused(results) -> bool:
    """Whether HiGHS refused to run because its thread count was fixed differently.

    HiGHS then returns without a status (``kNotset``, which Pyomo reports as an unknown
    termination) and says so in its log.
    """
    return (results.termination_condition == TerminationCondition.unknown
            and "scheduler" in (results.solver_log or "").lower())


def _gap(results) -> float:
    value, bound = results.incumbent_objective, results.objective_bound
    if value is None or bound is None:
        return math.nan
    return abs(value - bound) / max(abs(value), 1e-10)
