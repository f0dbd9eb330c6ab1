"""One moment's dispatch with a trip reserve: any one running unit may trip.

The single-period case of the commitment model (:mod:`trainopt.dispatch.commitment_model`)
with no start-stop rules: the least-cost dispatch whose running units, less any one of
them, can still carry a stated share of the demand within their largest flows (steady
state; the trip's transient and the anti-surge controller's response are not modelled).
``trainopt.optimize(..., trip_reserve=...)`` calls it.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from trainopt.dispatch.commitment_model import CommitmentRules
from trainopt.dispatch.commitment_solve import solve_commitment
from trainopt.dispatch.solution import DispatchResult, station_range_reason
from trainopt.dispatch.unit_curve import UnitCurve, check_curves, check_demand
from trainopt.errors import InputError
from trainopt.physics.units import Kind, parse_quantity

__all__ = ["solve_secure_dispatch", "trip_share_of"]


def trip_share_of(value) -> float | None:
    """A trip-reserve share as a fraction [-] from ``0.9``, ``"90 %"`` or None.

    Raises
    ------
    InputError
        If it is not a share above 0 and at most 100 %.
    """
    if value is None:
        return None
    share = parse_quantity(value, Kind.DIMENSIONLESS, "trip_reserve")
    if not 0.0 < share <= 1.0:
        raise InputError("trip_reserve", f"{value!r} is not a share of demand above 0 and "
                         "at most 100 %", "give e.g. '90 %'")
    return share


def solve_secure_dispatch(curves: Sequence[UnitCurve], demand: float, share: float, *,
                          mip_gap: float = 1e-4, time_limit: float = 30.0) -> DispatchResult:
    """Least-cost dispatch of one demand with a trip reserve.

    Parameters
    ----------
    curves : sequence of UnitCurve
        The station's curves (statuses respected).
    demand : float
        Station net flow [kg/s].
    share : float
        With any one running unit lost, the others' largest flows reach at least
        ``share * demand`` [-].
    mip_gap, time_limit : float
        HiGHS's relative gap [-] and time limit [s].

    Returns
    -------
    DispatchResult
        As :func:`trainopt.dispatch.solve.solve_dispatch` gives; ``"infeasible"`` with the
        reason in words when the units cannot give that reserve. Recycle is used only when
        no dispatch meeting the reserve avoids it.
    """
    curves = check_curves(curves)
    demand = check_demand(demand)
    reason = station_range_reason(curves, demand)
    names = [c.name for c in curves]
    empty = {n: 0.0 for n in names}
    if reason:
        return DispatchResult("infeasible", reason, demand, {n: False for n in names}, empty,
                              empty, empty, empty, math.nan, "trip reserve", 0.0, 0.0,
                              math.nan)
    rules = {n: CommitmentRules() for n in names}
    period = [{c.name: c for c in curves}]
    options = {"trip_share": share, "relax": frozenset({"initial_state"}), "mip_gap": mip_gap,
               "time_limit": time_limit}
    sol = solve_commitment(period, [demand], 1.0, rules, allow_recycle=False, **options)
    if sol.status == "infeasible":
        sol = solve_commitment(period, [demand], 1.0, rules, **options)
    if sol.status == "infeasible":
        largest = max(curves, key=lambda c: c.flow_max if c.status.value != "offline" else 0)
        return DispatchResult(
            "infeasible", f"no set of running units carries {share:.0%} of {demand:.4g} kg/s "
            f"with any one of them tripped: the available units' largest flows less the "
            f"largest ({largest.name}, {largest.flow_max:.4g} kg/s) fall short", demand,
            {n: False for n in names}, empty, empty, empty, empty, math.nan, "trip reserve",
            sol.build_seconds, sol.solve_seconds, math.nan)
    row = {n: j for j, n in enumerate(sol.units)}
    return DispatchResult(
        "optimal" if sol.status == "optimal" else "time_limit", "", demand,
        {n: bool(sol.carrying[0, row[n]]) for n in names},
        {n: float(sol.through_flow[0, row[n]]) for n in names},
        {n: float(sol.recycle[0, row[n]]) for n in names},
        {n: float(sol.net_flow[0, row[n]]) for n in names},
        {n: float(sol.energy_cost[0, row[n]]) for n in names},
        float(sol.energy_cost.sum()), "trip reserve (commitment model, one period)",
        sol.build_seconds, sol.solve_seconds, sol.gap)
