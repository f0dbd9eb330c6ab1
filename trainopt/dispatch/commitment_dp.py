"""An exact dynamic program over commitment states: the reference for the commitment model.

For a few units with convex curves, the cheapest schedule is found by forward dynamic
programming over joint states ``(on, periods in that state)`` per unit, the count capped
where no rule looks further back. Each period's cost for a set of carrying units is the
exact economic dispatch of convex piecewise-linear curves (fill segments in order of
slope, recycle below the units' least flows). Used by the tests and the benchmark to
check the MILP's cost; it does not handle the starts-per-day rule (that needs the start
history in the state).

References
----------
.. [1] Wood, A. J., Wollenberg, B. F. and Sheble, G. B. (2014). Power Generation,
   Operation, and Control, 3rd ed., Wiley, chapter 4 (forward dynamic programming for
   unit commitment).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping, Sequence

import numpy as np

from trainopt.dispatch.commitment_model import CommitmentRules
from trainopt.dispatch.piecewise import is_convex
from trainopt.dispatch.unit_curve import UnitCurve, UnitStatus
from trainopt.errors import InputError

__all__ = ["convex_dispatch_cost", "dp_commitment"]


def convex_dispatch_cost(curves: Sequence[UnitCurve], demand: float) -> float:
    """Least cost of carrying ``demand`` with every given unit running (convex curves).

    Parameters
    ----------
    curves : sequence of UnitCurve
        The carrying units; convex curves.
    demand : float
        Net flow [kg/s].

    Returns
    -------
    float
        Cost [cost unit]; ``inf`` above the units' total largest flow; 0 with no unit and
        no demand.

    Notes
    -----
    Every unit starts at its least flow (recycling whatever the demand does not take);
    the rest of the demand fills segments cheapest slope first, which is optimal for
    convex curves (the greedy algorithm of the continuous knapsack).
    """
    if not curves:
        return 0.0 if demand <= 1e-9 else math.inf
    if demand > sum(c.flow_max for c in curves) * (1 + 1e-12):
        return math.inf
    cost = sum(float(c.cost[0]) for c in curves)
    need = demand - sum(c.flow_min for c in curves)
    if need <= 0:
        return cost
    segments = sorted((float(s), float(w)) for c in curves
                      for s, w in zip(np.diff(c.cost) / np.diff(c.flow), np.diff(c.flow),
                                      strict=True))
    for slope, width in segments:
        take = min(width, need)
        cost += slope * take
        need -= take
        if need <= 1e-12:
            break
    return cost


def dp_commitment(curves: Sequence[Mapping[str, UnitCurve]], demand: Sequence[float],
                  period: float, rules: Mapping[str, CommitmentRules]) -> float:
    """Least total cost of a horizon by exact dynamic programming [currency].

    Parameters
    ----------
    curves, demand, period, rules
        As for :func:`~trainopt.dispatch.commitment_model.build_commitment_model`, with
        convex curves and no ``max_starts``.

    Returns
    -------
    float
        Energy plus start and stop costs of the cheapest schedule; ``inf`` if none.
    """
    names = list(rules)
    for r in rules.values():
        if r.max_starts is not None:
            raise InputError("max_starts", "the dynamic program does not track starts per "
                             "day", "leave it out for the reference")
    for p in curves:
        for c in p.values():
            if not is_convex(c.flow, c.cost, 1e-9):
                raise InputError(f"units.{c.name}", "the dynamic program needs convex curves",
                                 "use the MILP")
    cap = {n: max(rules[n].min_up_effective, rules[n].min_down, rules[n].startup_periods + 1,
                  rules[n].cold_after + 1) for n in names}
    start = tuple((rules[n].initial_on, min(rules[n].initial_periods, cap[n])) for n in names)
    layer = {start: 0.0}
    cache: dict = {}
    for t, (here, d) in enumerate(zip(curves, demand, strict=True)):
        options = [_moves(n, rules[n], cap[n], here.get(n)) for n in names]
        nxt: dict = {}
        for state, value in layer.items():
            per_unit = [opt(s) for opt, s in zip(options, state, strict=True)]
            for combo in itertools.product(*per_unit):
                new = tuple(c[0] for c in combo)
                switch = sum(c[1] for c in combo)
                carrying = tuple(n for n, c in zip(names, combo, strict=True) if c[2])
                key = (t, carrying)
                if key not in cache:
                    cache[key] = convex_dispatch_cost([here[n] for n in carrying], d) * period
                total = value + switch + cache[key]
                if total < nxt.get(new, math.inf):
                    nxt[new] = total
        layer = nxt
    return min(layer.values(), default=math.inf)


def _moves(name, r: CommitmentRules, cap: int, curve: UnitCurve | None):
    """Per state ``(on, age)``: the list of ``(next state, switching cost, carries)``."""
    up, down, su = r.min_up_effective, r.min_down, r.startup_periods

    def moves(state):
        on, age = state
        out = []
        if on:
            if curve is not None:
                new_age = min(age + 1, cap)
                out.append(((True, new_age), 0.0, new_age > su))
            if age >= up and (curve is None or curve.status is not UnitStatus.MUST_RUN):
                out.append(((False, 1), r.stop_cost, False))
        else:
            out.append(((False, min(age + 1, cap)), 0.0, False))
            if age >= down and curve is not None:
                cold = r.cold_start_cost is not None and age > r.cold_after
                out.append(((True, 1), r.cold_start_cost if cold else r.start_cost, su == 0))
            if curve is not None and curve.status is UnitStatus.MUST_RUN:
                out = [o for o in out if o[0][0]]
        return out

    return moves
