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

from trainopt.machines.train import Train
from trainopt.physics.duty import Duty

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
class Operation:
    """A single-section unit's operating points (arrays, one entry per through-flow).

    All fields are numpy arrays of the same shape. Flows are through the compressor
    (net flow plus recycle).

    Attributes
    ----------
    mass_flow : [kg/s]
    volume_flow : actual inlet volume flow [m³/s]
    speed : shaft speed of the train [1/s]
    head : head on the map's basis [J/kg]
    efficiency : efficiency on the map's basis [-]
    discharge_temperature : [K]
    gas_power : m (h2 - h1) [W]
    shaft_power : gas power plus mechanical losses [W]
    available_power : driver shaft power available at that speed and ambient [W]
    energy_input : driver energy input (fuel or electricity) [W]
    surge_flow, control_line_flow : at the same head [m³/s]
    stonewall_flow : at the same head, or on the same speed line where the stonewall line
        does not reach that head inside the tested speeds [m³/s]
    """

    mass_flow: np.ndarray
    volume_flow: np.ndarray
    speed: np.ndarray
    head: np.ndarray
    efficiency: np.ndarray
    discharge_temperature: np.ndarray
    gas_power: np.ndarray
    shaft_power: np.ndarray
    available_power: np.ndarray
    energy_input: np.ndarray
    surge_flow: np.ndarray
    control_line_flow: np.ndarray
    stonewall_flow: np.ndarray

    def violations(self, train: Train) -> dict[str, np.ndarray]:
        """Boolean arrays, one per limit, True where the limit is broken.

        Where no speed in the tested map gives the required head at a flow, the point is
        charged to the limit that explains it: right of the stonewall flow at the highest
        tested speed (stonewall), left of the surge flow at the lowest (surge), else the
        head is above the map at that flow (maximum speed).
        """
        section = train.sections[0]
        cmap = section.compressor_map
        off_map = ~np.isfinite(self.speed) | ~np.isfinite(self.efficiency)
        q = self.volume_flow
        beyond_stonewall = q > cmap.stonewall_flow_at_speed(cmap.speed_max, warn=False)
        below_surge = q < cmap.surge_flow_at_speed(cmap.speed_min, warn=False)
        v = {
            "map": np.zeros_like(off_map),
            "control_line": (q < self.control_line_flow * (1 - 1e-9))
            | (off_map & below_surge),
            "stonewall": (q > self.stonewall_flow * (1 + 1e-9)) | (off_map & beyond_stonewall),
            "speed_min": self.speed < train.speed_min * (1 - 1e-9),
            "speed_max": (self.speed > train.speed_max * (1 + 1e-9))
            | (off_map & ~beyond_stonewall & ~below_surge),
            "power": self.shaft_power > self.available_power * (1 + 1e-9),
        }
        if section.max_discharge_temperature is not None:
            v["discharge_temperature"] = (self.discharge_temperature
                                          > section.max_discharge_temperature + 1e-9)
        return {k: np.asarray(x, bool) for k, x in v.items()}


def operate(train: Train, duty: Duty, mass_flow, ambient_temperature: float) -> Operation:
    """Operate a single-section unit at through-flows against a duty (true model).

    Parameters
    ----------
    train : Train
        A single-section unit.
    duty : Duty
        Gas, suction state and discharge pressure.
    mass_flow : array_like
        Through-flows [kg/s].
    ambient_temperature : float
        [K], for the driver's available power.

    Returns
    -------
    Operation
        Speed solving head(Q, N) = H_required(eta(Q, N)) by fixed-point iteration (the
        required head changes by well under 1 % across efficiencies, so 5 passes reach
        1e-9 relative), and everything that follows from it.
    """
    section = train.sections[0]
    cmap = section.compressor_map
    m = np.atleast_1d(np.asarray(mass_flow, float))
    q = m / duty.suction.density
    eta = np.full_like(q, 0.8)
    for _ in range(6):
        head = duty.head(eta)
        n_section = cmap.speed_for(q, head)
        new = np.where(np.isfinite(n_section), cmap.efficiency(q, n_section, warn=False), np.nan)
        # keep the last efficiency found where this pass fell off the map: falling back to
        # a fixed guess made points just right of the surge line alternate between passes
        eta = np.where(np.isfinite(new), new, eta)
    head = duty.head(eta)
    n_section = cmap.speed_for(q, head)
    eta = cmap.efficiency(q, n_section, warn=False)
    speed = n_section / section.speed_ratio
    work = duty.specific_work(eta)
    gas_power = m * work
    shaft = gas_power * (1.0 + train.mechanical_loss)
    driver = train.driver
    available = np.asarray(driver.available_shaft_power(speed, ambient_temperature), float)
    if train.max_power is not None:
        available = np.minimum(available, train.max_power)
    energy = np.asarray(driver.energy_input(shaft, speed, ambient_temperature), float)
    line = section.control_line(head, extend=True)  # unit's least-flow rule, docs/maps.md
    surge = line.surge_flow
    stonewall = cmap.stonewall_flow_at_head(head)
    stonewall = np.where(np.isfinite(stonewall), stonewall,
                         cmap.stonewall_flow_at_speed(n_section, warn=False))
    return Operation(
        mass_flow=m, volume_flow=q, speed=speed, head=head, efficiency=eta,
        discharge_temperature=duty.discharge_temperature(eta), gas_power=gas_power,
        shaft_power=shaft, available_power=available * np.ones_like(m), energy_input=energy,
        surge_flow=surge, control_line_flow=line.flow,
        stonewall_flow=stonewall,
    )


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


def _first_violation(viol: dict[str, np.ndarray], index: int) -> str:
    order = ["map", "control_line", "speed_min", "speed_max", "stonewall", "power",
             "discharge_temperature"]
    for key in order:
        if key in viol and viol[key][index]:
            return key
    return "map"


def _refine_end(train, duty, ambient, inside: float, outside: float) -> tuple[float, str]:
    """Narrow the edge between a feasible and an infeasible flow; return the last feasible.

    Three vectorised passes of 33 points each shrink the interval by 32^3 (about 3e4), to
    well under 1e-6 of the flow for the map ranges seen in practice.
    """
    reason = "map"
    for _ in range(3):
        m = np.linspace(inside, outside, 33)
        op = operate(train, duty, m, ambient)
        viol = op.violations(train)
        bad = np.zeros(len(m), bool)
        for v in viol.values():
            bad |= v
        first_bad = int(np.argmax(bad[1:])) + 1 if bad[1:].any() else len(m) - 1
        reason = _first_violation(viol, first_bad)
        inside, outside = m[first_bad - 1], m[first_bad]
    return float(inside), reason


def _choose_breakpoints(x: np.ndarray, y: np.ndarray, tolerance: float) -> np.ndarray:
    """Greedy breakpoints on a sampled curve: indices so that chords stay within tolerance."""
    chosen, start = [0], 0
    while start < len(x) - 1:
        end = start + 1
        while end + 1 < len(x):
            trial = end + 1
            chord = np.interp(x[start:trial + 1], [x[start], x[trial]], [y[start], y[trial]])
            if np.max(np.abs(chord - y[start:trial + 1])) > tolerance:
                break
            end = trial
        chosen.append(end)
        start = end
    return np.array(chosen)


def reduce_unit(train: Train, duty: Duty, ambient_temperature: float,
                tolerance: float = DEFAULT_TOLERANCE) -> LeastPowerCurve:
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
    q_lo = float(cmap.surge_flow_at_head(head0))
    q_hi = float(cmap.stonewall_flow_at_head(head0))
    if not (np.isfinite(q_lo) and np.isfinite(q_hi)):
        q_lo, q_hi = _flow_span(cmap)
    q = np.linspace(0.9 * q_lo, 1.05 * q_hi, FINE_POINTS)
    op = operate(train, duty, q * rho, ambient_temperature)
    viol = op.violations(train)
    bad = np.zeros(len(q), bool)
    for v in viol.values():
        bad |= v
    ok = np.flatnonzero(~bad)
    if ok.size == 0:
        return _infeasible(train, duty, op, viol, ambient_temperature)
    runs = np.split(ok, np.flatnonzero(np.diff(ok) > 1) + 1)
    run = max(runs, key=len)
    i0, i1 = run[0], run[-1]
    m = op.mass_flow
    low, low_reason = (m[i0], _first_violation(viol, i0 - 1)) if i0 == 0 else _refine_end(
        train, duty, ambient_temperature, m[i0], m[i0 - 1])
    high, high_reason = (m[i1], "map") if i1 == len(q) - 1 else _refine_end(
        train, duty, ambient_temperature, m[i1], m[i1 + 1])
    fine = np.unique(np.concatenate([[low], m[(m > low) & (m < high)], [high]]))
    fop = operate(train, duty, fine, ambient_temperature)
    scale = float(np.max(fop.shaft_power))
    idx = _choose_breakpoints(fine, fop.shaft_power, tolerance * scale)
    x, y = fine[idx], fop.shaft_power[idx]
    error = float(np.max(np.abs(np.interp(fine, x, y) - fop.shaft_power)))
    slopes = np.diff(y) / np.diff(x)
    convex = bool(np.all(np.diff(slopes) >= -1e-9 * scale))
    return LeastPowerCurve(train.name, x, y, fop.energy_input[idx], low_reason, high_reason,
                           convex, error, sample_flow=fine, sample_shaft_power=fop.shaft_power,
                           sample_energy_input=fop.energy_input)


def _flow_span(cmap) -> tuple[float, float]:
    speeds = np.linspace(cmap.speed_min, cmap.speed_max, 5)
    lo = np.nanmin(cmap.surge_flow_at_speed(speeds))
    hi = np.nanmax(cmap.stonewall_flow_at_speed(speeds))
    return float(lo), float(hi)


def _infeasible(train: Train, duty: Duty, op: Operation, viol, ambient: float
                ) -> LeastPowerCurve:
    """A curve marking the unit unable to meet the duty, with the reason in words."""
    head = float(duty.head(0.8))
    cmap = train.sections[0].compressor_map
    top = float(np.nanmax(cmap.head(cmap.surge_flow_at_speed(cmap.speed_max), cmap.speed_max)))
    if head > top:
        reason = (f"the required head {head / 1e3:.1f} kJ/kg is above the map's highest head "
                  f"{top / 1e3:.1f} kJ/kg at maximum speed")
    else:
        counts = {k: int(v.sum()) for k, v in viol.items()}
        worst = max(counts, key=counts.get)
        reason = f"no through-flow meets every limit; the {LIMIT_NAMES[worst]} binds first"
        if worst == "power":
            others = np.zeros(len(op.mass_flow), bool)
            for key, v in viol.items():
                if key != "power":
                    others |= v
            gap = np.where(others, np.nan, op.shaft_power - op.available_power)
            short = np.nanmin(gap) if np.isfinite(gap).any() else np.nanmin(
                op.shaft_power - op.available_power)
            # The grid's first point right of the surge control line lies a little past it:
            # evaluate the control-line flow itself, where the power need is least.
            m_scl = np.nanmin(op.control_line_flow) * duty.suction.density
            edge = operate(train, duty, m_scl, ambient)
            edge_viol = edge.violations(train)
            if not any(v[0] for k, v in edge_viol.items() if k not in ("power", "control_line")):
                short = min(short, float(edge.shaft_power[0] - edge.available_power[0]))
            if short > 0:
                reason += f" (short of power by at least {short / 1e3:.0f} kW)"
            else:
                power_ok = ~viol["power"]
                rest = {k: int((v & power_ok).sum()) for k, v in viol.items() if k != "power"}
                other = max(rest, key=rest.get)
                reason = (f"no through-flow meets every limit; where the driver has the power, "
                          f"the {LIMIT_NAMES[other]} is broken")
    empty = np.array([])
    return LeastPowerCurve(train.name, empty, empty, empty, worst_or(viol), "", True, 0.0,
                           False, reason)


def worst_or(viol) -> str:
    """Key of the limit broken at the most sampled points."""
    return max(viol, key=lambda k: int(viol[k].sum()))
