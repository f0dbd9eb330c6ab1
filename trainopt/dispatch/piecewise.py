"""Piecewise-linear unit curves written as Pyomo constraints, and the convexity tests they need.

Two exact formulations, chosen per unit by :func:`trainopt.dispatch.model.build_model` (by default
the second for every curve, measured the faster):

- the convex combination (``hull_*`` components), with no binary beyond the unit's
  run/stop binary, exact when the curve is convex;
- the incremental form by convex blocks (``segment_*`` and ``block_*`` components), exact
  on any curve, with one binary per concave kink of the curve rather than one per inner
  breakpoint. With single-segment blocks it is the textbook incremental form.

Both are written by hand: the HiGHS interface refuses SOS2 constraints, and
``Piecewise(pw_repn='BIGM_BIN')`` returned points off the curve when it was measured.
See ``docs/formulation.md`` for the equations, the proof sketches and the timings.

References
----------
.. [1] Vielma, J. P., Ahmed, S. and Nemhauser, G. (2010). Mixed-integer models for
   nonseparable piecewise-linear optimization: unifying framework and extensions.
   Operations Research 58(2), 303-315. doi:10.1287/opre.1090.0721
.. [2] Markowitz, H. M. and Manne, A. S. (1957). On the solution of discrete programming
   problems. Econometrica 25(1), 84-110 (the incremental, or delta, formulation).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import pyomo.core as pyo

__all__ = ["add_block_incremental", "add_convex_combination", "convex_blocks", "is_convex"]


def _slopes(flow: np.ndarray, cost: np.ndarray) -> tuple[np.ndarray, float]:
    flow = np.asarray(flow, dtype=float)
    cost = np.asarray(cost, dtype=float)
    if flow.ndim != 1 or flow.shape != cost.shape or flow.size < 2:
        raise ValueError("flow and cost must be 1-D arrays of the same length, at least 2")
    if np.any(np.diff(flow) <= 0.0):
        raise ValueError("flow must be strictly increasing")
    slopes = np.diff(cost) / np.diff(flow)
    scale = float(np.max(np.abs(slopes)))
    return slopes, scale if scale > 0.0 else 1.0


def is_convex(flow: np.ndarray, cost: np.ndarray, rtol: float = 1e-9) -> bool:
    """Whether a piecewise-linear curve is convex (its segment slopes never fall).

    Parameters
    ----------
    flow : numpy.ndarray
        Breakpoint abscissae [kg/s], strictly increasing, at least two.
    cost : numpy.ndarray
        Breakpoint ordinates [any cost unit], same length.
    rtol : float
        Tolerance [-]: a slope may fall by up to ``rtol`` times the largest absolute
        slope and still count as convex.

    Returns
    -------
    bool
        True if ``s[k+1] >= s[k] - rtol * max|s|`` for every pair of adjacent segment
        slopes ``s``.

    Notes
    -----
    Treating a curve whose slopes fall by at most ``d = rtol * max|s|`` as convex
    under-states its cost by at most ``d * (flow[-1] - flow[0])``.

    Examples
    --------
    >>> import numpy as np
    >>> x = np.linspace(1.0, 3.0, 5)
    >>> is_convex(x, x**2), is_convex(x, np.sqrt(x))
    (True, False)
    """
    slopes, scale = _slopes(flow, cost)
    return bool(np.all(np.diff(slopes) >= -rtol * scale))


def convex_blocks(flow: np.ndarray, cost: np.ndarray, rtol: float = 1e-9) -> list[list[int]]:
    """Split a curve's segments into maximal runs of non-falling slope.

    Parameters
    ----------
    flow, cost : numpy.ndarray
        As for :func:`is_convex`.
    rtol : float
        As for :func:`is_convex`.

    Returns
    -------
    list of list of int
        Segment indices (segment ``s`` joins breakpoints ``s`` and ``s + 1``), block by
        block, in order; a new block starts at every concave kink. A convex curve gives
        one block.

    Examples
    --------
    >>> convex_blocks([0.0, 1.0, 2.0, 3.0, 4.0], [0.0, 1.0, 3.0, 4.0, 6.0])
    [[0, 1], [2, 3]]
    """
    slopes, scale = _slopes(flow, cost)
    blocks = [[0]]
    for s in range(1, slopes.size):
        if slopes[s] < slopes[s - 1] - rtol * scale:
            blocks.append([s])
        else:
            blocks[-1].append(s)
    return blocks


def add_convex_combination(model: pyo.ConcreteModel, curves: Mapping[str, object]) -> None:
    """Add the convex-combination form of the given units' curves to the model.

    Parameters
    ----------
    model : pyomo.core.ConcreteModel
        A model from :func:`trainopt.dispatch.model.build_model` (needs ``run``, ``through_flow``
        and ``unit_cost``).
    curves : mapping of str to UnitCurve
        The convex units, by name.

    Notes
    -----
    With weights ``w[u,k]`` in [0, 1] on breakpoints ``(F[u,k], C[u,k])``::

        hull_weight_sum[u]: sum_k w[u,k] == y[u]
        hull_flow[u]:       m[u] == sum_k w[u,k] * F[u,k]
        hull_cost[u]:       c[u] == sum_k w[u,k] * C[u,k]

    This is the perspective of the convex hull of the curve's epigraph: for ``y = 1``
    the least ``c`` at a given ``m`` is the lower convex envelope of the breakpoints,
    which is the curve itself when the curve is convex; for ``y = 0`` everything is
    zero. Minimising cost then needs no segment binaries.
    """
    names = list(curves)
    points = [(n, k) for n in names for k in range(curves[n].flow.size)]
    model.HULL_UNITS = pyo.Set(initialize=names, ordered=True, doc="convex units [-]")
    model.HULL_POINTS = pyo.Set(initialize=points, dimen=2, ordered=True,
                                doc="(unit, breakpoint) of convex units")
    model.hull_point_flow = pyo.Param(
        model.HULL_POINTS, initialize={(n, k): float(curves[n].flow[k]) for n, k in points},
        doc="breakpoint through-flow [kg/s]")
    model.hull_point_cost = pyo.Param(
        model.HULL_POINTS, initialize={(n, k): float(curves[n].cost[k]) for n, k in points},
        doc="breakpoint cost")
    model.hull_weight = pyo.Var(model.HULL_POINTS, bounds=(0.0, 1.0),
                                doc="weight of a breakpoint [-]")

    def weights(mm, n):
        return [mm.hull_weight[n, k] for k in range(curves[n].flow.size)]

    model.hull_weight_sum = pyo.Constraint(
        model.HULL_UNITS, rule=lambda mm, n: sum(weights(mm, n)) == mm.run[n])
    model.hull_flow = pyo.Constraint(
        model.HULL_UNITS, rule=lambda mm, n: mm.through_flow[n] == sum(
            mm.hull_point_flow[n, k] * w for k, w in enumerate(weights(mm, n))))
    model.hull_cost = pyo.Constraint(
        model.HULL_UNITS, rule=lambda mm, n: mm.unit_cost[n] == sum(
            mm.hull_point_cost[n, k] * w for k, w in enumerate(weights(mm, n))))


def add_block_incremental(model: pyo.ConcreteModel, curves: Mapping[str, object],
                          blocks: Mapping[str, Sequence[Sequence[int]]]) -> None:
    """Add the incremental form by convex blocks of the given units' curves to the model.

    Parameters
    ----------
    model : pyomo.core.ConcreteModel
        A model from :func:`trainopt.dispatch.model.build_model`.
    curves : mapping of str to UnitCurve
        The units written this way, by name.
    blocks : mapping of str to list of list of int
        Per unit, its segments grouped into consecutive blocks (see
        :func:`convex_blocks`); single-segment blocks give the textbook incremental form.

    Notes
    -----
    Segment ``s`` of unit ``u`` has width ``W[u,s] = F[u,s+1] - F[u,s]`` and rise
    ``R[u,s] = C[u,s+1] - C[u,s]``; its fill is ``d[u,s]`` in [0, 1]. Block ``j`` of the
    unit has binary ``z[u,j]`` (1 when the block is full), for every block but the
    last::

        segment_flow[u]:        m[u] == F[u,0] * y[u] + sum_s W[u,s] * d[u,s]
        segment_cost[u]:        c[u] == C[u,0] * y[u] + sum_s R[u,s] * d[u,s]
        segment_fill_run[u,s]:  d[u,s] <= y[u]           (s in the first block)
        segment_fill_order[u,s]: d[u,s] <= z[u,j-1]      (s in block j >= 1)
        block_full_upper[u,s]:  z[u,j] <= d[u,s]         (s in block j, not the last)

    A later block can only fill once every segment of the earlier blocks is full, so
    the fills describe a point on the curve up to the order of filling inside a block.
    Inside a block the slopes do not fall, so for a given through-flow the cheapest fill
    is the in-order one, which is the curve: the form is exact on any curve and needs a
    binary only at each concave kink. The constraints of the form are the perspective
    of the incremental model, whose linear relaxation is locally ideal [1]_.
    """
    names = list(curves)
    segments = [(n, s) for n in names for s in range(curves[n].flow.size - 1)]
    block_of = {(n, s): j for n in names for j, blk in enumerate(blocks[n]) for s in blk}
    links = [(n, j) for n in names for j in range(len(blocks[n]) - 1)]
    model.SEGMENT_UNITS = pyo.Set(initialize=names, ordered=True,
                                  doc="units written in incremental form [-]")
    model.SEGMENTS = pyo.Set(initialize=segments, dimen=2, ordered=True,
                             doc="(unit, segment) of incremental units")
    model.BLOCK_LINKS = pyo.Set(initialize=links, dimen=2, ordered=True,
                                doc="(unit, block) of every block but a unit's last")
    model.segment_width = pyo.Param(model.SEGMENTS, initialize={
        (n, s): float(curves[n].flow[s + 1] - curves[n].flow[s]) for n, s in segments},
        doc="segment through-flow width [kg/s]")
    model.segment_rise = pyo.Param(model.SEGMENTS, initialize={
        (n, s): float(curves[n].cost[s + 1] - curves[n].cost[s]) for n, s in segments},
        doc="segment cost rise")
    model.segment_fill = pyo.Var(model.SEGMENTS, bounds=(0.0, 1.0),
                                 doc="filled fraction of a segment [-]")
    model.block_full = pyo.Var(model.BLOCK_LINKS, domain=pyo.Binary,
                               doc="1 when every segment of the block is full [-]")

    def segs(n):
        return range(curves[n].flow.size - 1)

    model.segment_flow = pyo.Constraint(
        model.SEGMENT_UNITS, rule=lambda mm, n: mm.through_flow[n]
        == float(curves[n].flow[0]) * mm.run[n]
        + sum(mm.segment_width[n, s] * mm.segment_fill[n, s] for s in segs(n)))
    model.segment_cost = pyo.Constraint(
        model.SEGMENT_UNITS, rule=lambda mm, n: mm.unit_cost[n]
        == float(curves[n].cost[0]) * mm.run[n]
        + sum(mm.segment_rise[n, s] * mm.segment_fill[n, s] for s in segs(n)))
    first = [(n, s) for n, s in segments if block_of[n, s] == 0]
    later = [(n, s) for n, s in segments if block_of[n, s] > 0]
    full = [(n, s) for n, s in segments if block_of[n, s] < len(blocks[n]) - 1]
    model.segment_fill_run = pyo.Constraint(
        first, rule=lambda mm, n, s: mm.segment_fill[n, s] <= mm.run[n])
    model.segment_fill_order = pyo.Constraint(
        later, rule=lambda mm, n, s: mm.segment_fill[n, s]
        <= mm.block_full[n, block_of[n, s] - 1])
    model.block_full_upper = pyo.Constraint(
        full, rule=lambda mm, n, s: mm.block_full[n, block_of[n, s]] <= mm.segment_fill[n, s])
