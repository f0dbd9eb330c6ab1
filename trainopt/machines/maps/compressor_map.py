"""The fitted compressor map: head and efficiency against flow and speed, vectorised.

A :class:`CompressorMap` answers, for numpy arrays that broadcast together, the head and
efficiency at (flow, speed), the speed for (flow, head), the flow for (speed, head), and
the surge, surge-control and stonewall flows at a speed or at a head. Inside, flow is the
actual inlet volume flow Q [m³/s], speed N [1/s], head H [J/kg] on the map's declared
:class:`HeadBasis`, efficiency on the same basis [-].

Forward evaluations (head, efficiency, boundary flow at a speed) extrapolate outside the
tested range and then warn with a :class:`MapRangeWarning` that says by how much; pass
``warn=False`` to evaluate silently and use :meth:`CompressorMap.in_tested_range` to ask.
Inverse evaluations (speed for, flow for, boundary flow at a head) answer only inside the
tested domain and return NaN where no solution lies there.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, replace

import numpy as np

from trainopt.errors import TrainoptWarning
from trainopt.machines.maps.roots import RANGE_TOLERANCE as _RANGE_TOLERANCE
from trainopt.machines.maps.roots import solve_monotone as _solve_monotone
from trainopt.physics.compression import HeadBasis  # one enum for maps and compression

DEFAULT_CONTROL_LINE_OFFSET = 0.10
"""Surge control line offset, as a fraction of the surge flow at the same head [-].

10 % of surge flow is common practice for the margin an anti-surge controller keeps;
each unit may set its own."""


class MapRangeWarning(TrainoptWarning):
    """A map was evaluated outside its tested speed or flow range."""


@dataclass(frozen=True, eq=False)
class Monomials:
    """A sum of monomials in reduced flow and speed.

    ``value = scale * sum_m c_m (Q / flow_ref)**a_m (N / speed_ref)**b_m``, with integer
    powers ``a_m >= 0`` and ``b_m`` of either sign.

    Parameters
    ----------
    coefficients : tuple of float
        The coefficients ``c_m`` [-].
    flow_powers, speed_powers : tuple of int
        The powers ``a_m`` and ``b_m``.
    flow_ref : float
        Reference flow [m³/s].
    speed_ref : float
        Reference speed [1/s].
    scale : float
        Unit of the value (J/kg for head, 1 for efficiency, m³/s for a flow).
    """

    coefficients: tuple[float, ...]
    flow_powers: tuple[int, ...]
    speed_powers: tuple[int, ...]
    flow_ref: float
    speed_ref: float
    scale: float = 1.0

    def __call__(self, flow, speed) -> np.ndarray:
        """Evaluate at flow [m³/s] and speed [1/s] (arrays broadcast)."""
        q = np.asarray(flow, dtype=float)[..., None] / self.flow_ref
        r = np.asarray(speed, dtype=float)[..., None] / self.speed_ref
        terms = np.asarray(self.coefficients) * q ** np.asarray(self.flow_powers)
        return self.scale * np.sum(terms * r ** np.asarray(self.speed_powers, dtype=float), axis=-1)

    def in_flow(self, speed) -> np.ndarray:
        """Coefficients ``P_j(N)`` of ``value = sum_j P_j Q**j`` at a speed.

        Returns
        -------
        numpy.ndarray
            Shape ``(max flow power + 1,) + speed.shape``; ``P_j`` in value units / (m³/s)^j.
        """
        r = np.asarray(speed, dtype=float) / self.speed_ref
        result = np.zeros((max(self.flow_powers) + 1,) + r.shape)
        for c, a, b in zip(self.coefficients, self.flow_powers, self.speed_powers, strict=True):
            result[a] += self.scale * c * r ** float(b) / self.flow_ref**a
        return result

    def similar(self, ratio: float, value_power: int) -> Monomials:
        """Return the surface seen at flow and speed scaled by ``ratio``.

        That is ``f'(Q, N) = ratio**-value_power * f(ratio Q, ratio N)``, again a sum of the
        same monomials.
        """
        factor = [
            c * ratio ** (a + b - value_power)
            for c, a, b in zip(self.coefficients, self.flow_powers, self.speed_powers, strict=True)
        ]
        return replace(self, coefficients=tuple(factor))


@dataclass(frozen=True, eq=False)
class SpeedCurve:
    """A boundary line (surge or stonewall) given as its flow against speed.

    Parameters
    ----------
    flow : Monomials
        Boundary flow [m³/s] as a function of speed (its flow powers are all zero).
    """

    flow: Monomials

    def flow_at_speed(self, head_surface: Monomials, speed) -> np.ndarray:
        """Boundary flow [m³/s] at speed [1/s]."""
        return self.flow(0.0, speed)

    def similar(self, ratio: float) -> SpeedCurve:
        """Return the line under flow and speed scaled by ``ratio`` (see ``Monomials.similar``)."""
        return SpeedCurve(self.flow.similar(ratio, 1))


@dataclass(frozen=True, eq=False)
class HeadCurve:
    """A boundary line given as head against flow, ``H = c0 + c1 Q + c2 Q²``.

    This is how GasLib publishes surge and choke lines. The boundary flow at a speed is where
    the speed line (quadratic in flow) meets this curve, in closed form.

    Parameters
    ----------
    coefficients : tuple of float
        ``(c0, c1, c2)`` in J/kg, J/kg/(m³/s), J/kg/(m³/s)².
    """

    coefficients: tuple[float, float, float]

    def head(self, flow) -> np.ndarray:
        """Head of the line [J/kg] at flow [m³/s]."""
        c0, c1, c2 = self.coefficients
        flow = np.asarray(flow, dtype=float)
        return c0 + c1 * flow + c2 * flow**2

    def flow_at_speed(self, head_surface: Monomials, speed) -> np.ndarray:
        """Flow [m³/s] where the speed line at speed [1/s] meets this curve.

        The difference ``D(Q) = a + b Q + c Q²`` between speed line and curve is taken at
        its root where the speed line passes from above the curve to below it
        (``D' < 0``): ``Q = 2a / (-b + sqrt(b² - 4ac))``, which also holds for ``c = 0``.
        """
        p = head_surface.in_flow(speed)
        if p.shape[0] > 3:
            raise ValueError("a head curve boundary needs a head surface quadratic in flow")
        p = np.concatenate([p, np.zeros((3 - p.shape[0],) + p.shape[1:])])
        a, b, c = (p[j] - self.coefficients[j] for j in range(3))
        root = np.sqrt(np.where(b * b - 4 * a * c >= 0, b * b - 4 * a * c, np.nan))
        with np.errstate(divide="ignore", invalid="ignore"):
            flow = 2 * a / (root - b)
        return np.where(flow > 0, flow, np.nan)

    def similar(self, ratio: float) -> HeadCurve:
        """Return the curve with flow and speed scaled by s = ``ratio``: ``H' = H(s Q) / s²``."""
        c0, c1, c2 = self.coefficients
        return HeadCurve((c0 / ratio**2, c1 / ratio, c2))


BoundaryLine = SpeedCurve | HeadCurve


@dataclass(frozen=True, eq=False)
class CompressorMap:
    """Head and efficiency of one centrifugal compressor (section) against flow and speed.

    Build one with :func:`trainopt.machines.maps.load_map` (a map file, fitted) or
    :func:`trainopt.machines.maps.map_from_coefficients` (a published fit). All methods accept
    numpy arrays that broadcast together and return arrays of the broadcast shape
    (numpy scalars for scalar input).

    Parameters
    ----------
    name : str
        Name for messages and reports.
    basis : HeadBasis
        Basis of head and efficiency.
    head_surface : Monomials
        Head [J/kg] against flow [m³/s] and speed [1/s].
    efficiency_surface : Monomials
        Efficiency [-] against flow and speed, on ``basis``.
    surge_line, stonewall_line : SpeedCurve or HeadCurve
        The left and right boundaries of the tested flow range.
    speed_range : tuple of float
        Lowest and highest tested speed [1/s].
    source : str
        Where the map came from (file or publication), for messages.

    Notes
    -----
    The tested domain is ``speed_min <= N <= speed_max`` and
    ``Q_surge(N) <= Q <= Q_stonewall(N)``. Within it the map is checked, when built, to
    give head rising with speed at a fixed flow, surge, peak and stonewall heads rising
    with speed, surge and stonewall flows rising with speed, and efficiency in (0, 1]; the
    inverse evaluations rely on this. Head may be flat or rise with flow between the surge
    flow and the peak of a speed line (:mod:`trainopt.machines.maps.shape`).
    """

    name: str
    basis: HeadBasis
    head_surface: Monomials
    efficiency_surface: Monomials
    surge_line: BoundaryLine
    stonewall_line: BoundaryLine
    speed_range: tuple[float, float]
    source: str = ""

    @property
    def speed_min(self) -> float:
        """Lowest tested speed [1/s]."""
        return self.speed_range[0]

    @property
    def speed_max(self) -> float:
        """Highest tested speed [1/s]."""
        return self.speed_range[1]

    # forward evaluations -------------------------------------------------------------

    def head(self, flow, speed, *, warn: bool = True) -> np.ndarray:
        """Head [J/kg] at actual inlet flow [m³/s] and speed [1/s]; warns outside the range."""
        if warn:
            self._warn_outside(flow, speed)
        return _out(self.head_surface(flow, speed))

    def efficiency(self, flow, speed, *, warn: bool = True) -> np.ndarray:
        """Efficiency [-] at flow [m³/s] and speed [1/s], on the map's basis."""
        if warn:
            self._warn_outside(flow, speed)
        return _out(self.efficiency_surface(flow, speed))

    def surge_flow_at_speed(self, speed, *, warn: bool = True) -> np.ndarray:
        """Surge flow [m³/s] on the speed line at speed [1/s]."""
        if warn:
            self._warn_outside(None, speed)
        return _out(self.surge_line.flow_at_speed(self.head_surface, speed))

    def stonewall_flow_at_speed(self, speed, *, warn: bool = True) -> np.ndarray:
        """Stonewall flow [m³/s] on the speed line at speed [1/s]."""
        if warn:
            self._warn_outside(None, speed)
        return _out(self.stonewall_line.flow_at_speed(self.head_surface, speed))

    # inverse evaluations (tested domain only, NaN elsewhere) -------------------------

    def surge_flow_at_head(self, head, *, extend: bool = False) -> np.ndarray:
        """Surge flow [m³/s] at head [J/kg]; NaN outside the surge heads of the tested speeds.

        With ``extend``, outside them the fan-law parabola through the end surge point
        (see :func:`trainopt.machines.maps.least_flow.surge_flow_extended`).
        """
        if extend:
            from trainopt.machines.maps.least_flow import surge_flow_extended

            return _out(surge_flow_extended(self, head)[0])
        return _out(self._boundary_flow_at_head(self.surge_line, head))

    def stonewall_flow_at_head(self, head) -> np.ndarray:
        """Stonewall flow [m³/s] at head [J/kg]; NaN outside the tested speeds."""
        return _out(self._boundary_flow_at_head(self.stonewall_line, head))

    def control_line_flow_at_head(
        self, head, offset=DEFAULT_CONTROL_LINE_OFFSET, rule=None, *, extend: bool = False
    ) -> np.ndarray:
        """Surge control line flow ``(1 + offset) Q_least(H)`` [m³/s] at head [J/kg].

        Parameters
        ----------
        head : array_like
            Head [J/kg].
        offset : array_like
            Control line offset as a fraction of the least flow at the same head [-];
            default 0.10 (common practice).
        rule : LeastFlowRule or str, optional
            Which line sets the least flow ``Q_least``: the surge line (default), the
            speed-line peak, or the larger (see :meth:`control_line`).
        extend : bool
            Extend the lines below and above their tested heads by the fan-law parabola
            (see :func:`trainopt.machines.maps.least_flow.surge_flow_extended`).
        """
        return _out(self.control_line(head, offset, rule, extend=extend).flow)

    def control_line(
        self, head, offset=DEFAULT_CONTROL_LINE_OFFSET, rule=None, *, extend: bool = False
    ):
        """The surge control line at head [J/kg] under a least-flow rule, and what binds.

        Returns
        -------
        trainopt.machines.maps.least_flow.ControlLine
            Control line flow, surge and peak flows [m³/s], which line binds and whether the
            value was extrapolated; see :func:`trainopt.machines.maps.least_flow.control_line`.
        """
        from trainopt.machines.maps.least_flow import LeastFlowRule, control_line

        return control_line(
            self, head, offset, LeastFlowRule.SURGE_LINE if rule is None else rule, extend=extend
        )

    def peak_flow_at_speed(self, speed) -> np.ndarray:
        """Flow [m³/s] of the highest head on the speed line at speed [1/s].

        The surge flow where head falls with flow all along the line.
        """
        from trainopt.machines.maps.least_flow import peak_flow_at_speed

        return _out(peak_flow_at_speed(self, speed))

    def peak_flow_at_head(self, head) -> np.ndarray:
        """Flow [m³/s] of the speed-line peak whose head is ``head`` [J/kg].

        NaN outside the peak heads of the tested speeds.
        """
        from trainopt.machines.maps.least_flow import peak_flow_at_head

        return _out(peak_flow_at_head(self, head))

    def flow_for(self, speed, head) -> np.ndarray:
        """Flow [m³/s] giving head [J/kg] at speed [1/s] on the stable part of the line.

        Notes
        -----
        The answer lies between the peak of the speed line (its surge flow where head falls
        all along it) and its stonewall flow, where head falls with flow, so it is unique;
        where a line rises right of its surge flow, a head between the surge and peak heads
        is also met left of the peak, and that second flow is not returned. NaN where no
        flow in that range gives the head.
        """
        from trainopt.machines.maps.least_flow import peak_flow_at_speed

        speed, head = np.broadcast_arrays(np.asarray(speed, float), np.asarray(head, float))
        inside = self._speed_inside(speed)
        speed = np.where(inside, speed, np.nan)
        low = peak_flow_at_speed(self, speed)
        high = self.stonewall_line.flow_at_speed(self.head_surface, speed)
        flow = _solve_monotone(lambda q: self.head_surface(q, speed) - head, low, high, head)
        return _out(flow)

    def speed_for(self, flow, head) -> np.ndarray:
        """Speed [1/s] giving head [J/kg] at flow [m³/s] inside the tested domain; else NaN.

        Notes
        -----
        At a given flow the tested domain spans the speeds between the one whose stonewall
        flow equals it (or ``speed_min``) and the one whose surge flow equals it (or
        ``speed_max``); head rises with speed there, so the root is unique.
        """
        flow, head = np.broadcast_arrays(np.asarray(flow, float), np.asarray(head, float))
        low = self._speed_where_boundary_flow(self.stonewall_line, flow, beyond_high=np.nan)
        high = self._speed_where_boundary_flow(self.surge_line, flow, beyond_low=np.nan)
        low = np.where(low <= high, low, np.nan)
        speed = _solve_monotone(lambda n: self.head_surface(flow, n) - head, low, high, head)
        return _out(speed)

    # tested range ----------------------------------------------------------------------

    def in_tested_range(self, flow, speed) -> np.ndarray:
        """Tell where (flow [m³/s], speed [1/s]) lies inside the tested domain (bool array)."""
        excess = self._excess(flow, speed)
        return np.all([e <= _RANGE_TOLERANCE for e in excess.values()], axis=0)[()]

    def mach_similar(self, sound_speed_ratio: float) -> CompressorMap:
        """Apply the map where the inlet sound speed differs from the test's (Mach similarity).

        Parameters
        ----------
        sound_speed_ratio : float
            Inlet sound speed of the test divided by that of the service, ``a_test / a`` [-].

        Returns
        -------
        CompressorMap
            The map at equal machine Mach number and flow coefficient:
            ``H(Q, N) = s**-2 H_test(s Q, s N)``, ``eta(Q, N) = eta_test(s Q, s N)``,
            ``Q_boundary(N) = Q_boundary,test(s N) / s`` and tested speeds divided by ``s``,
            where ``s = a_test / a``. See docs/maps.md for when to use it.
        """
        s = float(sound_speed_ratio)
        if not s > 0:
            raise ValueError(f"sound speed ratio must be positive, got {s!r}")
        return replace(
            self,
            head_surface=self.head_surface.similar(s, 2),
            efficiency_surface=self.efficiency_surface.similar(s, 0),
            surge_line=self.surge_line.similar(s),
            stonewall_line=self.stonewall_line.similar(s),
            speed_range=(self.speed_min / s, self.speed_max / s),
        )

    def tested_grid(self, speeds=41, flows: int = 41) -> tuple[np.ndarray, np.ndarray]:
        """Flows and speeds on a grid over the tested domain.

        Parameters
        ----------
        speeds : int or array_like
            Number of speeds across the tested range, or the speeds themselves [1/s].
        flows : int
            Number of flows on each speed line, from its surge to its stonewall flow.

        Returns
        -------
        flow, speed : numpy.ndarray
            Flow [m³/s] of shape ``(len(speeds), flows)`` and speed [1/s] of shape
            ``(len(speeds), 1)``; each row is one speed line.
        """
        if np.ndim(speeds) == 0:
            speeds = np.linspace(self.speed_min, self.speed_max, int(speeds))
        speed = np.asarray(speeds, dtype=float).reshape(-1, 1)
        surge = self.surge_line.flow_at_speed(self.head_surface, speed)
        stonewall = self.stonewall_line.flow_at_speed(self.head_surface, speed)
        return surge + (stonewall - surge) * np.linspace(0.0, 1.0, flows), speed

    # helpers ---------------------------------------------------------------------------

    def _speed_inside(self, speed) -> np.ndarray:
        slack = _RANGE_TOLERANCE * self.speed_max
        return (speed >= self.speed_min - slack) & (speed <= self.speed_max + slack)

    def _boundary_flow_at_head(self, line: BoundaryLine, head) -> np.ndarray:
        head = np.asarray(head, dtype=float)

        def boundary_head(speed):
            return self.head_surface(line.flow_at_speed(self.head_surface, speed), speed) - head

        lo, hi = np.full(head.shape, self.speed_min), np.full(head.shape, self.speed_max)
        speed = _solve_monotone(boundary_head, lo, hi, head)
        return line.flow_at_speed(self.head_surface, speed)

    def _speed_where_boundary_flow(
        self, line: BoundaryLine, flow, *, beyond_low=None, beyond_high=None
    ) -> np.ndarray:
        """Speed in the tested range where a boundary passes through flow.

        Where the boundary lies right of ``flow`` already at ``speed_min`` the answer is
        ``speed_min`` (or ``beyond_low``); where it lies left of it still at ``speed_max``
        the answer is ``speed_max`` (or ``beyond_high``).
        """
        lo, hi = np.full(flow.shape, self.speed_min), np.full(flow.shape, self.speed_max)
        at_lo = line.flow_at_speed(self.head_surface, lo)
        at_hi = line.flow_at_speed(self.head_surface, hi)
        speed = _solve_monotone(
            lambda n: line.flow_at_speed(self.head_surface, n) - flow, lo, hi, flow
        )
        below = flow < at_lo * (1 - _RANGE_TOLERANCE)
        above = flow > at_hi * (1 + _RANGE_TOLERANCE)
        speed = np.where(below, lo if beyond_low is None else beyond_low, speed)
        return np.where(above, hi if beyond_high is None else beyond_high, speed)

    def _excess(self, flow, speed) -> dict[str, np.ndarray]:
        """Relative distance [-] outside each edge of the tested range (0 inside)."""
        speed = np.asarray(speed, dtype=float)
        result = {
            "below the lowest tested speed": (self.speed_min - speed) / self.speed_min,
            "above the highest tested speed": (speed - self.speed_max) / self.speed_max,
        }
        if flow is not None:
            flow = np.asarray(flow, dtype=float)
            surge = self.surge_line.flow_at_speed(self.head_surface, speed)
            stonewall = self.stonewall_line.flow_at_speed(self.head_surface, speed)
            result["left of the surge flow"] = (surge - flow) / surge
            result["right of the stonewall flow"] = (flow - stonewall) / stonewall
        shape = np.broadcast_shapes(*(np.shape(v) for v in result.values()))
        return {
            k: np.broadcast_to(np.nan_to_num(np.maximum(v, 0.0)), shape) for k, v in result.items()
        }

    def _warn_outside(self, flow, speed) -> None:
        excess = self._excess(flow, speed)
        outside = np.any([e > _RANGE_TOLERANCE for e in excess.values()], axis=0)
        if not np.any(outside):
            return
        parts = [
            f"up to {100 * e.max():.3g} % {edge}"
            for edge, e in excess.items()
            if np.any(e > _RANGE_TOLERANCE)
        ]
        warnings.warn(
            f"map {self.name!r}: {np.count_nonzero(outside)} of {outside.size} queries lie "
            f"outside the tested range ({self.speed_min * 60:.0f}-{self.speed_max * 60:.0f} "
            f"rpm), extrapolated: {'; '.join(parts)}",
            MapRangeWarning,
            stacklevel=3,
        )


def _out(values) -> np.ndarray:
    """Numpy scalar for 0-d results, the array otherwise."""
    values = np.asarray(values, dtype=float)
    return values[()] if values.ndim == 0 else values
