"""Solving the commitment model with HiGHS and reading its answer back.

:func:`solve_commitment` builds the model of :mod:`trainopt.dispatch.commitment_model`,
solves it and returns a :class:`CommitmentSolution` (numpy arrays, periods by units). When
HiGHS proves the horizon infeasible, :func:`diagnose` finds which rule family makes it so
and in which periods (the elastic model's shortfall), in words.
"""

from __future__ import annotations

import math
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pyomo.environ as pyo
from pyomo.contrib.solver.common.factory import SolverFactory
from pyomo.contrib.solver.common.results import SolutionStatus, TerminationCondition

from trainopt.dispatch.commitment_model import (
    RULE_FAMILIES,
    CommitmentRules,
    build_commitment_model,
)
from trainopt.dispatch.solution import DispatchSolveError
from trainopt.dispatch.unit_curve import UnitCurve

__all__ = ["CommitmentSolution", "diagnose", "solve_commitment"]

HIGHS_OPTIONS = {"mip_heuristic_run_feasibility_jump": False}
"""Beyond gap and time limit. Presolve stays on here: the multi-period model has many
rows that presolve removes (fixed initial periods, absent units)."""


@dataclass
class CommitmentSolution:
    """A horizon's commitment and dispatch; arrays are (periods, units).

    Attributes
    ----------
    status : str
        ``"optimal"`` (within the gap), ``"feasible"`` (time limit with an answer) or
        ``"infeasible"``.
    units : list of str
    on, carrying, start, stop : numpy.ndarray of bool
        Running or starting; carrying flow; started; stopped in the period.
    through_flow, recycle, net_flow : numpy.ndarray
        [kg/s].
    energy_cost : numpy.ndarray
        Per period and unit, the curve's cost over the period [currency].
    start_cost, stop_cost : numpy.ndarray
        [currency].
    shortfall : numpy.ndarray
        Per period, demand not met [kg/s] (elastic models only).
    objective, bound : float
        Total cost and HiGHS's proven bound [currency].
    gap : float
        Relative MIP gap achieved [-].
    build_seconds, solve_seconds : float
    """

    status: str
    units: list[str]
    on: np.ndarray
    carrying: np.ndarray
    start: np.ndarray
    stop: np.ndarray
    through_flow: np.ndarray
    recycle: np.ndarray
    net_flow: np.ndarray
    energy_cost: np.ndarray
    start_cost: np.ndarray
    stop_cost: np.ndarray
    shortfall: np.ndarray
    objective: float
    bound: float
    gap: float
    build_seconds: float = 0.0
    solve_seconds: float = 0.0
    notes: list[str] = field(default_factory=list)

    @property
    def total_cost(self) -> float:
        """Energy plus start and stop costs [currency]."""
        return float(self.energy_cost.sum() + self.start_cost.sum() + self.stop_cost.sum())


def solve_commitment(curves: Sequence[Mapping[str, UnitCurve]], demand: Sequence[float],
                     period: float, rules: Mapping[str, CommitmentRules], *,
                     mip_gap: float = 1e-3, time_limit: float = 60.0,
                     **options) -> CommitmentSolution:
    """Build and solve the commitment model.

    Parameters
    ----------
    curves, demand, period, rules
        As for :func:`~trainopt.dispatch.commitment_model.build_commitment_model`.
    mip_gap : float
        Relative gap at which HiGHS stops [-].
    time_limit : float
        HiGHS time limit [s].
    **options
        Passed to the model builder (``trip_share``, ``relax``, ``elastic``...).

    Returns
    -------
    CommitmentSolution
        ``status == "infeasible"`` with empty arrays when no schedule exists.
    """
    clock = time.perf_counter()
    m = build_commitment_model(curves, demand, period, rules, **options)
    built = time.perf_counter() - clock
    solver = SolverFactory("highs")
    opts = dict(HIGHS_OPTIONS, mip_rel_gap=mip_gap)
    clock = time.perf_counter()
    res = solver.solve(m, load_solutions=False, raise_exception_on_nonoptimal_result=False,
                       time_limit=time_limit, solver_options=opts)
    seconds = time.perf_counter() - clock
    term = res.termination_condition
    if term in (TerminationCondition.provenInfeasible,
                TerminationCondition.infeasibleOrUnbounded):
        return _empty(list(rules), len(curves), built, seconds)
    if res.solution_status not in (SolutionStatus.optimal, SolutionStatus.feasible):
        raise DispatchSolveError(f"HiGHS stopped without a schedule ({term.name}) after "
                                 f"{seconds:.1f} s; give a longer time limit or a shorter "
                                 "horizon")
    res.solution_loader.load_vars()
    out = _read(m, list(rules), len(curves))
    value, bound = res.incumbent_objective, res.objective_bound
    gap = (abs(value - bound) / max(abs(value), 1e-10)
           if value is not None and bound is not None else math.nan)
    out.status = "optimal" if term == TerminationCondition.convergenceCriteriaSatisfied \
        else "feasible"
    out.bound = float(bound) * m.cost_scale if bound is not None else math.nan
    out.gap, out.build_seconds, out.solve_seconds = gap, built, seconds
    return out


def _empty(units, n, built, seconds) -> CommitmentSolution:
    z = np.zeros((n, len(units)))
    b = z.astype(bool)
    return CommitmentSolution("infeasible", units, b, b, b, b, z, z, z, z, z, z,
                              np.zeros(n), math.nan, math.nan, math.nan, built, seconds)


def _read(m, units: list[str], n: int) -> CommitmentSolution:
    shape = (n, len(units))
    on, carry = np.zeros(shape, bool), np.zeros(shape, bool)
    through, recycle = np.zeros(shape), np.zeros(shape)
    cost, charge = np.zeros(shape), np.zeros(shape)
    shortfall = np.zeros(n)
    scale = m.cost_scale
    for t in range(1, n + 1):
        b = m.period_block[t]
        shortfall[t - 1] = max(0.0, float(pyo.value(b.shortfall)))
        for j, u in enumerate(units):
            on[t - 1, j] = round(float(pyo.value(m.on[u, t]))) == 1
            charge[t - 1, j] = float(pyo.value(m.start_charge[u, t])) * scale
            if u in b.UNITS:
                carry[t - 1, j] = round(float(pyo.value(b.run[u]))) == 1
                through[t - 1, j] = float(b.through_flow[u].value or 0.0)
                recycle[t - 1, j] = float(b.recycle[u].value or 0.0)
                cost[t - 1, j] = float(b.unit_cost[u].value or 0.0) * scale
    before = np.vstack([[bool(m.initial_on[u]) for u in units], on[:-1]])
    start, stop = on & ~before, before & ~on
    through = np.where(carry & (through > 1e-6), through, 0.0)
    recycle = np.where(carry & (recycle > 1e-6), recycle, 0.0)
    recycle = _spread_recycle(through, recycle)
    cost = np.where(carry, cost, 0.0)
    stop_price = np.array([m.stop_price[u] for u in units])
    return CommitmentSolution("optimal", units, on, carry, start, stop, through, recycle,
                              through - recycle, cost, np.where(start, charge, 0.0),
                              stop * stop_price, shortfall,
                              float(pyo.value(m.total_cost)) * scale, math.nan, math.nan)


def _spread_recycle(through: np.ndarray, recycle: np.ndarray) -> np.ndarray:
    """Share the net flow of a period's recycling units in proportion to their through-flows.

    The cost depends on through-flows only, so how the recycling units' net flow is split
    among them is a tie; the solver's pick is arbitrary. This keeps every through-flow and
    the period's total net and recycle flows, and gives each recycling unit the same
    fraction of its through-flow as net flow.
    """
    recycle = recycle.copy()
    for t in range(through.shape[0]):
        idx = np.flatnonzero(recycle[t] > 0)
        if idx.size < 2:
            continue
        net = float(np.sum(through[t, idx] - recycle[t, idx]))
        recycle[t, idx] = through[t, idx] * (1.0 - net / float(np.sum(through[t, idx])))
    return recycle


def diagnose(curves: Sequence[Mapping[str, UnitCurve]], demand: Sequence[float],
             period: float, rules: Mapping[str, CommitmentRules], labels: Sequence[str], *,
             time_limit: float = 60.0, **options) -> str:
    """Say in words which rule makes a horizon infeasible and in which periods.

    Parameters
    ----------
    curves, demand, period, rules, options
        As for :func:`solve_commitment`, for a horizon HiGHS proved infeasible.
    labels : sequence of str
        A label per period (its time), for the message.
    time_limit : float
        Per trial solve [s].

    Returns
    -------
    str
        E.g. ``"min_up_time: the demand cannot be met in 2 period(s) from 2026-01-05
        03:00 (shortfall up to 4.1 kg/s); without that rule a schedule exists"``.
    """
    options = {k: v for k, v in options.items() if k not in ("relax", "elastic")}
    elastic = solve_commitment(curves, demand, period, rules, mip_gap=1e-2,
                               time_limit=time_limit, elastic=True, **options)
    short = np.flatnonzero(elastic.shortfall > 1e-6)
    where = ""
    if short.size:
        where = (f"the demand cannot be met in {short.size} period(s) from {labels[short[0]]} "
                 f"(shortfall up to {elastic.shortfall.max():.2f} kg/s)")
    for family in RULE_FAMILIES:
        trial = solve_commitment(curves, demand, period, rules, mip_gap=1e-2,
                                 time_limit=time_limit, relax=frozenset({family}), **options)
        if trial.status != "infeasible":
            return f"{family}: {where or 'no schedule meets it'}; without that rule a " \
                   "schedule exists"
    return f"several rules together: {where or 'no schedule meets them'}"
