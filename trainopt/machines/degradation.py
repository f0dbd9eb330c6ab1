"""Degradation factors of a worn machine, applied to its as-new map.

Fouling, erosion and seal wear lower a compressor's head and efficiency below the vendor's
map. Three factors describe the worn machine against its as-new map ``H_new``, ``eta_new``:

    H_worn(Q, N)   = f_H   * H_new(Q / f_Q, N)
    eta_worn(Q, N) = f_eta * eta_new(Q / f_Q, N)
    Q_boundary,worn(N) = f_Q * Q_boundary,new(N)

``head_factor`` f_H scales head at a given speed and flow, ``efficiency_factor`` f_eta
multiplies efficiency, and ``flow_factor`` f_Q stretches the flow axis (a capacity shift:
every feature of a speed line, surge and stonewall included, moves to f_Q times its flow).
:func:`degraded_map` returns an ordinary :class:`~trainopt.machines.maps.CompressorMap`,
so the reduction, the optimiser and every study use a calibrated unit as any other.

The map is a sum of monomials ``c Q^a N^b``, so the worn map is exact: only the coefficients
change (``c -> f_H c f_Q^-a``). Positive factors keep every shape property that the map
checks (head falling with flow and rising with speed, boundaries rising with speed).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from trainopt.errors import InputError
from trainopt.machines.maps.compressor_map import (
    CompressorMap,
    HeadCurve,
    Monomials,
    SpeedCurve,
)

PLAUSIBLE_RANGE = (0.7, 1.1)
"""Factors outside this range [-] are warned about: a worn machine rarely loses more than
30 % of head or efficiency and never gains more than a few percent (common practice)."""


class DegradationWarning(UserWarning):
    """Degradation factors outside :data:`PLAUSIBLE_RANGE`: check the sensors and data."""


@dataclass(frozen=True)
class Degradation:
    """Degradation factors of one unit against its as-new map (all [-], 1 = as new).

    Parameters
    ----------
    head_factor : float
        Head at a given speed and flow over the as-new head [-].
    efficiency_factor : float
        Efficiency over the as-new efficiency at the same point [-].
    flow_factor : float
        Capacity shift: the worn machine's speed line at flow ``f_Q Q`` is the as-new one
        at ``Q`` [-].
    """

    head_factor: float = 1.0
    efficiency_factor: float = 1.0
    flow_factor: float = 1.0

    def __post_init__(self):
        for name in ("head_factor", "efficiency_factor", "flow_factor"):
            value = getattr(self, name)
            if not value > 0:
                raise InputError(name, f"{value!r} is not a positive factor",
                                 "give e.g. 0.96 (1 = as new)")

    @property
    def is_as_new(self) -> bool:
        """True when every factor is 1."""
        return self.head_factor == self.efficiency_factor == self.flow_factor == 1.0

    def outside_plausible(self) -> list[str]:
        """Names and values of the factors outside :data:`PLAUSIBLE_RANGE`."""
        lo, hi = PLAUSIBLE_RANGE
        return [f"{name} {getattr(self, name):.3f}" for name in
                ("head_factor", "efficiency_factor", "flow_factor")
                if not lo <= getattr(self, name) <= hi]


def _scaled(surface: Monomials, value_factor: float, flow_factor: float) -> Monomials:
    """``value_factor * f(Q / flow_factor, N)`` as monomials."""
    coefficients = tuple(c * flow_factor ** -a for c, a in
                         zip(surface.coefficients, surface.flow_powers, strict=True))
    return replace(surface, coefficients=coefficients, scale=surface.scale * value_factor)


def _boundary(line, degradation: Degradation):
    if isinstance(line, SpeedCurve):
        return SpeedCurve(replace(line.flow, scale=line.flow.scale * degradation.flow_factor))
    if isinstance(line, HeadCurve):
        c0, c1, c2 = line.coefficients
        fh, fq = degradation.head_factor, degradation.flow_factor
        return HeadCurve((fh * c0, fh * c1 / fq, fh * c2 / fq**2))
    raise TypeError(f"cannot degrade a boundary line of type {type(line).__name__}")


def degraded_map(compressor_map: CompressorMap, degradation: Degradation) -> CompressorMap:
    """The map of the worn machine (see the module notes for the equations).

    Parameters
    ----------
    compressor_map : CompressorMap
        The as-new map.
    degradation : Degradation
        The factors.

    Returns
    -------
    CompressorMap
        The worn map: same name and basis, same tested speeds, flows stretched by
        ``flow_factor``; the as-new map itself when every factor is 1.

    Examples
    --------
    >>> import numpy as np
    >>> from trainopt.machines.maps.compressor_map import Monomials, SpeedCurve
    >>> from trainopt.physics.compression import HeadBasis
    >>> head = Monomials((60e3, -10e3), (0, 2), (2, 0), 1.0, 100.0)
    >>> eff = Monomials((0.8,), (0,), (0,), 1.0, 100.0)
    >>> new = CompressorMap("m", HeadBasis.POLYTROPIC, head, eff,
    ...     SpeedCurve(Monomials((0.5,), (0,), (1,), 1.0, 100.0)),
    ...     SpeedCurve(Monomials((1.5,), (0,), (1,), 1.0, 100.0)), (80.0, 110.0))
    >>> worn = degraded_map(new, Degradation(0.95, 0.97, 1.02))
    >>> round(float(worn.head(1.02, 100.0) / new.head(1.0, 100.0)), 6)
    0.95
    """
    if degradation.is_as_new:
        return compressor_map
    d = degradation
    return replace(
        compressor_map,
        head_surface=_scaled(compressor_map.head_surface, d.head_factor, d.flow_factor),
        efficiency_surface=_scaled(compressor_map.efficiency_surface, d.efficiency_factor,
                                   d.flow_factor),
        surge_line=_boundary(compressor_map.surge_line, d),
        stonewall_line=_boundary(compressor_map.stonewall_line, d),
        source=(f"{compressor_map.source}; degraded: head x{d.head_factor:.4f}, efficiency "
                f"x{d.efficiency_factor:.4f}, flow x{d.flow_factor:.4f}"),
    )
