"""A unit's least-cost curve as the dispatch model receives it, and the checks on it.

The reduction layer turns each unit (or train) at today's conditions into a
:class:`UnitCurve`: its least cost against its through-flow, sampled at breakpoints. This
module holds that data class and the checks on a station's curves and demand; it uses
numpy only (no Pyomo), so the layers below the model can build curves freely.
:mod:`trainopt.dispatch.model` re-exports everything here.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from enum import Enum

import numpy as np

from trainopt.errors import InputError

__all__ = ["UnitCurve", "UnitStatus", "check_curves", "check_demand"]


class UnitStatus(str, Enum):
    """Whether a unit may be started or stopped by the optimiser."""

    AVAILABLE = "available"
    OFFLINE = "offline"
    MUST_RUN = "must_run"


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
    largest_flow_limit : str or None
        What sets ``flow[-1]``, in words (``"stonewall"``, ``"driver power"``...), quoted
        when a demand is above the station's capacity.

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
    largest_flow_limit: str | None = None

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
        for key in ("group", "largest_flow_limit"):
            value = getattr(self, key)
            if value is not None and not isinstance(value, str):
                raise InputError(f"{field}.{key}", f"{value!r} is not a text",
                                 "give a text or None")
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
