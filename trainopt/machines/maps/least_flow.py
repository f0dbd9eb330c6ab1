"""The least flow of a unit: surge line, speed-line peak, and the surge control line.

Real speed lines are often flat or rise a little between the vendor's surge line and the
peak (highest head) of the line. Left of the peak the machine may still run, but a rising
characteristic is where parallel units on a shared header can share flow unstably; some
operators therefore hold each unit right of the peak rather than right of the surge line.
The user chooses, per unit, which rule sets the least flow (:class:`LeastFlowRule`); the
surge control line is that flow times ``1 + offset``.

Below the lowest tested surge point (and above the highest) the surge and peak lines are
extended by the fan-law parabola through the origin and their end point,
``Q(H) = Q_end sqrt(H / H_end)``; results computed there are marked extrapolated.

Formulas and their sources are in docs/maps.md.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum

import numpy as np

from trainopt.machines.maps.roots import solve_monotone

_PEAK_GRID = 201
"""Flows per speed line searched for the peak when the line is above cubic in flow [-]."""


class LeastFlowRule(Enum):
    """Which line sets a unit's least flow (before the control-line offset).

    ``SURGE_LINE``: the vendor's surge line (default).
    ``SPEED_LINE_PEAK``: the peak (highest head) of the speed line, a stability rule for
    parallel units on flat curves.
    ``LARGER``: the larger of the two flows at the same head.
    """

    SURGE_LINE = "surge_line"
    SPEED_LINE_PEAK = "speed_line_peak"
    LARGER = "larger"


BINDS_SURGE = "surge line"
BINDS_PEAK = "speed-line peak"


@dataclass(frozen=True)
class ControlLine:
    """The surge control line at given heads (numpy arrays of one shape).

    Attributes
    ----------
    flow : numpy.ndarray
        Surge control line flow ``(1 + offset) Q_least(H)`` [m³/s].
    surge_flow : numpy.ndarray
        Surge line flow at the head [m³/s].
    peak_flow : numpy.ndarray
        Flow of the speed-line peak at the head [m³/s] (NaN under the surge-line rule,
        where it is not needed).
    binds : numpy.ndarray of str
        ``"surge line"`` or ``"speed-line peak"``: which line set the least flow.
    extrapolated : numpy.ndarray of bool
        True where the head lies outside the tested heads of the line that binds and the
        fan-law extension was used.
    surge_extrapolated : numpy.ndarray of bool
        True where the surge flow came from the fan-law extension.
    """

    flow: np.ndarray
    surge_flow: np.ndarray
    peak_flow: np.ndarray
    binds: np.ndarray
    extrapolated: np.ndarray
    surge_extrapolated: np.ndarray


def parse_least_flow_rule(value) -> LeastFlowRule:
    """The rule named by ``value`` (a :class:`LeastFlowRule` or its text); ValueError if unknown."""
    if isinstance(value, LeastFlowRule):
        return value
    text = str(value).strip().lower().replace("-", "_").replace(" ", "_")
    aliases = {"surge": "surge_line", "peak": "speed_line_peak", "max": "larger"}
    return LeastFlowRule(aliases.get(text, text))


def peak_flow_at_speed(cmap, speed) -> np.ndarray:
    """Flow [m³/s] of the highest head on the speed line at speed [1/s], surge to stonewall.

    Equals the surge flow where head falls with flow all along the line. For head
    polynomials up to cubic in flow the stationary points are found in closed form; above
    that on a grid of :data:`_PEAK_GRID` flows.
    """
    speed = np.asarray(speed, dtype=float)
    low = cmap.surge_line.flow_at_speed(cmap.head_surface, speed)
    high = cmap.stonewall_line.flow_at_speed(cmap.head_surface, speed)
    p = cmap.head_surface.in_flow(speed)
    candidates = [low, high]
    if p.shape[0] <= 4:
        p = np.concatenate([p, np.zeros((4 - p.shape[0],) + p.shape[1:])])
        # dH/dQ = a + b Q + c Q², a = P1, b = 2 P2, c = 3 P3
        a, b, c = p[1], 2.0 * p[2], 3.0 * p[3]
        with np.errstate(divide="ignore", invalid="ignore"):
            # stable roots (Press et al., Numerical Recipes, 3rd ed. 2007, section 5.6);
            # t / c is infinite where c = 0 (a quadratic line) and a / t is then -a / b
            disc = b * b - 4 * a * c
            root = np.sqrt(np.where(disc >= 0, disc, np.nan))
            t = -0.5 * (b + np.where(b >= 0, 1.0, -1.0) * root)
            q1, q2 = t / c, a / t
        candidates += [q1, q2]
    else:
        fraction = np.linspace(0.0, 1.0, _PEAK_GRID).reshape((-1,) + (1,) * low.ndim)
        candidates += list(low + (high - low) * fraction)
    shape = np.broadcast_shapes(*(np.shape(x) for x in candidates))
    q = np.stack([np.broadcast_to(x, shape) for x in candidates])
    inside = (q >= low) & (q <= high)
    head = np.where(inside, cmap.head_surface(np.where(inside, q, low), speed), -np.inf)
    best = np.argmax(np.nan_to_num(head, nan=-np.inf), axis=0)
    flow = np.take_along_axis(q, best[None], axis=0)[0]
    return np.where(np.isfinite(low) & np.isfinite(high), flow, np.nan)


def peak_head_at_speed(cmap, speed) -> np.ndarray:
    """Highest head [J/kg] on the speed line at speed [1/s] (at :func:`peak_flow_at_speed`)."""
    return cmap.head_surface(peak_flow_at_speed(cmap, speed), speed)


def peak_flow_at_head(cmap, head, *, extend: bool = False) -> np.ndarray:
    """Flow [m³/s] of the speed-line peak whose head is ``head`` [J/kg].

    The peaks of the tested speed lines form a line from the lowest to the highest
    speed; its head rises with speed (checked when the map is built), so the speed whose
    peak head equals ``head`` is unique. Outside the tested peak heads: NaN, or with
    ``extend`` the fan-law parabola through the end peak.
    """
    head = np.asarray(head, dtype=float)
    lo, hi = np.full(head.shape, cmap.speed_min), np.full(head.shape, cmap.speed_max)
    speed = solve_monotone(lambda n: peak_head_at_speed(cmap, n) - head, lo, hi, head)
    flow = peak_flow_at_speed(cmap, speed)
    if extend:
        flow, _ = _extend(cmap, head, flow, lambda n: peak_flow_at_speed(cmap, n))
    return flow


def surge_flow_extended(cmap, head) -> tuple[np.ndarray, np.ndarray]:
    """Surge flow [m³/s] at head [J/kg], extended beyond the tested surge heads.

    Returns
    -------
    flow : numpy.ndarray
        :meth:`CompressorMap.surge_flow_at_head` inside the tested surge heads; outside,
        ``Q_end sqrt(H / H_end)`` through the surge point of the lowest (or highest) tested
        speed: the fan-law parabola through the origin (fan laws: Q ∝ N, H ∝ N², so a
        machine obeying them has its surge points on ``H ∝ Q²``).
    extrapolated : numpy.ndarray of bool
        True where the extension was used.
    """
    head = np.asarray(head, dtype=float)
    flow = cmap._boundary_flow_at_head(cmap.surge_line, head)
    return _extend(cmap, head, flow, lambda n: cmap.surge_line.flow_at_speed(cmap.head_surface, n))


def control_line(
    cmap, head, offset, rule=LeastFlowRule.SURGE_LINE, *, extend: bool = False
) -> ControlLine:
    """The surge control line at head [J/kg] under a least-flow rule.

    Parameters
    ----------
    cmap : CompressorMap
        The map.
    head : array_like
        Head on the map's basis [J/kg].
    offset : array_like
        Control line offset as a fraction of the least flow at the same head [-].
    rule : LeastFlowRule or str
        Which line sets the least flow.
    extend : bool
        Extend the surge and peak lines beyond their tested heads by the fan-law parabola
        (see :func:`surge_flow_extended`); otherwise NaN there.

    Returns
    -------
    ControlLine
        ``flow = (1 + offset) Q_least(H)`` with ``Q_least`` the surge flow, the peak flow or
        the larger of the two, and which of them binds (the surge line where they are equal).
    """
    rule = parse_least_flow_rule(rule)
    head = np.asarray(head, dtype=float)
    if extend:
        surge, surge_out = surge_flow_extended(cmap, head)
    else:
        surge = cmap._boundary_flow_at_head(cmap.surge_line, head)
        surge_out = np.zeros(head.shape, bool)
    if rule is LeastFlowRule.SURGE_LINE:
        peak, peak_out = np.full(head.shape, np.nan), np.zeros(head.shape, bool)
        use_peak = np.zeros(head.shape, bool)
    else:
        peak = peak_flow_at_head(cmap, head)
        if extend:
            peak, peak_out = _extend(cmap, head, peak, lambda n: peak_flow_at_speed(cmap, n))
        else:
            peak_out = np.zeros(head.shape, bool)
        if rule is LeastFlowRule.SPEED_LINE_PEAK:
            use_peak = np.ones(head.shape, bool)
        else:
            use_peak = (peak > surge * (1 + 1e-12)) | (np.isnan(surge) & np.isfinite(peak))
    least = np.where(use_peak, peak, surge)
    offset = np.asarray(offset, dtype=float)
    shape = np.broadcast_shapes(head.shape, offset.shape)
    return ControlLine(
        flow=np.broadcast_to((1.0 + offset) * least, shape),
        surge_flow=np.broadcast_to(surge, shape),
        peak_flow=np.broadcast_to(peak, shape),
        binds=np.broadcast_to(np.where(use_peak, BINDS_PEAK, BINDS_SURGE), shape),
        extrapolated=np.broadcast_to(np.where(use_peak, peak_out, surge_out), shape),
        surge_extrapolated=np.broadcast_to(surge_out, shape),
    )


def _extend(cmap, head, flow, flow_at_speed) -> tuple[np.ndarray, np.ndarray]:
    """Fill NaN flows by the parabola ``Q_end sqrt(H / H_end)`` through the nearer end point.

    ``flow_at_speed(N)`` gives the line's flow at a speed; its ends are at the lowest and
    highest tested speeds. Heads at or below zero stay NaN.
    """
    ends = []
    for n in (cmap.speed_min, cmap.speed_max):
        q_end = float(flow_at_speed(np.asarray(n)))
        ends.append((q_end, float(cmap.head_surface(q_end, n))))
    (q_lo, h_lo), (q_hi, h_hi) = ends
    with np.errstate(invalid="ignore", divide="ignore"):
        low = q_lo * np.sqrt(np.where(head > 0, head, np.nan) / h_lo)
        high = q_hi * np.sqrt(np.where(head > 0, head, np.nan) / h_hi)
    missing = ~np.isfinite(flow) & np.isfinite(head)
    filled = np.where(missing & (head <= h_lo), low, np.where(missing & (head >= h_hi), high, flow))
    return filled, missing & np.isfinite(filled)
