"""Reduce a unit at today's conditions to a least-power curve of its through-flow.

For a single-section unit between fixed headers the head is set by the pressures (and,
weakly, by the efficiency), so each through-flow has one speed. This module evaluates the
true model (gas, map, driver, limits) along the through-flow, finds the feasible interval
and which limit sets each end, and places breakpoints so that the piecewise-linear curve
stays within a stated error of the true one.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from trainopt.dispatch.unit_operation import Operation, operate
from trainopt.machines.section_operation import boundary_lines
from trainopt.machines.train import Train
from trainopt.physics.duty import Duty

__all__ = ["DEFAULT_TOLERANCE", "FINE_POINTS", "LIMIT_NAMES", "LeastPowerCurve", "Operation",
           "operate", "reduce_unit"]

FINE_POINTS = 241
"""Points on which the true curve is sampled before breakpoints are chosen [-]."""

DEFAULT_TOLERANCE = 2e-4
"""Breakpoint placement tolerance as a fraction of the unit's largest power [-]."""

LIMIT_NAMES = {
    "control_line": "surge control line",
    "surge": "surge line",
    "stonewall": "stonewall",
    "speed_min": "minimum speed",
    "speed_max": "maximum speed",
    "power": "driver power",
    "discharge_temperature": "discharge-temperature limit",
    "map": "edge of the tested map",
}


@dataclass(frozen=True)
class LeastPowerCurve:
    """A unit's least-power curve at today's conditions, ready for the station model.

    Attributes
    ----------
    name : str
    mass_flow : numpy.ndarray
        Breakpoints of through-flow [kg/s]; first = least without recycle, last = largest.
    shaft_power, energy_input : numpy.ndarray
        At the breakpoints [W].
    low_limit, high_limit : str
        Key of the limit setting each end (see :data:`LIMIT_NAMES`).
    convex : bool
        Whether shaft power is convex in flow on the breakpoints.
    error_bound : float
        Largest gap between the piecewise-linear curve and the true one on the fine
        sample [W].
    feasible : bool
        False where no through-flow meets every limit; ``reason`` says why.
    reason : str
    sample_flow, sample_shaft_power, sample_energy_input : numpy.ndarray
        The fine sample of the true curve [kg/s], [W], [W] the breakpoints were chosen
        from (about 200 points), used to refine a split between breakpoints.
    low_section, high_section : str
        For a series train, the section (or ``driver``) whose limit sets each end; empty
        for a single-section unit.
    cost_rate, sample_cost_rate : numpy.ndarray or None
        Energy cost [currency/s] at the breakpoints and on the fine sample, for trains
        whose sections have drivers of different prices; None otherwise.
    """

    name: str
    mass_flow: np.ndarray
    shaft_power: np.ndarray
    energy_input: np.ndarray
    low_limit: str
    high_limit: str
    convex: bool
    error_bound: float
    feasible: bool = True
    reason: str = ""
    sample_flow: np.ndarray = field(default_factory=lambda: np.array([]))
    sample_shaft_power: np.ndarray = field(default_factory=lambda: np.array([]))
    sample_energy_input: np.ndarray = field(default_factory=lambda: np.array([]))
    low_section: str = ""
    high_section: str = ""
    cost_rate: np.ndarray | None = None
    sample_cost_rate: np.ndarray | None = None

    @property
    def min_flow(self) -> float:
        """Least through-flow without recycle [kg/s]."""
        return float(self.mass_flow[0])

    @property
    def max_flow(self) -> float:
        """Largest through-flow [kg/s]."""
        return float(self.mass_flow[-1])


def _binding(op: Operation, train: Train, viol: dict[str, np.ndarray], index: int,
             margins: dict[str, np.ndarray] | None = None) -> str:
    """The limit that binds at a point: of those broken there, the one broken furthest.

    Off the map that is the limit :attr:`Operation.off_map_limit` names; on it, the most
    negative relative margin (just past an end of the feasible range, the limit crossed
    first as the flow moves out).
    """
    broken = [k for k, v in viol.items() if k != "map" and v[index]]
    if not broken:
        return "map"
    margins = op.margins(train) if margins is None else margins
    return min(broken, key=lambda k: float(margins[k][index]))


def _bad(viol: dict[str, np.ndarray]) -> np.ndarray:
    bad = np.zeros(next(iter(viol.values())).shape, bool)
    for v in viol.values():
        bad |= v
    return bad


def _refine_ends(train, duty, ambient, brackets, throttle: bool) -> list[tuple[float, str]]:
    """Narrow edges between feasible and infeasible flows; return each last feasible flow.

    ``brackets`` holds ``(inside, outside)`` pairs. Three vectorised passes of 33 points
    per edge (both edges in one evaluation) shrink each interval by 32^3 (about 3e4), to
    well under 1e-6 of the flow for the map ranges seen in practice.
    """
    brackets = [list(b) for b in brackets]
    reasons = ["map"] * len(brackets)
    for _ in range(3):
        m = np.concatenate([np.linspace(a, b, 33) for a, b in brackets])
        op = operate(train, duty, m, ambient, throttle)
        viol = op.violations(train)
        bad = _bad(viol)
        margins = op.margins(train)
        for j in range(len(brackets)):
            part = slice(33 * j, 33 * (j + 1))
            b = bad[part]
            first_bad = int(np.argmax(b[1:])) + 1 if b[1:].any() else 32
            reasons[j] = _binding(op, train, viol, 33 * j + first_bad, margins)
            brackets[j] = [m[part][first_bad - 1], m[part][first_bad]]
    return [(float(a), r) for (a, _), r in zip(brackets, reasons, strict=True)]


def _choose_breakpoints(x: np.ndarray, y: np.ndarray, tolerance: float) -> np.ndarray:
    """Greedy breakpoints on a sampled curve: indices so that chords stay within tolerance.

    From each breakpoint the chord is extended one sample at a time until it first departs
    from a sample it spans by more than ``tolerance``; the last chord that held ends the
    segment. The chords from one start are all tried at once (numpy), with the same
    arithmetic as :func:`numpy.interp`.
    """
    chosen, start, n = [0], 0, len(x)
    while start < n - 1:
        xs, ys = x[start:], y[start:]
        dx, dy = xs - xs[0], ys - ys[0]
        # error[j, i]: chord from the start to sample j, at sample i (i <= j)
        with np.errstate(divide="ignore", invalid="ignore"):
            chord = ys[0] + dy[:, None] * (dx[None, :] / dx[:, None])
        error = np.abs(chord - ys[None, :])
        error[np.triu_indices(len(xs), 1)] = 0.0
        error[:, 0] = 0.0
        worst = error.max(axis=1)
        worst[:2] = 0.0  # the first chord (to the next sample) is always kept
        failing = np.flatnonzero(worst > tolerance)
        end = start + (failing[0] - 1 if failing.size else len(xs) - 1)
        chosen.append(end)
        start = end
    return np.array(chosen)


def reduce_unit(train: Train, duty: Duty, ambient_temperature: float,
                tolerance: float = DEFAULT_TOLERANCE, throttle: bool = False) -> LeastPowerCurve:
    """Least shaft power against through-flow for a single-section unit at today's duty.

    Parameters
    ----------
    train : Train
        A single-section unit.
    duty : Duty
        Gas, suction state and discharge pressure.
    ambient_temperature : float
        [K].
    tolerance : float, optional
        Breakpoint tolerance as a fraction of the largest shaft power [-].
    throttle : bool, optional
        Let the unit run at its minimum speed with a discharge throttle where the duty's
        head lies below its minimum-speed line (see :func:`operate`).

    Returns
    -------
    LeastPowerCurve
        Breakpoints from the surge control line (or minimum speed, or another limit) to
        the first of stonewall, maximum speed, driver power and discharge temperature.

    Notes
    -----
    The true curve is sampled on :data:`FINE_POINTS` flows across the map's range at the
    required head, its feasible interval is refined by bisection at both ends, and
    breakpoints are chosen greedily so that every chord stays within ``tolerance`` times
    the largest power of the fine sample; the bound is reported in W.
    """
    section = train.sections[0]
    cmap = section.compressor_map
    head0 = float(duty.head(0.8))
    rho = duty.suction.density
    lines = boundary_lines(cmap)
    q_lo = float(lines.surge_flow(head0))
    q_hi = float(lines.stonewall_flow(head0))
    if throttle or not (np.isfinite(q_lo) and np.isfinite(q_hi)):
        span = _flow_span(cmap)
        q_lo = min(q_lo, span[0]) if np.isfinite(q_lo) else span[0]
        q_hi = max(q_hi, span[1]) if np.isfinite(q_hi) else span[1]
    q = np.linspace(0.9 * q_lo, 1.05 * q_hi, FINE_POINTS)
    op = operate(train, duty, q * rho, ambient_temperature, throttle)
    viol = op.violations(train)
    ok = np.flatnonzero(~_bad(viol))
    if ok.size == 0:
        return _infeasible(train, duty, op, viol, ambient_temperature, throttle)
    runs = np.split(ok, np.flatnonzero(np.diff(ok) > 1) + 1)
    run = max(runs, key=len)
    i0, i1 = run[0], run[-1]
    m = op.mass_flow
    brackets, ends = [], [(m[i0], _binding(op, train, viol, i0 - 1) if i0 > 0 else "map"),
                          (m[i1], "map")]
    if i0 > 0:
        brackets.append((m[i0], m[i0 - 1]))
    if i1 < len(q) - 1:
        brackets.append((m[i1], m[i1 + 1]))
    refined = _refine_ends(train, duty, ambient_temperature, brackets, throttle)
    if i0 > 0:
        ends[0] = refined.pop(0)
    if i1 < len(q) - 1:
        ends[1] = refined.pop(0)
    (low, low_reason), (high, high_reason) = ends
    inner = (m > low) & (m < high)
    edge = operate(train, duty, np.array([low, high]), ambient_temperature, throttle)
    fine = np.concatenate([[low], m[inner], [high]])
    shaft = np.concatenate([edge.shaft_power[:1], op.shaft_power[inner], edge.shaft_power[1:]])
    energy = np.concatenate([edge.energy_input[:1], op.energy_input[inner],
                             edge.energy_input[1:]])
    fine, keep = np.unique(fine, return_index=True)
    shaft, energy = shaft[keep], energy[keep]
    scale = float(np.max(shaft))
    idx = _choose_breakpoints(fine, shaft, tolerance * scale)
    x, y = fine[idx], shaft[idx]
    error = float(np.max(np.abs(np.interp(fine, x, y) - shaft)))
    slopes = np.diff(y) / np.diff(x)
    convex = bool(np.all(np.diff(slopes) >= -1e-9 * scale))
    return LeastPowerCurve(train.name, x, y, energy[idx], low_reason, high_reason,
                           convex, error, sample_flow=fine, sample_shaft_power=shaft,
                           sample_energy_input=energy)


def _flow_span(cmap) -> tuple[float, float]:
    speeds = np.linspace(cmap.speed_min, cmap.speed_max, 5)
    lo = np.nanmin(cmap.surge_flow_at_speed(speeds, warn=False))
    hi = np.nanmax(cmap.stonewall_flow_at_speed(speeds, warn=False))
    return float(lo), float(hi)


def _infeasible(train: Train, duty: Duty, op: Operation, viol, ambient: float,
                throttle: bool = False) -> LeastPowerCurve:
    """A curve marking the unit unable to meet the duty, with the reason in words."""
    head = float(duty.head(0.8))
    section = train.sections[0]
    cmap = section.compressor_map
    top = float(np.nanmax(cmap.head(cmap.surge_flow_at_speed(cmap.speed_max, warn=False),
                                    cmap.speed_max, warn=False)))
    margins = op.margins(train)
    binding = [_binding(op, train, viol, i, margins) for i in range(op.mass_flow.size)]
    counts = {k: binding.count(k) for k in dict.fromkeys(binding)}
    worst = max(counts, key=counts.get)
    if head > top:
        reason = (f"the required head {head / 1e3:.1f} kJ/kg is above the map's highest head "
                  f"{top / 1e3:.1f} kJ/kg at maximum speed")
        worst = "speed_max"
    elif worst in ("speed_min", "stonewall") and _below_minimum_speed(train, duty):
        floor = max(train.speed_min * section.speed_ratio, cmap.speed_min)
        low_head = float(cmap.head(cmap.stonewall_flow_at_speed(floor, warn=False), floor,
                                   warn=False))
        reason = (f"the required head {head / 1e3:.1f} kJ/kg is below the head of the "
                  f"minimum-speed line ({floor / section.speed_ratio * 60:.0f} rpm) at every "
                  f"flow (its least, at its stonewall flow, is {low_head / 1e3:.1f} kJ/kg)")
        worst = "speed_min"
        if not throttle:
            reason += "; a discharge throttle would let it run (case option throttle: allowed)"
    else:
        reason = f"no through-flow meets every limit; the {LIMIT_NAMES[worst]} binds first"
        if worst == "power":
            reason = _power_reason(train, duty, op, viol, ambient, throttle, reason)
    empty = np.array([])
    return LeastPowerCurve(train.name, empty, empty, empty, worst, "", True, 0.0,
                           False, reason)


def _below_minimum_speed(train: Train, duty: Duty) -> bool:
    """Whether the duty's head lies below the minimum-speed line at its stonewall point."""
    section = train.sections[0]
    cmap = section.compressor_map
    floor = max(train.speed_min * section.speed_ratio, cmap.speed_min)
    q_sw = cmap.stonewall_flow_at_speed(floor, warn=False)
    eta = cmap.efficiency(q_sw, floor, warn=False)
    return bool(cmap.head(q_sw, floor, warn=False) > duty.head(eta))


def _power_reason(train, duty, op, viol, ambient, throttle, reason) -> str:
    """Say by how much the driver is short of power, or what breaks where it is not."""
    others = np.zeros(len(op.mass_flow), bool)
    for key, v in viol.items():
        if key != "power":
            others |= v
    gap = np.where(others, np.nan, op.shaft_power - op.available_power)
    short = np.nanmin(gap) if np.isfinite(gap).any() else np.inf
    # The grid's first point right of the surge control line lies a little past it:
    # evaluate the control-line flow itself, where the power need is least.
    scl = op.control_line_flow[np.isfinite(op.control_line_flow) & ~others]
    if scl.size:
        edge = operate(train, duty, scl.min() * duty.suction.density, ambient, throttle)
        edge_viol = edge.violations(train)
        if not any(v[0] for k, v in edge_viol.items() if k not in ("power", "control_line")):
            short = min(short, float(edge.shaft_power[0] - edge.available_power[0]))
    if np.isfinite(short) and short > 0:
        return reason + f" (short of power by at least {short / 1e3:.0f} kW)"
    power_ok = ~viol["power"]
    rest = {k: int((v & power_ok).sum()) for k, v in viol.items() if k not in ("power", "map")}
    other = max(rest, key=rest.get)
    return (f"no through-flow meets every limit; where the driver has the power, "
            f"the {LIMIT_NAMES[other]} is broken")


def worst_or(viol) -> str:
    """Key of the limit broken at the most sampled points."""
    return max(viol, key=lambda k: int(viol[k].sum()))
