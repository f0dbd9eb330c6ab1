"""One compressor section at many operating points at once, on a gas table.

The building block of series trains (:mod:`trainopt.dispatch.series_reduction`) and shared headers
(:mod:`trainopt.station.header`). A section is met in one of two ways:

- **at a speed** (:func:`section_at_speed`): the flow and speed fix head and efficiency on
  the map, and the gas table gives the discharge pressure they reach (a section on a
  shared shaft);
- **to a pressure** (:func:`section_to_pressure`): the suction and discharge pressures fix
  the head the map must give, and the speed is solved for (a section on its own driver).

Either way it returns a :class:`SectionPoints` of arrays, with the margins of
:func:`section_margins`: the surge control line and stonewall at the same head, the
tested speed range and the discharge-temperature limit.

Surge and stonewall flows at a head are read from cubic splines of the map's boundary
lines over its tested speeds (97 speeds; they agree with
:meth:`CompressorMap.surge_flow_at_head` to better than 1e-7 relative, see
``tests/dispatch/test_series_reduction.py``), which is
about a thousand times faster than the map's own
root search.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.interpolate import CubicSpline

from trainopt.machines.maps.compressor_map import _solve_monotone
from trainopt.machines.train import Section
from trainopt.physics.compression import HeadBasis
from trainopt.physics.gas_table import GasTable

EFFICIENCY_RANGE = (0.45, 1.0)
"""Efficiencies [-] over which the required polytropic head is interpolated; below it
the head at 0.45 is used (it changes by about 0.1 % there, at points deep in stonewall)."""

_INVERSE_NODES = (0.5 * (1.0 / EFFICIENCY_RANGE[0] + 1.0)
                  - 0.5 * (1.0 / EFFICIENCY_RANGE[0] - 1.0)
                  * np.cos(np.pi * (np.arange(6) + 0.5) / 6))
EFFICIENCY_NODES = 1.0 / _INVERSE_NODES
"""Efficiencies [-] where the required head is computed: Chebyshev nodes in 1/eta."""

_VANDERMONDE_INVERSE = np.linalg.inv(np.vander(_INVERSE_NODES, increasing=True))
_BOUNDARY_SPEEDS = 97


def section_basis(section: Section) -> HeadBasis:
    """The head basis of a section's map."""
    basis = section.compressor_map.basis
    return HeadBasis(getattr(basis, "value", basis))


@dataclass(frozen=True, eq=False)
class BoundaryLines:
    """Surge and stonewall flow [m³/s] against head [J/kg] of one map (splines)."""

    surge: CubicSpline
    stonewall: CubicSpline

    def surge_flow(self, head) -> np.ndarray:
        """Surge flow [m³/s] at head [J/kg]; NaN outside the tested speeds' surge heads."""
        return self.surge(np.asarray(head, float))

    def stonewall_flow(self, head) -> np.ndarray:
        """Stonewall flow [m³/s] at head [J/kg]; NaN outside the tested speeds."""
        return self.stonewall(np.asarray(head, float))


@lru_cache(maxsize=64)
def boundary_lines(compressor_map) -> BoundaryLines:
    """Spline the map's surge and stonewall lines as flow against head.

    Parameters
    ----------
    compressor_map : CompressorMap

    Returns
    -------
    BoundaryLines
        Not-a-knot cubic splines through 97 points of each line across the tested speeds;
        the boundary heads rise with speed (checked when the map is built), so flow is a
        function of head.
    """
    cmap = compressor_map
    speeds = np.linspace(cmap.speed_min, cmap.speed_max, _BOUNDARY_SPEEDS)
    lines = []
    for flow in (cmap.surge_flow_at_speed(speeds, warn=False),
                 cmap.stonewall_flow_at_speed(speeds, warn=False)):
        head = cmap.head(flow, speeds, warn=False)
        lines.append(CubicSpline(head, flow, extrapolate=False))
    return BoundaryLines(*lines)


@dataclass(frozen=True)
class SectionPoints:
    """A section's operating points (numpy arrays of one broadcast shape).

    Attributes
    ----------
    suction_pressure, discharge_pressure : [Pa]
    suction_temperature, discharge_temperature : [K]
    suction_density : [kg/m³]
    mass_flow : through-flow [kg/s]
    volume_flow : actual inlet volume flow [m³/s]
    speed : the section's own speed [1/s]
    head, efficiency : on the map's basis [J/kg], [-]
    specific_work : actual enthalpy rise h2 - h1 [J/kg]
    surge_flow, control_line_flow, stonewall_flow : at the same head [m³/s] (stonewall at
        the same speed where the head lies outside the tested stonewall heads)
    speed_side : -1 where the duty needs less than the lowest tested speed, +1 where it
        needs more than the highest, 0 otherwise [-]
    """

    suction_pressure: np.ndarray
    suction_temperature: np.ndarray
    suction_density: np.ndarray
    mass_flow: np.ndarray
    volume_flow: np.ndarray
    speed: np.ndarray
    head: np.ndarray
    efficiency: np.ndarray
    discharge_pressure: np.ndarray
    discharge_temperature: np.ndarray
    specific_work: np.ndarray
    surge_flow: np.ndarray
    control_line_flow: np.ndarray
    stonewall_flow: np.ndarray
    speed_side: np.ndarray

    @property
    def gas_power(self) -> np.ndarray:
        """Gas power m (h2 - h1) [W]."""
        return self.mass_flow * self.specific_work


def _points(section: Section, p_s, t_s, rho, m, q, speed, head, eta, p_d, t_d, work,
            side) -> SectionPoints:
    lines = boundary_lines(section.compressor_map)
    cmap = section.compressor_map
    n_map = np.where(np.isfinite(speed), speed, cmap.speed_max)
    surge = lines.surge_flow(head)
    surge = np.where(np.isfinite(surge), surge, cmap.surge_flow_at_speed(n_map, warn=False))
    stonewall = lines.stonewall_flow(head)
    stonewall = np.where(np.isfinite(stonewall), stonewall,
                         cmap.stonewall_flow_at_speed(n_map, warn=False))
    shape = np.broadcast_shapes(*(np.shape(a) for a in (p_s, t_s, m, q, speed, head, p_d)))

    def full(a):
        return np.broadcast_to(np.asarray(a, float), shape)

    return SectionPoints(
        full(p_s), full(t_s), full(rho), full(m), full(q), full(speed), full(head), full(eta),
        full(p_d), full(t_d), full(work), full(surge),
        full(section.control_line_flow(head, surge)), full(stonewall),
        np.broadcast_to(np.asarray(side, int), shape))


def section_at_speed(table: GasTable, section: Section, suction_pressure, suction_temperature,
                     mass_flow, speed) -> SectionPoints:
    """Operate a section at given flows and speeds; the map sets head and efficiency.

    Parameters
    ----------
    table : GasTable
    section : Section
    suction_pressure : array_like
        [Pa].
    suction_temperature : array_like
        [K].
    mass_flow : array_like
        Through-flow [kg/s].
    speed : array_like
        The section's own speed [1/s] (shaft speed times its speed ratio).

    Returns
    -------
    SectionPoints
        Head and efficiency from the map (its polynomial surfaces, also just outside the
        tested range, where the margins flag the point); the discharge from
        :meth:`GasTable.compress_to_head`. A head of zero or less leaves the pressure as
        it is.
    """
    cmap = section.compressor_map
    rho = table.density(suction_pressure, suction_temperature)
    q = np.asarray(mass_flow, float) / rho
    head = cmap.head(q, speed, warn=False)
    eta = np.clip(cmap.efficiency(q, speed, warn=False), 0.05, 1.0)
    c = table.compress_to_head(suction_pressure, suction_temperature, head, eta,
                               section_basis(section))
    return _points(section, suction_pressure, suction_temperature, rho, mass_flow, q, speed,
                   head, eta, c.discharge_pressure, c.discharge_temperature, c.specific_work, 0)


def required_head(table: GasTable, basis: HeadBasis, suction_pressure, suction_temperature,
                  discharge_pressure) -> np.ndarray:
    """Polynomial coefficients of the required head [J/kg] in efficiency [-].

    Parameters
    ----------
    table : GasTable
    basis : HeadBasis
    suction_pressure, discharge_pressure : array_like
        [Pa].
    suction_temperature : array_like
        [K].

    Returns
    -------
    numpy.ndarray
        Shape ``broadcast shape + (6,)``: coefficients ``c_j`` of ``H = sum c_j
        eta**-j``, interpolating :meth:`GasTable.compress` at :data:`EFFICIENCY_NODES`.
        The isentropic head does not depend on efficiency, so on that basis only ``c_0``
        is non-zero. The polytropic head changes by about 4 % between efficiencies 0.45
        and 1 for a pressure ratio of 1.5, nearly linearly in 1/eta; the interpolant
        agrees with the table to 5e-8 relative there (a polynomial in eta itself would
        be 300 times worse; ``tests/dispatch/test_series_reduction.py``).
    """
    args = [np.asarray(a, float)[..., None] for a in (suction_pressure, suction_temperature,
                                                      discharge_pressure)]
    heads = table.compress(*args, EFFICIENCY_NODES, basis).head
    if basis is HeadBasis.ISENTROPIC:
        out = np.zeros(heads.shape)
        out[..., 0] = heads[..., 0]
        return out
    return heads @ _VANDERMONDE_INVERSE.T


def head_polynomial(coefficients: np.ndarray, efficiency) -> np.ndarray:
    """Evaluate :func:`required_head`'s polynomial at efficiency [-] (Horner) [J/kg]."""
    inverse = 1.0 / np.clip(np.asarray(efficiency, float), *EFFICIENCY_RANGE)
    out = np.zeros(np.broadcast_shapes(coefficients.shape[:-1], inverse.shape))
    for j in range(coefficients.shape[-1] - 1, -1, -1):
        out = out * inverse + coefficients[..., j]
    return out


SPEED_SCAN = 5
"""Speeds across the map scanned to bracket the speed a duty needs [-]."""


def bracketed_root(func, a, b, f_a, f_b, scale) -> np.ndarray:
    """Root of a function rising across brackets ``[a, b]`` (arrays), ``f(a) <= 0 < f(b)``.

    Secant steps from the chord of the bracket, kept inside it (a step that would leave
    it falls back to the midpoint, and each new value shrinks the bracket by its sign);
    three or four evaluations reach ``|f| < 1e-9 scale`` on smooth functions. Points not
    converged after ten are finished by Illinois steps (Dowell & Jarratt 1971, through
    :func:`trainopt.machines.maps.compressor_map._solve_monotone`).
    """
    a, b, f_a, f_b = (np.array(v, float) for v in (a, b, f_a, f_b))
    scale = np.broadcast_to(np.abs(scale), a.shape)
    x0, g0 = a, f_a
    with np.errstate(divide="ignore", invalid="ignore"):
        x1 = a - f_a * (b - a) / (f_b - f_a)
    x1 = np.where(np.isfinite(x1), x1, 0.5 * (a + b))
    for _ in range(10):
        g1 = func(x1)
        low = g1 <= 0
        a, f_a = np.where(low, x1, a), np.where(low, g1, f_a)
        b, f_b = np.where(~low, x1, b), np.where(~low, g1, f_b)
        done = np.abs(g1) < 1e-9 * scale
        if done.all():
            return x1
        with np.errstate(divide="ignore", invalid="ignore"):
            x2 = x1 - g1 * (x1 - x0) / (g1 - g0)
        inside = np.isfinite(x2) & (x2 > np.minimum(a, b)) & (x2 < np.maximum(a, b))
        x0, g0 = x1, g1
        x1 = np.where(done, x1, np.where(inside, x2, 0.5 * (a + b)))
    rest = ~(np.abs(func(x1)) < 1e-9 * scale)
    if rest.any():
        x1 = x1.copy()

        def partial(values):
            trial = x1.copy()
            trial[rest] = values
            return func(trial)[rest]

        x1[rest] = _solve_monotone(partial, a[rest], b[rest], scale[rest])
    return x1


def section_to_pressure(table: GasTable, section: Section, suction_pressure, suction_temperature,
                        mass_flow, discharge_pressure, coefficients=None) -> SectionPoints:
    """Operate a section between given pressures; solve the speed the map needs.

    Parameters
    ----------
    table : GasTable
    section : Section
    suction_pressure, discharge_pressure : array_like
        [Pa].
    suction_temperature : array_like
        [K].
    mass_flow : array_like
        Through-flow [kg/s].
    coefficients : numpy.ndarray, optional
        :func:`required_head` for these pressures, if already computed (it depends on
        the pressures and suction temperature only, not on the flow).

    Returns
    -------
    SectionPoints
        Speed solving ``H_map(Q, N) = H_required(eta_map(Q, N))`` inside the map's tested
        speeds (a scan of :data:`SPEED_SCAN` speeds, then :func:`bracketed_root` to 1e-9
        of the head); NaN where no tested speed does it, with ``speed_side`` telling which
        end was short.
    """
    cmap = section.compressor_map
    basis = section_basis(section)
    if coefficients is None:
        coefficients = required_head(table, basis, suction_pressure, suction_temperature,
                                     discharge_pressure)
    h_s, _, rho = table.properties(suction_pressure, suction_temperature)
    q = np.asarray(mass_flow, float) / rho
    shape = np.broadcast_shapes(q.shape, coefficients.shape[:-1])
    q = np.broadcast_to(q, shape)

    def gap(n):
        """Map head less required head at each point and each speed of ``n`` (last axis)."""
        eta = np.clip(cmap.efficiency(q[..., None], n, warn=False), 0.05, 1.0)
        return (cmap.head(q[..., None], n, warn=False)
                - head_polynomial(coefficients[..., None, :], eta))

    scan = np.linspace(cmap.speed_min, cmap.speed_max, SPEED_SCAN)
    g = gap(scan)
    rising = (g[..., :-1] <= 0) & (g[..., 1:] > 0)
    has = rising.any(axis=-1)
    k = np.argmax(rising, axis=-1)
    side = np.where(has, 0, np.where(g[..., 0] > 0, -1, np.where(g[..., -1] <= 0, 1, 0)))
    speed = np.full(shape, np.nan)
    if has.any():
        rows = np.nonzero(has)
        kk = k[rows]
        q_rows, c_rows = q[rows], np.broadcast_to(coefficients, shape + (6,))[rows]

        def gap_rows(n):
            eta = np.clip(cmap.efficiency(q_rows, n, warn=False), 0.05, 1.0)
            return cmap.head(q_rows, n, warn=False) - head_polynomial(c_rows, eta)

        g_rows = g[rows]
        take = np.arange(kk.size)
        speed[rows] = bracketed_root(gap_rows, scan[kk], scan[kk + 1], g_rows[take, kk],
                                     g_rows[take, kk + 1], np.abs(c_rows[..., 0]) + 1.0)
    eta = np.clip(cmap.efficiency(q, speed, warn=False), 0.05, 1.0)
    head = head_polynomial(coefficients, eta)
    work = head / eta
    t_guess = np.asarray(suction_temperature, float) + work / 2200.0
    t_d = table.temperature_from_enthalpy(discharge_pressure, h_s + work, t_guess)
    return _points(section, suction_pressure, suction_temperature, rho, mass_flow, q, speed,
                   head, eta, discharge_pressure, t_d, work, side)


def section_margins(section: Section, points: SectionPoints, speed_min, speed_max
                    ) -> dict[str, np.ndarray]:
    """Relative margins [-] to each of a section's limits; negative where broken.

    Parameters
    ----------
    section : Section
    points : SectionPoints
    speed_min, speed_max : array_like
        The section's own speed range [1/s] (shaft range times its speed ratio, or its
        own driver's).

    Returns
    -------
    dict of str to numpy.ndarray
        ``control_line``: ``Q / Q_scl(H) - 1``; ``stonewall``: ``1 - Q / Q_sw(H)``;
        ``speed_min``: ``N / N_min - 1``; ``speed_max``: ``1 - N / N_max``;
        ``discharge_temperature``: ``1 - T2 / T_max`` when the section has a limit.
        Where no tested speed meets the duty, the point is charged as in
        :mod:`trainopt.dispatch.unit_operation`: to the stonewall right of the stonewall
        flow at the highest tested speed (at the lowest where the head needed lies below
        its line), to the control line left of the surge control line at the lowest tested
        speed (at the highest where the head needed lies above its line), else to the
        speed limit on the side that fell short.
    """
    cmap = section.compressor_map
    q, n = points.volume_flow, points.speed
    with np.errstate(invalid="ignore", divide="ignore"):
        margins = {
            "control_line": q / points.control_line_flow - 1.0,
            "stonewall": 1.0 - q / points.stonewall_flow,
            "speed_min": n / speed_min - 1.0,
            "speed_max": 1.0 - n / speed_max,
        }
        if section.max_discharge_temperature is not None:
            margins["discharge_temperature"] = (
                1.0 - points.discharge_temperature / section.max_discharge_temperature)
    off = ~np.isfinite(n)
    if np.any(off):
        side = points.speed_side
        # right of the stonewall of every tested speed, or of the lowest where the head
        # needed is below the lowest speed line (a lower speed moves the point further
        # past its stonewall); left of the surge control line of the lowest speed, or of
        # the highest where the head needed is above the highest speed line
        beyond = q > cmap.stonewall_flow_at_speed(
            np.where(side < 0, cmap.speed_min, cmap.speed_max), warn=False)
        below = q < cmap.surge_flow_at_speed(
            np.where(side > 0, cmap.speed_max, cmap.speed_min), warn=False) * (
            1.0 + section.surge_control_offset)
        charge = {"stonewall": off & beyond, "control_line": off & ~beyond & below,
                  "speed_min": off & ~beyond & ~below & (side < 0),
                  "speed_max": off & ~beyond & ~below & (side >= 0)}
        for key in margins:
            value = np.where(off, np.inf, margins[key])
            margins[key] = np.where(charge.get(key, False), -1.0, value)
    return {k: np.where(np.isnan(v), -np.inf, v) for k, v in margins.items()}
