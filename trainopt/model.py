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

The piecewise-linear curves themselves are written by :mod:`trainopt.formulation`; see
``docs/formulation.md`` for the equations and the measured timings. The model never reads
files and never calls a solver; :mod:`trainopt.solve` does that.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from enum import Enum

import numpy as np
import pyomo.environ as pyo

from trainopt.errors import InputError
from trainopt.formulation import (
    add_block_incremental,
    add_convex_combination,
    convex_blocks,
    is_convex,
)

__all__ = [
    "CONVEXITY_RTOL",
    "Formulation",
    "UnitCurve",
    "UnitStatus",
    "build_model",
    "check_curves",
    "check_demand",
    "is_convex",
    "tie_break_weight",
]

CONVEXITY_RTOL = 1e-9
"""Default relative tolerance [-] of the convexity test on a curve's segment slopes."""

RECYCLE_TIE_BREAK = 1e-6
"""Objective weight of recycle [-], relative to the station's typical cost slope."""

SHARE_TIE_BREAK = 1e-7
"""Objective weight of unequal flow between identical units [-], relative as above."""


class UnitStatus(str, Enum):
    """Whether a unit may be started or stopped by the optimiser."""

    AVAILABLE = "available"
    OFFLINE = "offline"
    MUST_RUN = "must_run"


class Formulation(str, Enum):
    """How the piecewise-linear unit curves enter the model.

    ``AUTO`` uses the convex combination for every convex curve and the incremental form
    by convex blocks for the others: exact on every curve, with the fewest binaries.
    ``BLOCK_INCREMENTAL`` uses the incremental form by convex blocks on every curve.
    ``INCREMENTAL`` is the textbook incremental form with one binary per inner breakpoint;
    it is kept for comparison. ``CONVEX_COMBINATION`` needs every curve to be convex.
    """

    AUTO = "auto"
    BLOCK_INCREMENTAL = "block_incremental"
    INCREMENTAL = "incremental"
    CONVEX_COMBINATION = "convex_combination"


@dataclass(frozen=True, eq=False)
class UnitCurve:
    """One unit's least cost against its through-flow, at today's conditions.

    Parameters
    ----------
    name : str
        Unit name, unique in the station.
    flow : numpy.ndarray
        Through-flow breakpoints [kg/s], strictly increasing; ``flow[0]`` is the least
        through-flow without recycle (surge control line or minimum speed), ``flow[-1]``
        the largest (first of stonewall, maximum speed, driver power, discharge
        temperature).
    cost : numpy.ndarray
        Objective at each breakpoint [W of shaft power, W of fuel, or currency/s]; same
        length as ``flow``.
    status : UnitStatus or str
        ``"available"``, ``"offline"`` or ``"must_run"``.
    group : str or None
        Units sharing a group key have identical curves and status; the model breaks
        their symmetry.

    Raises
    ------
    InputError
        If a field is malformed (the message names the unit and the field).
    """

    name: str
    flow: np.ndarray
    cost: np.ndarray
    status: UnitStatus | str = UnitStatus.AVAILABLE
    group: str | None = None

    def __post_init__(self):
        if not isinstance(self.name, str) or not self.name.strip():
            raise InputError("unit name", f"{self.name!r} is not a name", "give a non-empty text")
        field = f"units.{self.name}"
        flow = _as_vector(self.flow, f"{field}.flow")
        cost = _as_vector(self.cost, f"{field}.cost")
        if flow.size < 2:
            raise InputError(f"{field}.flow", f"has {flow.size} breakpoint(s)",
                             "give at least two (least and largest through-flow)")
        if cost.size != flow.size:
            raise InputError(f"{field}.cost", f"has {cost.size} values for {flow.size} flows",
                             "give one cost per flow breakpoint")
        if flow[0] < 0.0:
            raise InputError(f"{field}.flow", f"starts at {flow[0]:g} kg/s",
                             "through-flows are zero or positive")
        steps = np.diff(flow)
        if np.any(steps <= 0.0):
            k = int(np.argmax(steps <= 0.0))
            raise InputError(f"{field}.flow",
                             f"is not strictly increasing at breakpoint {k + 1} "
                             f"({flow[k]:g} then {flow[k + 1]:g} kg/s)",
                             "sort the breakpoints and drop repeated flows")
        try:
            status = UnitStatus(self.status)
        except ValueError:
            choices = ", ".join(s.value for s in UnitStatus)
            raise InputError(f"{field}.status", f"{self.status!r} is not a status",
                             f"use one of {choices}") from None
        if self.group is not None and not isinstance(self.group, str):
            raise InputError(f"{field}.group", f"{self.group!r} is not a text key",
                             "give a text key or None")
        flow.flags.writeable = False
        cost.flags.writeable = False
        object.__setattr__(self, "flow", flow)
        object.__setattr__(self, "cost", cost)
        object.__setattr__(self, "status", status)

    @property
    def flow_min(self) -> float:
        """Least through-flow without recycle [kg/s]."""
        return float(self.flow[0])

    @property
    def flow_max(self) -> float:
        """Largest through-flow [kg/s]."""
        return float(self.flow[-1])

    def cost_at(self, through_flow: float) -> float:
        """Piecewise-linear cost at a through-flow inside the curve [same unit as cost]."""
        return float(np.interp(through_flow, self.flow, self.cost))


def _as_vector(values, field: str) -> np.ndarray:
    try:
        array = np.array(values, dtype=float)
    except (TypeError, ValueError):
        raise InputError(field, "is not a list of numbers", "give numbers") from None
    if array.ndim != 1:
        raise InputError(field, f"has shape {array.shape}", "give a flat list of numbers")
    if not np.all(np.isfinite(array)):
        raise InputError(field, "holds a missing or infinite value", "give finite numbers")
    return array


def check_curves(curves: Sequence[UnitCurve]) -> list[UnitCurve]:
    """Check a station's curves as a whole and return them as a list.

    Parameters
    ----------
    curves : sequence of UnitCurve
        One curve per unit.

    Returns
    -------
    list of UnitCurve
        The same curves.

    Raises
    ------
    InputError
        If there is no curve, a name repeats, or units of one group differ in curve or
        status.
    """
    curves = list(curves)
    if not curves:
        raise InputError("units", "no unit curve was given", "give at least one unit")
    for curve in curves:
        if not isinstance(curve, UnitCurve):
            raise InputError("units", f"{curve!r} is not a UnitCurve", "build one per unit")
    names = [c.name for c in curves]
    repeated = sorted({n for n in names if names.count(n) > 1})
    if repeated:
        raise InputError("units", f"unit name(s) {', '.join(repeated)} repeat",
                         "give each unit its own name")
    first_of_group: dict[str, UnitCurve] = {}
    for curve in curves:
        if curve.group is None:
            continue
        first = first_of_group.setdefault(curve.group, curve)
        same = (np.array_equal(first.flow, curve.flow) and np.array_equal(first.cost, curve.cost)
                and first.status == curve.status)
        if not same:
            raise InputError(f"units.{curve.name}.group",
                             f"unit {curve.name} is in group {curve.group!r} but its curve or "
                             f"status differs from unit {first.name}",
                             "group only units with identical curves and status")
    return curves


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
    pyomo.environ.ConcreteModel
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

    and the curve constraints of :mod:`trainopt.formulation` tie ``c[u]`` to ``m[u]``.
    The objective ``total_cost`` is ``sum_u c[u]`` plus two tie-breaks far below any
    solver tolerance: ``1e-6 * s * sum_u r[u]`` (``s`` from :func:`tie_break_weight`),
    so recycle is zero whenever the curves leave a choice, and ``1e-7 * s`` times the
    flow spread inside each group, so identical units share equally on flat stretches.
    ``recycle_upper`` is a modelling decision: a unit never recycles more than it needs
    to reach its least through-flow. Variables ``recycle_bound[u]`` (a mutable upper
    bound on ``r[u]``) let the solve layer forbid recycle in a second pass.
    """
    curves = check_curves(curves)
    demand = check_demand(demand)
    formulation = _as_formulation(formulation)
    names = [c.name for c in curves]
    by_name = {c.name: c for c in curves}
    convex = {c.name: is_convex(c.flow, c.cost, convexity_rtol) for c in curves}
    if formulation is Formulation.CONVEX_COMBINATION and not all(convex.values()):
        bad = ", ".join(n for n in names if not convex[n])
        raise InputError("formulation", f"the convex combination is exact only on convex "
                         f"curves, and the curve of {bad} is not convex",
                         "use the automatic formulation")

    m = pyo.ConcreteModel(name="station_dispatch")
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
    m.unit_cost = pyo.Var(m.UNITS, bounds=cost_bounds, doc="unit cost on its curve")
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
        hull = [n for n in names if convex[n]]
        blocks = {n: convex_blocks(by_name[n].flow, by_name[n].cost, convexity_rtol)
                  for n in names if not convex[n]}
    elif formulation is Formulation.CONVEX_COMBINATION:
        hull, blocks = names, {}
    elif formulation is Formulation.BLOCK_INCREMENTAL:
        hull = []
        blocks = {n: convex_blocks(by_name[n].flow, by_name[n].cost, convexity_rtol)
                  for n in names}
    else:
        hull = []
        blocks = {n: [[s] for s in range(by_name[n].flow.size - 1)] for n in names}
    add_convex_combination(m, {n: by_name[n] for n in hull})
    add_block_incremental(m, {n: by_name[n] for n in blocks}, blocks)

    scale = tie_break_weight(curves)
    m.total_cost = pyo.Objective(
        expr=sum(m.unit_cost[n] for n in names)
        + RECYCLE_TIE_BREAK * scale * sum(m.recycle[n] for n in names)
        + SHARE_TIE_BREAK * scale * sum(m.through_flow[a] - m.through_flow[b]
                                        for a, b in pairs),
        sense=pyo.minimize, doc="sum of unit costs plus tie-breaks")
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


def check_demand(demand) -> float:
    """Check a station demand and return it as a float [kg/s].

    Parameters
    ----------
    demand : float
        Station net flow [kg/s].

    Returns
    -------
    float
        The demand [kg/s].

    Raises
    ------
    InputError
        If it is not a finite number of zero or more.
    """
    try:
        value = float(demand)
    except (TypeError, ValueError):
        raise InputError("demand", f"{demand!r} is not a number", "give a flow in kg/s") from None
    if not np.isfinite(value):
        raise InputError("demand", f"{value} is not finite", "give a flow in kg/s")
    if value < 0.0:
        raise InputError("demand", f"{value:g} kg/s is negative",
                         "give a station flow of zero or more")
    return value


def _as_formulation(formulation) -> Formulation:
    try:
        return Formulation(formulation)
    except ValueError:
        choices = ", ".join(f.value for f in Formulation)
        raise InputError("formulation", f"{formulation!r} is not a formulation",
                         f"use one of {choices}") from None
