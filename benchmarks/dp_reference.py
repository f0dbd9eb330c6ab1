"""A plain dynamic program over a fine flow grid: the peer every station benchmark prints.

The peer is the textbook approach to load sharing among units with separable costs: sample
each unit's least shaft power on a fine grid of through-flows, then a dynamic program over
the units on a flow grid of about ``POINTS`` steps (min-plus convolution of the units'
sampled curves, one unit at a time), and back-track the split. Its unit model is the same
true model trainopt reduces (``trainopt.dispatch.reduction.operate``: the fitted map, the
CoolProp duty, the driver and every limit), sampled over the flow range the reduction
found; so it answers the same question on the same physics, with a grid instead of
breakpoints and an integer program.

- Set-up (``DynamicProgram(station)``): one vectorised ``operate`` call per unit on
  ``SAMPLES`` through-flows from its least to its largest flow.
- Per demand (``DynamicProgram.split``): the flow step is the demand over an integer
  number of steps, so that the steps add up to the demand exactly, with about ``POINTS``
  steps over the station's capacity; each unit's sampled power is interpolated onto the
  multiples of the step; a running unit carries any net flow from zero to its largest
  flow, recycling up to its least flow (the power at its least flow), as in trainopt's
  model.

Its answer (net flows per unit) is evaluated on the true model by the caller, as
trainopt's split is, so the powers compare like for like.
"""

from __future__ import annotations

import math

import numpy as np

from trainopt.dispatch.reduction import operate

POINTS = 4000
"""Flow steps over the station's capacity (the grid of the peer)."""

SAMPLES = 4000
"""True-model samples per unit during the set-up."""


class DynamicProgram:
    """The plain DP peer of a reduced station (``trainopt.station.reduced.Station``)."""

    def __init__(self, station, points: int = POINTS, samples: int = SAMPLES):
        self.station = station
        self.points = points
        case = station.case
        self.names = [n for n, c in station.curves.items() if c.feasible]
        self.lo = np.array([station.curves[n].min_flow for n in self.names])
        self.hi = np.array([station.curves[n].max_flow for n in self.names])
        self.flow, self.power = [], []
        for name, a, b in zip(self.names, self.lo, self.hi, strict=True):
            train = case.train(name)
            m = np.linspace(a, b, samples)
            p = operate(train, station.duty(train), m, case.ambient_temperature).shaft_power
            self.flow.append(m)
            self.power.append(np.asarray(p, float))
        self.capacity = float(self.hi.sum())

    def split(self, demand: float) -> dict[str, float]:
        """Least-power net flows [kg/s] of the running units for a net demand [kg/s].

        A unit whose net flow is below its least flow runs at its least flow and recycles
        the difference (``trainopt.station.reduced.evaluate_split`` reads it so).
        """
        if demand <= 0:
            return {}
        steps = max(1, round(self.points * demand / self.capacity))
        h = demand / steps
        value = np.full(steps + 1, np.inf)
        value[0] = 0.0
        choices = []
        for flow, power, lo, hi in zip(self.flow, self.power, self.lo, self.hi, strict=True):
            top = min(steps, math.floor(hi / h + 1e-9))
            ks = np.arange(1, top + 1)
            cost = np.interp(np.maximum(ks * h, lo), flow, power)
            new = value.copy()
            arg = np.zeros(steps + 1, dtype=np.int64)
            for k, c in zip(ks, cost, strict=True):
                cand = value[:steps + 1 - k] + c
                tail = new[k:]
                better = cand < tail
                tail[better] = cand[better]
                arg[k:][better] = k
            value = new
            choices.append(arg)
        if not np.isfinite(value[steps]):
            raise ValueError(f"the DP found no split of {demand:.3f} kg/s")
        out, j = {}, steps
        for name, arg in zip(reversed(self.names), reversed(choices), strict=True):
            k = int(arg[j])
            if k:
                out[name] = k * h
            j -= k
        return out
