"""The multi-period commitment model: which units run in each period, with start-stop rules.

Each period ``t`` of the horizon has its own least-cost curves (a :class:`UnitCurve` per
available unit, cost in currency per second) and its own demand. This module builds one
Pyomo model over the horizon:

- per unit and period, ``on`` (binary: running or starting), ``start`` (binary) and
  ``stop`` (continuous in [0, 1], integral once ``on`` and ``start`` are);
- per period, a block holding the single-period dispatch (through-flow, recycle, net flow,
  unit cost) whose run indicator is ``carry = on - starts still in their start-up time``;
  the curves enter through :func:`trainopt.dispatch.piecewise.add_block_incremental`,
  the same constraint builder as the single-period model;
- minimum up and down times as the turn-on/turn-off inequalities of Rajan and Takriti
  [1]_ (the convex hull of the minimum up/down polytope), starts in any window of
  ``window`` periods (24 h), warm and cold start costs in the form of Carrion and Arroyo
  [2]_;
- optionally the trip reserve: with any one carrying unit lost, the other carrying units'
  largest flows add up to at least a share of the demand (steady state only);
- objective: energy cost plus start and stop costs over the horizon.

It never reads files nor calls a solver (:mod:`trainopt.dispatch.commitment_solve`).

References
----------
.. [1] Rajan, D. and Takriti, S. (2005). Minimum up/down polytopes of the unit
   commitment problem with start-up costs. IBM Research Report RC23628.
.. [2] Carrion, M. and Arroyo, J. M. (2006). A computationally efficient mixed-integer
   linear formulation for the thermal unit commitment problem. IEEE Transactions on
   Power Systems 21(3), 1371-1378. doi:10.1109/TPWRS.2006.876672
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pyomo.environ as pyo

from trainopt.dispatch.piecewise import add_block_incremental, convex_blocks
from trainopt.dispatch.unit_curve import UnitCurve, UnitStatus
from trainopt.errors import InputError

__all__ = ["RULE_FAMILIES", "CommitmentRules", "build_commitment_model"]

RULE_FAMILIES = ("initial_state", "min_up_time", "min_down_time", "max_starts_per_day",
                 "startup_time", "trip_reserve", "reserve")
"""Names of the rule families, as they may be relaxed one at a time to find a culprit."""

RECYCLE_TIE_BREAK = 1e-4
"""Objective weight of recycle relative to the typical cost slope [-] (settles ties only)."""


@dataclass(frozen=True)
class CommitmentRules:
    """One unit's start-stop rules, counted in periods.

    Attributes
    ----------
    start_cost : float
        Cost of a warm start [currency], start fuel included.
    stop_cost : float
        Cost of a stop [currency].
    cold_start_cost : float or None
        Cost of a start after more than ``cold_after`` stopped periods [currency].
    cold_after : int
        Stopped periods up to which a start is warm [-]; a start after more is cold.
    startup_periods : int
        Periods after a start in which the unit carries no flow [-].
    min_up, min_down : int
        Least running and stopped periods [-] (1: no rule).
    max_starts : int or None
        Most starts in any window of ``window`` periods [-].
    initial_on : bool
        Running when the horizon begins.
    initial_periods : int
        Periods already spent in the initial state [-].
    """

    start_cost: float = 0.0
    stop_cost: float = 0.0
    cold_start_cost: float | None = None
    cold_after: int = 0
    startup_periods: int = 0
    min_up: int = 1
    min_down: int = 1
    max_starts: int | None = None
    initial_on: bool = True
    initial_periods: int = 10_000

    @property
    def min_up_effective(self) -> int:
        """Least running periods, at least the start-up time plus one carrying period."""
        return max(self.min_up, self.startup_periods + 1 if self.startup_periods else 1)

    def was_on(self, k: int) -> int:
        """Whether the unit ran in period ``k <= 0`` before the horizon (1) or not (0)."""
        inside = -k < self.initial_periods
        return int(self.initial_on) if inside else int(not self.initial_on)


def build_commitment_model(curves: Sequence[Mapping[str, UnitCurve]], demand: Sequence[float],
                           period: float, rules: Mapping[str, CommitmentRules], *,
                           window: int = 24, trip_share: float | None = None,
                           reserve_share: float | None = None, allow_recycle: bool = True,
                           relax: frozenset[str] = frozenset(), elastic: bool = False,
                           fixed_on: Mapping[tuple[str, int], int] | None = None,
                           ) -> pyo.ConcreteModel:
    """Build the commitment model over a horizon of periods.

    Parameters
    ----------
    curves : sequence of mapping of str to UnitCurve
        Per period, the curves of the units that can run then (cost [currency/s]); a unit
        absent from a period cannot carry flow in it. ``must_run`` units are kept on.
    demand : sequence of float
        Station net flow per period [kg/s].
    period : float
        Length of a period [s].
    rules : mapping of str to CommitmentRules
        Every unit of the station, with its rules (the order is the units' order).
    window : int
        Periods in 24 h, the window of ``max_starts`` [-].
    trip_share : float, optional
        Trip reserve [-]: with any one carrying unit lost, the others' largest flows
        reach at least this share of the demand.
    reserve_share : float, optional
        Spinning reserve [-]: the carrying units' largest flows reach ``(1 + share)``
        times the demand.
    allow_recycle : bool
        False bounds recycle to zero (a unit then delivers at least its least flow).
    relax : frozenset of str
        Rule families (:data:`RULE_FAMILIES`) left out, to find which one makes a horizon
        infeasible.
    elastic : bool
        Add a shortfall per period, priced far above any cost, so that the model is
        always feasible and the shortfall shows where it is not.
    fixed_on : mapping, optional
        ``(unit, period index) -> 0 or 1`` commitments imposed.

    Returns
    -------
    pyomo.environ.ConcreteModel
        ``on``, ``start``, ``stop``, ``start_charge`` indexed by (unit, period);
        ``period_block[t]`` with ``through_flow``, ``recycle``, ``net_flow``,
        ``unit_cost`` per unit; ``cost_scale`` [currency] divides every cost.

    Notes
    -----
    With ``v`` starts, ``w`` stops, ``u`` on, UT/DT the least up/down periods::

        start_stop_balance[i,t]: v[i,t] - w[i,t] == u[i,t] - u[i,t-1]
        min_up[i,t]:   sum_{k=t-UT+1..t} v[i,k] <= u[i,t]          ([1]_, eq. (2))
        min_down[i,t]: sum_{k=t-DT+1..t} w[i,k] <= 1 - u[i,t]      ([1]_, eq. (3))
        starts[i,t]:   sum_{k=t-W+1..t} v[i,k] <= S_i
        cold[i,t]:     c[i,t] >= K_cold * (u[i,t] - sum_{n=1..N+1} u[i,t-n])  ([2]_)
        warm[i,t]:     c[i,t] >= K_warm * v[i,t]
        carry[i,t] = u[i,t] - sum_{k=t-SU+1..t} v[i,k]
        trip[k,t]:     sum_{j != k} F_max[j,t] * carry[j,t] >= share * D[t]

    ``u[i,t]`` for ``t <= 0`` comes from the initial state. The start variable is binary:
    with a start-up time, a fractional start-stop pair (``v = w = 1/2`` with ``u``
    unchanged) would make ``carry`` fractional and let a unit carry flow below its least
    flow; the stop variable then follows integral from the balance.
    """
    names = list(rules)
    n_periods = len(curves)
    if n_periods == 0 or len(demand) != n_periods:
        raise InputError("forecast", f"{len(demand)} demands for {n_periods} periods",
                         "give one demand per period")
    if not period > 0:
        raise InputError("period", f"{period!r} is not a length of time", "give seconds > 0")
    demand = [float(d) for d in demand]
    periods = list(range(1, n_periods + 1))
    scale = _cost_scale(curves, rules, period)
    m = pyo.ConcreteModel(name="station_commitment")
    m.cost_scale = scale
    m.period_seconds = float(period)
    m.UNITS = pyo.Set(initialize=names, ordered=True)
    m.T = pyo.Set(initialize=periods, ordered=True)
    m.on = pyo.Var(m.UNITS, m.T, domain=pyo.Binary, doc="running or starting [-]")
    m.start = pyo.Var(m.UNITS, m.T, domain=pyo.Binary, doc="start in the period [-]")
    m.stop = pyo.Var(m.UNITS, m.T, bounds=(0.0, 1.0), doc="stop in the period [-]")
    m.start_charge = pyo.Var(m.UNITS, m.T, bounds=(0.0, None),
                             doc="start cost [currency / cost_scale]")
    r = {n: rules[n] for n in names}
    prior = {n: (lambda k, n=n: r[n].was_on(k)) for n in names}
    if "initial_state" in relax:
        prior = {n: (lambda k: 0) for n in names}

    m.initial_on = {n: prior[n](0) for n in names}
    m.stop_price = {n: r[n].stop_cost for n in names}

    def on(n, t):
        return m.on[n, t] if t >= 1 else prior[n](t)

    for n in names:
        for t in periods:
            curve = curves[t - 1].get(n)
            if curve is None or curve.status is UnitStatus.OFFLINE:
                m.on[n, t].fix(0)
            elif curve.status is UnitStatus.MUST_RUN:
                m.on[n, t].fix(1)
    for (n, t), value in (fixed_on or {}).items():
        m.on[n, t + 1].fix(int(value))
    m.start_stop_balance = pyo.Constraint(m.UNITS, m.T, rule=lambda _, n, t: m.start[n, t]
                                          - m.stop[n, t] == m.on[n, t] - on(n, t - 1))
    m.start_or_stop = pyo.Constraint(m.UNITS, m.T,
                                     rule=lambda _, n, t: m.start[n, t] + m.stop[n, t] <= 1)

    def up(n):
        return 1 if "min_up_time" in relax else r[n].min_up_effective

    def down(n):
        return 1 if "min_down_time" in relax else r[n].min_down

    m.min_up = pyo.Constraint(
        [(n, t) for n in names for t in periods if up(n) > 1],
        rule=lambda _, n, t: sum(m.start[n, k] for k in range(max(1, t - up(n) + 1), t + 1))
        <= m.on[n, t])
    m.min_down = pyo.Constraint(
        [(n, t) for n in names for t in periods if down(n) > 1],
        rule=lambda _, n, t: sum(m.stop[n, k] for k in range(max(1, t - down(n) + 1), t + 1))
        <= 1 - m.on[n, t])
    if "initial_state" not in relax:
        for n in names:
            rest = (up(n) if r[n].initial_on else down(n)) - r[n].initial_periods
            for t in range(1, min(rest, n_periods) + 1):
                m.on[n, t].fix(int(r[n].initial_on))
    limited = [] if "max_starts_per_day" in relax else [n for n in names
                                                         if r[n].max_starts is not None]
    m.starts_in_window = pyo.Constraint(
        [(n, t) for n in limited for t in range(min(window, n_periods), n_periods + 1)],
        rule=lambda _, n, t: sum(m.start[n, k] for k in range(max(1, t - window + 1), t + 1))
        <= r[n].max_starts)
    m.warm_start = pyo.Constraint(m.UNITS, m.T, rule=lambda _, n, t: m.start_charge[n, t]
                                  >= r[n].start_cost / scale * m.start[n, t])
    cold = [(n, t) for n in names for t in periods if r[n].cold_start_cost is not None]
    m.cold_start = pyo.Constraint(cold, rule=lambda _, n, t: m.start_charge[n, t]
                                  >= r[n].cold_start_cost / scale * (m.on[n, t] - sum(
                                      on(n, t - k) for k in range(1, r[n].cold_after + 2))))

    def startup(n):
        return 0 if "startup_time" in relax else r[n].startup_periods

    def carry(n, t):
        if startup(n) == 0:
            return m.on[n, t]
        return m.on[n, t] - sum(m.start[n, k] for k in range(max(1, t - startup(n) + 1), t + 1))

    m.carry = pyo.Expression(m.UNITS, m.T, rule=lambda _, n, t: carry(n, t))
    m.period_block = pyo.Block(m.T)
    slopes = []
    for t in periods:
        b = m.period_block[t]
        here = {n: c for n, c in curves[t - 1].items() if n in r}
        _period_dispatch(b, m, t, here, demand[t - 1], period / scale, allow_recycle, elastic)
        slopes += [abs(c.cost[-1] - c.cost[0]) / (c.flow[-1] - c.flow[0]) * period / scale
                   for c in here.values()]
        b.largest = {n: c.flow_max for n, c in here.items()}
    if trip_share is not None and "trip_reserve" not in relax:
        trips = [(n, t) for t in periods for n in m.period_block[t].largest]
        m.trip_reserve = pyo.Constraint(trips, rule=lambda _, k, t: sum(
            f * m.carry[j, t] for j, f in m.period_block[t].largest.items() if j != k)
            >= trip_share * demand[t - 1])
    if reserve_share is not None and "reserve" not in relax:
        m.reserve = pyo.Constraint(m.T, rule=lambda _, t: sum(
            f * m.carry[j, t] for j, f in m.period_block[t].largest.items())
            >= (1.0 + reserve_share) * demand[t - 1])
    tie = RECYCLE_TIE_BREAK * (float(np.median(slopes)) if slopes else 1.0)
    penalty = 1e3 * max(slopes, default=1.0) + 1.0
    m.shortfall_penalty = penalty
    m.total_cost = pyo.Objective(
        expr=sum(m.period_block[t].unit_cost[n] for t in periods
                 for n in m.period_block[t].UNITS)
        + sum(m.start_charge[n, t] + r[n].stop_cost / scale * m.stop[n, t]
              for n in names for t in periods)
        + tie * sum(m.period_block[t].recycle[n] for t in periods
                    for n in m.period_block[t].UNITS)
        + (penalty * sum(m.period_block[t].shortfall for t in periods) if elastic else 0.0),
        sense=pyo.minimize)
    return m


def _cost_scale(curves, rules, period) -> float:
    largest = max([float(np.max(np.abs(c.cost))) * period for p in curves for c in p.values()]
                  + [max(x.start_cost, x.cold_start_cost or 0.0, x.stop_cost)
                     for x in rules.values()] + [0.0])
    return 10.0 ** round(np.log10(largest)) if largest > 0.0 else 1.0


def _period_dispatch(b, m, t, curves, demand, cost_factor, allow_recycle, elastic) -> None:
    """One period's dispatch inside block ``b``; its run indicator is ``m.carry[., t]``."""
    names = list(curves)
    scaled = {n: UnitCurve(n, c.flow, c.cost * cost_factor, c.status) for n, c in curves.items()}
    b.UNITS = pyo.Set(initialize=names, ordered=True)
    b.run = pyo.Expression(b.UNITS, rule=lambda _, n: m.carry[n, t])
    b.through_flow = pyo.Var(b.UNITS, bounds=lambda _, n: (0.0, curves[n].flow_max))
    b.recycle = pyo.Var(b.UNITS, bounds=lambda _, n: (0.0, curves[n].flow_min
                                                      if allow_recycle else 0.0))
    b.net_flow = pyo.Var(b.UNITS, bounds=lambda _, n: (0.0, curves[n].flow_max))
    b.unit_cost = pyo.Var(b.UNITS, bounds=lambda _, n: (min(0.0, float(scaled[n].cost.min())),
                                                        max(0.0, float(scaled[n].cost.max()))))
    b.shortfall = pyo.Var(bounds=(0.0, None if elastic else 0.0))
    b.demand_balance = pyo.Constraint(expr=sum(b.net_flow[n] for n in names) + b.shortfall
                                      == demand)
    b.net_flow_definition = pyo.Constraint(
        b.UNITS, rule=lambda _, n: b.net_flow[n] == b.through_flow[n] - b.recycle[n])
    b.unit_flow_lower = pyo.Constraint(
        b.UNITS, rule=lambda _, n: b.through_flow[n] >= curves[n].flow_min * b.run[n])
    b.unit_flow_upper = pyo.Constraint(
        b.UNITS, rule=lambda _, n: b.through_flow[n] <= curves[n].flow_max * b.run[n])
    b.recycle_upper = pyo.Constraint(
        b.UNITS, rule=lambda _, n: b.recycle[n] <= curves[n].flow_min * b.run[n])
    blocks = {n: convex_blocks(scaled[n].flow, scaled[n].cost) for n in names}
    add_block_incremental(b, scaled, blocks)
