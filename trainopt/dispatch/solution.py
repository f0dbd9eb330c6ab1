"""What a dispatch solve answers, and the reasons in words when it cannot.

:class:`DispatchResult` is the answer of :mod:`trainopt.dispatch.solve`; :class:`RecyclePolicy`
says when recycle may be advised; :func:`station_range_reason` turns a demand outside the
station's range into a sentence with the capacity in kg/s. :mod:`trainopt.dispatch.solve`
re-exports everything here.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import asdict, dataclass
from enum import Enum

from trainopt.dispatch.unit_curve import UnitCurve, UnitStatus
from trainopt.errors import InfeasibleError, TrainoptError

__all__ = ["DispatchResult", "DispatchSolveError", "RecyclePolicy", "station_range_reason"]


class RecyclePolicy(str, Enum):
    """When the optimiser may advise recycle.

    ``AVOID`` (the default): no unit recycles unless it must, i.e. whenever some
    commitment carries the demand without recycle, the answer is the least-cost dispatch
    among those without recycle; otherwise the least-cost dispatch with recycle.
    ``LEAST_COST``: the least-cost dispatch, recycling where that is cheaper (a large
    efficient unit recycling can beat a small inefficient one running clean); a dispatch
    without recycle is still preferred when it is within the MIP gap of the proven bound.
    """

    AVOID = "avoid"
    LEAST_COST = "least_cost"


class DispatchSolveError(TrainoptError):
    """HiGHS stopped without any dispatch (time limit before a first solution, or a failure)."""


@dataclass(frozen=True)
class DispatchResult:
    """The answer of one dispatch solve.

    Attributes
    ----------
    status : str
        ``"optimal"`` (within ``mip_gap``), ``"time_limit"`` (the best dispatch found
        when the time limit struck; ``mip_gap_achieved`` says how good) or
        ``"infeasible"`` (no dispatch exists; see ``reason``).
    reason : str
        Empty when a dispatch was found; otherwise, in words, the limit that binds.
    demand : float
        Station net flow asked for [kg/s].
    running : dict of str to bool
        Whether each unit runs.
    through_flow : dict of str to float
        Flow through each compressor [kg/s]; 0 when stopped.
    recycle : dict of str to float
        Flow each unit returns through its recycle valve [kg/s].
    net_flow : dict of str to float
        Flow each unit delivers, ``through_flow - recycle`` [kg/s].
    unit_cost : dict of str to float
        Each unit's cost on its piecewise-linear curve [cost unit].
    objective : float
        Sum of the unit costs [cost unit]; NaN when infeasible.
    formulation : str
        Which formulation each unit got.
    build_seconds : float
        Time spent building the Pyomo model for this answer [s] (0 on re-solves).
    solve_seconds : float
        Time spent in the solver interface, both passes [s].
    mip_gap_achieved : float
        Relative gap between the dispatch and HiGHS's proven bound [-]; NaN when
        infeasible.
    """

    status: str
    reason: str
    demand: float
    running: dict[str, bool]
    through_flow: dict[str, float]
    recycle: dict[str, float]
    net_flow: dict[str, float]
    unit_cost: dict[str, float]
    objective: float
    formulation: str
    build_seconds: float
    solve_seconds: float
    mip_gap_achieved: float

    def raise_if_infeasible(self) -> None:
        """Raise :class:`~trainopt.errors.InfeasibleError` with the reason if infeasible."""
        if self.status == "infeasible":
            raise InfeasibleError(self.reason)

    def to_dict(self) -> dict:
        """Plain dictionary of every field, for JSON."""
        return asdict(self)


def station_range_reason(curves: Sequence[UnitCurve], demand: float) -> str:
    """Say in words why a demand is outside the station's range, or return ``""``.

    Parameters
    ----------
    curves : sequence of UnitCurve
        The station's units.
    demand : float
        Station net flow [kg/s], zero or more.

    Returns
    -------
    str
        Empty if ``demand <= capacity``, where the capacity is the sum of the largest
        through-flows of the units not offline [kg/s]; otherwise a sentence giving the
        capacity, each unit's share of it with the limit that sets it (where the curve
        says), the shortfall and the units offline.
    """
    available = [c for c in curves if c.status is not UnitStatus.OFFLINE]
    offline = [c.name for c in curves if c.status is UnitStatus.OFFLINE]
    capacity = float(sum(c.flow_max for c in available))
    if demand <= capacity * (1.0 + 1e-12):
        return ""
    if not available:
        return (f"demand of {demand:.6g} kg/s cannot be met: every unit is offline "
                f"({', '.join(offline)}), so the station capacity is 0 kg/s; bring a unit "
                f"back into service")
    shares = ""
    if any(c.largest_flow_limit for c in available):
        shares = ": " + ", ".join(
            f"{c.name} {c.flow_max:.4g} kg/s"
            + (f" set by {c.largest_flow_limit}" if c.largest_flow_limit else "")
            for c in available)
    text = (f"demand of {demand:.6g} kg/s is above the station capacity of {capacity:.6g} "
            f"kg/s with the units available ({', '.join(c.name for c in available)}, each at "
            f"its largest through-flow{shares}), short by {demand - capacity:.4g} kg/s")
    if offline:
        text += f"; units offline: {', '.join(offline)}"
    return text
