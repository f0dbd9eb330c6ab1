"""A single-section unit at many through-flows against a duty, on the true model.

:func:`operate` solves, for every through-flow at once, the speed at which the fitted map
gives the head the duty needs, and evaluates everything that follows (efficiency, power,
driver, boundary flows). Where no tested speed gives that head the point is off the map
and :attr:`Operation.off_map_limit` names the limit that explains it:

- the flow lies right of the maximum-speed line's stonewall flow: ``stonewall``; left of
  the minimum-speed line's surge flow: ``control_line``;
- the head needed lies below the minimum-speed line at that flow: ``speed_min`` (or
  ``stonewall`` where that flow is already right of the minimum-speed line's stonewall);
- the head needed lies above the maximum-speed line: ``speed_max`` (or ``control_line``
  where the flow is left of the maximum-speed line's surge point);
- a speed gives the head but the point lies outside that speed line's tested flows:
  ``stonewall`` right of it, ``control_line`` left of it.

**Discharge throttle.** With ``throttle=True`` a unit whose head at a flow lies below what
it gives at its minimum speed runs at its minimum speed and compresses to a higher
pressure than the discharge header; a throttle valve at the unit's discharge drops the
excess. The unit then takes more power than the duty needs; the difference is reported as
``lost_power`` (shaft power at minimum speed less the shaft power of compressing the same
flow at the same efficiency to the header pressure only).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from trainopt.machines.section_operation import boundary_lines, bracketed_root
from trainopt.machines.train import Train
from trainopt.machines.train_operation import gas_table_for
from trainopt.physics.duty import Duty

SPEED_SCAN = 9
"""Speeds across the map's tested range scanned to bracket the speed a flow needs [-]."""

_EDGE = 1e-9
"""Relative slack [-] on the edges of the tested map, as in the map's own inverse."""

OFF_MAP_KEYS = ("", "control_line", "stonewall", "speed_min", "speed_max")
"""Codes of :attr:`Operation.off_map_limit` (index into this tuple)."""


@dataclass(frozen=True)
class Operation:
    """A single-section unit's operating points (arrays, one entry per through-flow).

    All fields are numpy arrays of the same shape. Flows are through the compressor
    (net flow plus recycle).

    Attributes
    ----------
    mass_flow : [kg/s]
    volume_flow : actual inlet volume flow [m³/s]
    speed : shaft speed of the train [1/s]; NaN off the map
    head : head on the map's basis [J/kg] (the unit's own, above the duty's when throttled)
    efficiency : efficiency on the map's basis [-]; NaN off the map
    discharge_temperature : at the compressor's discharge [K]
    gas_power : m (h2 - h1) [W]
    shaft_power : gas power plus mechanical losses [W]
    available_power : driver shaft power available at that speed and ambient [W]
    energy_input : driver energy input (fuel or electricity) [W]
    surge_flow, control_line_flow : at the same head, or on the same speed line where the
        surge line does not reach that head inside the tested speeds [m³/s]
    stonewall_flow : at the same head, or on the same speed line where the stonewall line
        does not reach that head inside the tested speeds [m³/s]
    off_map_limit : int codes into :data:`OFF_MAP_KEYS`: 0 on the map, else the limit that
        explains why no tested speed meets the duty at that flow [-]
    discharge_pressure : at the compressor's discharge [Pa] (the header's unless throttled)
    throttle_pressure_drop : across the discharge throttle valve [Pa]; 0 where unthrottled
    lost_power : shaft power spent on the throttled pressure [W]; 0 where unthrottled
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
    off_map_limit: np.ndarray
    discharge_pressure: np.ndarray
    throttle_pressure_drop: np.ndarray
    lost_power: np.ndarray

    def violations(self, train: Train) -> dict[str, np.ndarray]:
        """Boolean arrays, one per limit, True where the limit is broken.

        A point off the map is charged to the one limit of :attr:`off_map_limit`.
        """
        section = train.sections[0]
        q = self.volume_flow
        off = self.off_map_limit
        v = {
            "map": np.zeros(q.shape, bool),
            "control_line": (q < self.control_line_flow * (1 - 1e-9)) | (off == 1),
            "stonewall": (q > self.stonewall_flow * (1 + 1e-9)) | (off == 2),
            "speed_min": (self.speed < train.speed_min * (1 - 1e-9)) | (off == 3),
            "speed_max": (self.speed > train.speed_max * (1 + 1e-9)) | (off == 4),
            "power": self.shaft_power > self.available_power * (1 + 1e-9),
        }
        if section.max_discharge_temperature is not None:
            v["discharge_temperature"] = (self.discharge_temperature
                                          > section.max_discharge_temperature + 1e-9)
        return {k: np.asarray(x, bool) for k, x in v.items()}

    def margins(self, train: Train) -> dict[str, np.ndarray]:
        """Relative margin [-] to each limit (negative where broken; -1 where charged off-map).

        ``control_line``: ``Q / Q_scl - 1``; ``stonewall``: ``1 - Q / Q_sw``;
        ``speed_min``: ``N / N_min - 1``; ``speed_max``: ``1 - N / N_max``; ``power``:
        ``1 - P / P_available``; ``discharge_temperature``: ``1 - T2 / T_max``.
        """
        section = train.sections[0]
        q, n = self.volume_flow, self.speed
        with np.errstate(invalid="ignore", divide="ignore"):
            out = {"control_line": q / self.control_line_flow - 1.0,
                   "stonewall": 1.0 - q / self.stonewall_flow,
                   "speed_min": n / train.speed_min - 1.0,
                   "speed_max": 1.0 - n / train.speed_max,
                   "power": 1.0 - self.shaft_power / self.available_power}
            if section.max_discharge_temperature is not None:
                out["discharge_temperature"] = (1.0 - self.discharge_temperature
                                                / section.max_discharge_temperature)
        off = self.off_map_limit
        for code, key in enumerate(OFF_MAP_KEYS):
            if key:
                out[key] = np.where(off == code, -1.0, np.where(off > 0, np.inf, out[key]))
        return {k: np.where(np.isnan(v), np.inf, v) for k, v in out.items()}


def _section_speed(cmap, q: np.ndarray, duty: Duty) -> tuple[np.ndarray, np.ndarray]:
    """Section speed [1/s] meeting ``H_map(Q, N) = H_required(eta_map(Q, N))``, and codes.

    A scan of :data:`SPEED_SCAN` speeds over the map's tested range brackets the root,
    :func:`~trainopt.machines.section_operation.bracketed_root` finds it to 1e-9 of the
    head; the root is kept where the point lies on its speed line's tested flows. Returns
    the speed (NaN off the map) and the :data:`OFF_MAP_KEYS` code of each point.
    """
    scan = np.linspace(cmap.speed_min, cmap.speed_max, SPEED_SCAN)

    def gap(flow, n):
        eta = cmap.efficiency(flow, n, warn=False)
        return cmap.head(flow, n, warn=False) - duty.head(eta)

    g = gap(q[:, None], scan[None, :])
    rising = (g[:, :-1] <= 0) & (g[:, 1:] > 0)
    has = rising.any(axis=1)
    speed = np.full(q.shape, np.nan)
    if has.any():
        rows = np.flatnonzero(has)
        k = np.argmax(rising[rows], axis=1)
        q_rows = q[rows]
        speed[rows] = bracketed_root(lambda n: gap(q_rows, n), scan[k], scan[k + 1],
                                     g[rows, k], g[rows, k + 1],
                                     np.abs(g[rows, k]) + np.abs(duty.head(0.8)))
    n_safe = np.where(has, speed, cmap.speed_max)
    surge = cmap.surge_flow_at_speed(n_safe, warn=False)
    stonewall = cmap.stonewall_flow_at_speed(n_safe, warn=False)
    code = np.zeros(q.shape, int)
    code = np.where(has & (q > stonewall * (1 + _EDGE)), 2, code)
    code = np.where(has & (q < surge * (1 - _EDGE)), 1, code)
    low = ~has & (g[:, 0] > 0)
    high = ~has & ~low
    right_of_low = q > cmap.stonewall_flow_at_speed(cmap.speed_min, warn=False) * (1 + _EDGE)
    left_of_high = q < cmap.surge_flow_at_speed(cmap.speed_max, warn=False) * (1 - _EDGE)
    code = np.where(low, np.where(right_of_low, 2, 3), code)
    code = np.where(high, np.where(left_of_high, 1, 4), code)
    # right of every speed line's stonewall, or left of every surge point
    beyond = q > cmap.stonewall_flow_at_speed(cmap.speed_max, warn=False) * (1 + _EDGE)
    before = q < cmap.surge_flow_at_speed(cmap.speed_min, warn=False) * (1 - _EDGE)
    code = np.where(~has & beyond, 2, np.where(~has & before, 1, code))
    return np.where(code == 0, speed, np.nan), code


def _boundary_flows(cmap, head, speed_section):
    """Surge and stonewall flows [m³/s] at heads, else on the same speed line."""
    lines = boundary_lines(cmap)
    n = np.where(np.isfinite(speed_section), speed_section, cmap.speed_max)
    surge = lines.surge_flow(head)
    surge = np.where(np.isfinite(surge), surge, cmap.surge_flow_at_speed(n, warn=False))
    stonewall = lines.stonewall_flow(head)
    stonewall = np.where(np.isfinite(stonewall), stonewall,
                         cmap.stonewall_flow_at_speed(n, warn=False))
    return surge, stonewall


def operate(train: Train, duty: Duty, mass_flow, ambient_temperature, throttle: bool = False
            ) -> Operation:
    """Operate a single-section unit at through-flows against a duty (true model).

    Parameters
    ----------
    train : Train
        A single-section unit.
    duty : Duty
        Gas, suction state and discharge pressure.
    mass_flow : array_like
        Through-flows [kg/s].
    ambient_temperature : float or array_like
        [K], for the driver's available power.
    throttle : bool, optional
        Where the duty's head lies below what the unit gives at its minimum speed, run at
        the minimum speed and throttle the excess pressure at the discharge.

    Returns
    -------
    Operation
        Speed solving ``H_map(Q, N) = H_required(eta_map(Q, N))`` (vectorised: a speed scan
        and bracketed secant steps to 1e-9 of the head, no per-point root search), and
        everything that follows from it. Surge and stonewall flows at a head come from
        the map's boundary splines
        (:func:`~trainopt.machines.section_operation.boundary_lines`, 1e-7 relative).
    """
    section = train.sections[0]
    cmap = section.compressor_map
    m = np.atleast_1d(np.asarray(mass_flow, float))
    q = m / duty.suction.density
    n_section, code = _section_speed(cmap, q, duty)
    eta = cmap.efficiency(q, n_section, warn=False)
    on = np.isfinite(n_section)
    eta_head = np.where(on, eta, cmap.efficiency(q, cmap.speed_max, warn=False))
    head = duty.head(eta_head)
    work = duty.specific_work(eta)
    t_d = duty.discharge_temperature(eta)
    p_d = np.full(q.shape, duty.discharge_pressure)
    drop, lost_work = np.zeros(q.shape), np.zeros(q.shape)
    if throttle:
        floor = max(train.speed_min * section.speed_ratio, cmap.speed_min)
        slow = (code == 3) | (on & (n_section < floor))
        if slow.any():
            n_section, eta, head, work, t_d, p_d, drop, lost_work, code = _throttled(
                cmap, duty, q, floor, slow, n_section, eta, head, work, t_d, p_d, drop,
                lost_work, code)
    speed = n_section / section.speed_ratio
    gas_power = m * work
    shaft = gas_power * (1.0 + train.mechanical_loss)
    driver = train.driver
    available = np.asarray(driver.available_shaft_power(speed, ambient_temperature), float)
    if train.max_power is not None:
        available = np.minimum(available, train.max_power)
    energy = np.asarray(driver.energy_input(shaft, speed, ambient_temperature), float)
    surge, stonewall = _boundary_flows(cmap, head, n_section)
    return Operation(
        mass_flow=m, volume_flow=q, speed=speed, head=head, efficiency=eta,
        discharge_temperature=t_d, gas_power=gas_power, shaft_power=shaft,
        available_power=available * np.ones_like(m), energy_input=energy,
        surge_flow=surge, control_line_flow=section.control_line_flow(head, surge),
        stonewall_flow=stonewall, off_map_limit=code, discharge_pressure=p_d,
        throttle_pressure_drop=drop,
        lost_power=m * lost_work * (1.0 + train.mechanical_loss),
    )


def _throttled(cmap, duty: Duty, q, floor: float, slow, n_section, eta, head, work, t_d, p_d,
               drop, lost_work, code):
    """Put the points ``slow`` at the minimum section speed ``floor`` with a discharge throttle.

    The compressor's discharge follows from its own head and efficiency on the minimum
    speed line (:meth:`~trainopt.physics.gas_table.GasTable.compress_to_head`, a gas table
    spanning the suction pressure to twice the larger of suction and discharge pressure);
    the valve drops it to the header. Returns the updated arrays.
    """
    eta_s = cmap.efficiency(q[slow], floor, warn=False)
    head_s = cmap.head(q[slow], floor, warn=False)
    t_s = duty.suction.temperature
    p_s = duty.suction.pressure
    table = gas_table_for(duty.gas, (p_s, max(duty.discharge_pressure, 2.0 * p_s)), [t_s])
    with np.errstate(invalid="ignore"):
        c = table.compress_to_head(p_s, t_s, np.maximum(head_s, 0.0), eta_s, duty.basis)
    ok = np.isfinite(c.discharge_pressure) & (c.discharge_pressure >= duty.discharge_pressure)
    n_section, eta, head, work, t_d, p_d, drop, lost_work, code = (
        np.array(a, dtype=a.dtype if a is code else float) for a in
        (n_section, eta, head, work, t_d, p_d, drop, lost_work, code))
    idx = np.flatnonzero(slow)[ok]
    n_section[idx] = floor
    eta[idx], head[idx] = eta_s[ok], head_s[ok]
    work[idx] = c.specific_work[ok]
    t_d[idx], p_d[idx] = c.discharge_temperature[ok], c.discharge_pressure[ok]
    drop[idx] = c.discharge_pressure[ok] - duty.discharge_pressure
    lost_work[idx] = c.specific_work[ok] - duty.specific_work(eta_s[ok])
    code[idx] = 0
    return n_section, eta, head, work, t_d, p_d, drop, lost_work, code
