"""The station dispatch model: which units run and how the demand is split among them.

Each unit arrives reduced to a least-cost curve of its through-flow (a :class:`UnitCurve`,
sampled at breakpoints). This module checks those curves, then builds one Pyomo model:

- a run/stop binary per unit (offline units fixed off, must-run units fixed on);
- a through-flow inside the unit's curve when it runs and zero when it stops;
- a recycle flow, at most the unit's least through-flow, and a net flow
  ``through-flow - recycle`` delivered to the header;
- the net flows adding up to the demand (a mutable parameter, so sweeps re-solve without
  rebuilding);
- the sum of the unit costs, read off each curve at its through-flow, as objective.

The piecewise-linear curves themselves are written by :mod:`trainopt.dispatch.piecewise`; see
``docs/formulation.md`` for the equations and the measured timings. The model never reads
files and never calls a solver; :mod:`trainopt.dispatch.solve` does that.
"""

from __future__ import annotations

from collections.abc import Sequence
from enum import Enum

import numpy as np
import pyomo.core as pyo

from trainopt.dispatch.piecewise import (
    add_block_incremental,
    add_convex_combination,
    convex_blocks,
    is_convex,
)
from trainopt.dispatch.unit_curve import UnitCurve, UnitStatus, check_curves, check_demand
from trainopt.errors import InputError

__all__ = [
    "CONVEXITY_RTOL",
    "Formulation",
    "UnitCurve",
    "UnitStatus",
    "build_model",
    "check_curves",
    "check_demand",
    "cost_scale_of",
    "is_convex",
    "tie_break_weight",
]

CONVEXITY_RTOL = 1e-9
"""Default relative tolerance [-] of the convexity test on a curve's segment slopes."""

RECYCLE_TIE_BREAK = 1e-4
"""Objective weight of recycle [-], relative to the station's typical cost slope.

Recycled gas already costs through the curve (it is compressed); this small extra charge
only settles ties, e.g. on flat stretches of a curve. It is large enough to stay above
HiGHS's dual feasibility tolerance (1e-7) once costs are scaled to order one.
"""


class Formulation(str, Enum):
    """How the piecewise-linear unit curves enter the model.

    ``AUTO`` (the default) writes every curve in the incremental form by convex blocks:
    exact on any curve, a binary only at each concave kink (none on a convex curve), and
    measured the fastest (``docs/formulation.md``). ``HYBRID`` uses the convex
    combination for convex curves and the incremental form by convex blocks for the
    others. ``INCREMENTAL`` is the textbook incremental form with one binary per inner
    breakpoint, kept for comparison. ``CONVEX_COMBINATION`` needs every curve convex.
    """

    AUTO = "auto"
    HYBRID = "hybrid"
    INCREMENTAL = "incremental"
    CONVEX_COMBINATION = "convex_combination"


def cost_scale_of(curves: Sequence[UnitCurve]) -> float:
    """Power of ten nearest the largest absolute breakpoint cost [cost unit].

    Parameters
    ----------
    curves : sequence of UnitCurve
        The station's curves.

    Returns
    -------
    float
        ``10 ** round(log10(max |cost|))``, or 1.0 if every cost is zero.
    """
    largest = max(float(np.max(np.abs(c.cost))) for c in curves)
    return 10.0 ** round(np.log10(largest)) if largest > 0.0 else 1.0


def tie_break_weight(curves: Sequence[UnitCurve]) -> float:
    """Typical cost slope of the station [cost unit per kg/s], the scale of tie-breaks.

    Parameters
    ----------
    curves : sequence of UnitCurve
        The station's curves.

    Returns
    -------
    float
        Median over units of ``|cost[-1] - cost[0]| / (flow[-1] - flow[0])``, or of
        ``max|cost| / flow[-1]`` where that is zero; 1.0 if every cost is zero.
    """
    slopes = []
    for c in curves:
        slope = abs(c.cost[-1] - c.cost[0]) / (c.flow[-1] - c.flow[0])
        if slope == 0.0:
            slope = float(np.max(np.abs(c.cost))) / c.flow[-1]
        slopes.append(slope)
    scale = float(np.median(slopes))
    return scale if scale > 0.0 else 1.0


def build_model(curves: Sequence[UnitCurve], demand: float, *,
                formulation: Formulation | str = Formulation.AUTO,
                convexity_rtol: float = CONVEXITY_RTOL) -> pyo.ConcreteModel:
    """Build the dispatch model for one station.

    Parameters
    ----------
    curves : sequence of UnitCurve
        One least-cost curve per unit.
    demand : float
        Station net flow to deliver [kg/s]; stored in the mutable parameter
        ``model.demand``, so a sweep changes it and re-solves.
    formulation : Formulation or str
        How the curves enter the model (see :class:`Formulation`).
    convexity_rtol : float
        Relative tolerance [-] of the convexity test (see :func:`is_convex`).

    Returns
    -------
    pyomo.core.ConcreteModel
        The model. ``model.formulation_summary`` says which formulation each unit got.

    Raises
    ------
    InputError
        If the curves are inconsistent, the demand is not a finite number, or the
        convex combination is asked for a non-convex curve.

    Notes
    -----
    Constraints, for every unit ``u`` (``y`` run binary, ``m`` through-flow, ``r``
    recycle, ``n`` net flow, ``c`` cost, all per unit)::

        demand_balance:         sum_u n[u] == demand
        net_flow_definition[u]: n[u] == m[u] - r[u]
        unit_flow_lower[u]:     m[u] >= flow[u][0] * y[u]
        unit_flow_upper[u]:     m[u] <= flow[u][-1] * y[u]
        recycle_upper[u]:       r[u] <= flow[u][0] * y[u]
        group_run_order[u]:     y[u] >= y[v]          (v the next unit of u's group)
        group_flow_order[u]:    m[u] >= m[v]

    and the curve constraints of :mod:`trainopt.dispatch.piecewise` tie ``c[u]`` to ``m[u]``.
    Costs enter divided by ``model.cost_scale`` (a power of ten near the largest
    breakpoint cost, see :func:`cost_scale_of`), so the solver sees numbers of order one;
    ``c[u]`` and the objective are in those scaled units. The objective ``total_cost`` is
    ``sum_u c[u] + 1e-4 * s * sum_u r[u]``, ``s`` the typical slope of
    :func:`tie_break_weight`: the recycle term only settles ties, so recycle is zero
    wherever the curves leave a choice.
    ``recycle_upper`` is a modelling decision: a unit never recycles more than it needs
    to reach its least through-flow. Parameters ``recycle_bound[u]`` (a mutable upper
    bound on ``r[u]``) let the solve layer forbid recycle in a second pass.
    """
    curves = check_curves(curves)
    demand = check_demand(demand)
    formulation = _as_formulation(formulation)
    names = [c.name for c in curves]
    cost_scale = cost_scale_of(curves)
    by_name = {c.name: UnitCurve(c.name, c.flow, c.cost / cost_scale, c.status, c.group)
               for c in curves}
    curves = [by_name[n] for n in names]
    convex = {c.name: is_convex(c.flow, c.cost, convexity_rtol) for c in curves}
    if formulation is Formulation.CONVEX_COMBINATION and not all(convex.values()):
        bad = ", ".join(n for n in names if not convex[n])
        raise InputError("formulation", f"the convex combination is exact only on convex "
                         f"curves, and the curve of {bad} is not convex",
                         "use the automatic formulation")

    m = pyo.ConcreteModel(name="station_dispatch")
    m.cost_scale = cost_scale
    m.UNITS = pyo.Set(initialize=names, ordered=True, doc="units [-]")
    m.flow_min = pyo.Param(m.UNITS, initialize={n: by_name[n].flow_min for n in names},
                           doc="least through-flow without recycle [kg/s]")
    m.flow_max = pyo.Param(m.UNITS, initialize={n: by_name[n].flow_max for n in names},
                           doc="largest through-flow [kg/s]")
    m.demand = pyo.Param(initialize=demand, mutable=True, doc="station net flow [kg/s]")
    m.recycle_bound = pyo.Param(m.UNITS, initialize={n: by_name[n].flow_min for n in names},
                                mutable=True, doc="upper bound on recycle [kg/s]")

    def cost_bounds(_, n):
        cost = by_name[n].cost
        return min(0.0, float(cost.min())), max(0.0, float(cost.max()))

    m.run = pyo.Var(m.UNITS, domain=pyo.Binary, doc="1 if the unit runs [-]")
    m.through_flow = pyo.Var(m.UNITS, bounds=lambda _, n: (0.0, by_name[n].flow_max),
                             doc="flow through the compressor [kg/s]")
    m.recycle = pyo.Var(m.UNITS, bounds=lambda mm, n: (0.0, mm.recycle_bound[n]),
                        doc="flow returned through the recycle valve [kg/s]")
    m.net_flow = pyo.Var(m.UNITS, bounds=lambda _, n: (0.0, by_name[n].flow_max),
                         doc="flow delivered to the discharge header [kg/s]")
    m.unit_cost = pyo.Var(m.UNITS, bounds=cost_bounds,
                          doc="unit cost on its curve [cost unit / cost_scale]")
    for curve in curves:
        if curve.status is UnitStatus.OFFLINE:
            m.run[curve.name].fix(0)
        elif curve.status is UnitStatus.MUST_RUN:
            m.run[curve.name].fix(1)

    m.demand_balance = pyo.Constraint(expr=sum(m.net_flow[n] for n in names) == m.demand)
    m.net_flow_definition = pyo.Constraint(
        m.UNITS, rule=lambda mm, n: mm.net_flow[n] == mm.through_flow[n] - mm.recycle[n])
    m.unit_flow_lower = pyo.Constraint(
        m.UNITS, rule=lambda mm, n: mm.through_flow[n] >= mm.flow_min[n] * mm.run[n])
    m.unit_flow_upper = pyo.Constraint(
        m.UNITS, rule=lambda mm, n: mm.through_flow[n] <= mm.flow_max[n] * mm.run[n])
    m.recycle_upper = pyo.Constraint(
        m.UNITS, rule=lambda mm, n: mm.recycle[n] <= mm.flow_min[n] * mm.run[n])

    pairs = _group_pairs(curves)
    m.GROUP_PAIRS = pyo.Set(initialize=pairs, dimen=2, ordered=True,
                            doc="(unit, next identical unit) pairs")
    m.group_run_order = pyo.Constraint(
        [(a, b) for a, b in pairs if by_name[a].status is UnitStatus.AVAILABLE],
        rule=lambda mm, a, b: mm.run[a] >= mm.run[b])
    m.group_flow_order = pyo.Constraint(
        m.GROUP_PAIRS, rule=lambda mm, a, b: mm.through_flow[a] >= mm.through_flow[b])

    if formulation is Formulation.AUTO:
        hull = []
        blocks = {n: convex_blocks(by_name[n].flow, by_name[n].cost, convexity_rtol)
                  for n in names}
    elif formulation is Formulation.HYBRID:
        hull = [n for n in names if convex[n]]
        blocks = {n: convex_blocks(by_name[n].flow, by_name[n].cost, convexity_rtol)
                  for n in names if not convex[n]}
    elif formulation is Formulation.CONVEX_COMBINATION:
        hull, blocks = names, {}
    else:
        hull = []
        blocks = {n: [[s] for s in range(by_name[n].flow.size - 1)] for n in names}
    add_convex_combination(m, {n: by_name[n] for n in hull})
    add_block_incremental(m, {n: by_name[n] for n in blocks}, blocks)

    scale = tie_break_weight(curves)
    m.total_cost = pyo.Objective(
        expr=sum(m.unit_cost[n] for n in names)
        + RECYCLE_TIE_BREAK * scale * sum(m.recycle[n] for n in names),
        sense=pyo.minimize, doc="sum of unit costs plus a recycle tie-break")
    binaries = sum(len(b) - 1 for b in blocks.values())
    m.formulation_summary = (
        f"{formulation.value}: convex combination for {len(hull)} unit(s), incremental by "
        f"convex blocks for {len(blocks)} unit(s), {binaries} segment binaries")
    return m


def _group_pairs(curves: Sequence[UnitCurve]) -> list[tuple[str, str]]:
    members: dict[str, list[str]] = {}
    for c in curves:
        if c.group is not None and c.status is not UnitStatus.OFFLINE:
            members.setdefault(c.group, []).append(c.name)
    return [(g[i], g[i + 1]) for g in members.values() for i in range(len(g) - 1)]


def _as_formulation(formulation) -> Formulation:
    try:
        return Formulation(formulation)
    except ValueError:
        choices = ", ".join(f.value for f in Formulation)
        raise InputError("formulation", f"{formulation!r} is not a formulation",
                         f"use one of {choices}") from None
