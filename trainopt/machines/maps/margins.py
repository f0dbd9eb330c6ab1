"""Margins of an operating point to the edges of its compressor map, as fractions.

Each function takes the map, the flow and the speed or head of the point, and returns a
fraction [-] that is positive inside the permitted region and negative beyond its edge.
The formulas are written in docs/maps.md; they are:

- surge margin at constant speed ``Q / Q_surge(N) - 1``
- surge margin at constant head ``Q / Q_surge(H) - 1``
- margin to the surge control line ``Q / ((1 + offset) Q_least(H)) - 1``, with ``Q_least``
  set by the unit's least-flow rule (surge line, speed-line peak, or the larger)
- stonewall margin at constant speed ``1 - Q / Q_stonewall(N)``
- speed margins ``N / N_min - 1`` and ``1 - N / N_max``
"""

from __future__ import annotations

import numpy as np

from trainopt.machines.maps.compressor_map import DEFAULT_CONTROL_LINE_OFFSET, CompressorMap


def surge_margin_at_speed(compressor_map: CompressorMap, flow, speed, *, warn: bool = True):
    """Surge margin at constant speed, ``Q / Q_surge(N) - 1`` [-].

    Parameters
    ----------
    compressor_map : CompressorMap
        The map.
    flow : array_like
        Actual inlet volume flow [m³/s].
    speed : array_like
        Speed [1/s].
    warn : bool
        Warn when the speed lies outside the tested range.

    Returns
    -------
    numpy.ndarray
        Flow above the surge flow of the same speed line, as a fraction of that surge flow [-].
    """
    return np.asarray(flow, float) / compressor_map.surge_flow_at_speed(speed, warn=warn) - 1.0


def surge_margin_at_head(compressor_map: CompressorMap, flow, head, *, extend: bool = False):
    """Surge margin at constant head, ``Q / Q_surge(H) - 1`` [-].

    Parameters
    ----------
    compressor_map : CompressorMap
        The map.
    flow : array_like
        Actual inlet volume flow [m³/s].
    head : array_like
        Head [J/kg] on the map's basis.
    extend : bool
        Beyond the surge heads of the tested speeds, use the fan-law parabola through the
        end surge point (docs/maps.md); otherwise NaN there.

    Returns
    -------
    numpy.ndarray
        Flow above the surge flow at the same head, as a fraction of it [-].
    """
    surge = compressor_map.surge_flow_at_head(head, extend=extend)
    return np.asarray(flow, float) / surge - 1.0


def control_line_margin(
    compressor_map: CompressorMap,
    flow,
    head,
    offset=DEFAULT_CONTROL_LINE_OFFSET,
    rule=None,
    *,
    extend: bool = False,
):
    """Margin to the surge control line at constant head, ``Q / ((1 + offset) Q_least(H)) - 1``.

    Parameters
    ----------
    compressor_map : CompressorMap
        The map.
    flow : array_like
        Actual inlet volume flow [m³/s].
    head : array_like
        Head [J/kg] on the map's basis.
    offset : array_like
        Control line offset as a fraction of the surge flow at the same head [-];
        default 0.10 (common practice), settable per unit.
    rule : LeastFlowRule or str, optional
        Which line sets the least flow ``Q_least``: the surge line (default), the peak of
        the speed line, or the larger of the two.
    extend : bool
        Extend the lines beyond their tested heads by the fan-law parabola.

    Returns
    -------
    numpy.ndarray
        Flow above the control line flow, as a fraction of it [-]; negative means the
        anti-surge controller would open the recycle valve.
    """
    line = compressor_map.control_line_flow_at_head(head, offset, rule, extend=extend)
    return np.asarray(flow, float) / line - 1.0


def stonewall_margin(compressor_map: CompressorMap, flow, speed, *, warn: bool = True):
    """Stonewall margin at constant speed, ``1 - Q / Q_stonewall(N)`` [-].

    Parameters
    ----------
    compressor_map : CompressorMap
        The map.
    flow : array_like
        Actual inlet volume flow [m³/s].
    speed : array_like
        Speed [1/s].
    warn : bool
        Warn when the speed lies outside the tested range.

    Returns
    -------
    numpy.ndarray
        Flow still available before the stonewall flow of the same speed line, as a
        fraction of that stonewall flow [-].
    """
    return 1.0 - np.asarray(flow, float) / compressor_map.stonewall_flow_at_speed(speed, warn=warn)


def speed_margins(compressor_map: CompressorMap, speed, speed_min=None, speed_max=None):
    """Margins to the minimum and maximum speed, ``N / N_min - 1`` and ``1 - N / N_max`` [-].

    Parameters
    ----------
    compressor_map : CompressorMap
        The map; its tested speed range is the default for the limits.
    speed : array_like
        Speed [1/s].
    speed_min, speed_max : float, optional
        Minimum and maximum permitted speed [1/s] (e.g. the unit's minimum governor speed
        and maximum continuous speed); by default the map's tested range.

    Returns
    -------
    tuple of numpy.ndarray
        Margin to the minimum speed, as a fraction of it, and margin to the maximum speed,
        as a fraction of it [-].
    """
    low = compressor_map.speed_min if speed_min is None else speed_min
    high = compressor_map.speed_max if speed_max is None else speed_max
    speed = np.asarray(speed, float)
    return speed / low - 1.0, 1.0 - speed / high
