"""Common part of every driver: how its fields are declared, parsed and bounded, and the base class.

:func:`_param` declares a driver field: how a case file gives it (a :class:`Kind`, a unit
the value must convert to, or a reader), its bounds in SI, an example and its default.
:class:`Driver` holds the gearbox and mechanical losses, checks every field against its
bounds on construction, and answers the two questions of every driver
(``available_shaft_power``, ``energy_input``) from the curves that each kind supplies
(:mod:`~trainopt.machines.drivers.motors`, :mod:`~trainopt.machines.drivers.turbines`).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np
import pint
from numpy.typing import ArrayLike

from trainopt.errors import InputError, PhysicsError
from trainopt.physics.units import Kind, parse_quantity, ureg

ISO_AMBIENT_TEMPERATURE = 288.15
"""Ambient temperature of the ISO rating of gas turbines [K] (15 °C; ISO 2314, ISO 3977-2)."""

DEFAULT_MECHANICAL_EFFICIENCY = 0.985
"""Default gearbox-and-bearings efficiency [-] (from memory: single-stage gearbox and bearings)."""

_SPEED_TOLERANCE = 1e-9  # relative slack on speed-range ends, so computed speeds still match


def _ratio(unit: str, example: str) -> Callable[[object, str], float]:
    """Parse a value that must carry a unit, e.g. a heat rate, into ``unit``."""

    def parse(text: object, name: str) -> float:
        try:
            quantity = ureg.Quantity(str(text).replace("%", "percent"))
            if not isinstance(text, str) or quantity.units == ureg.dimensionless:
                raise ValueError("no unit")
            value = float(quantity.to(unit).magnitude)
        except (pint.errors.PintError, ValueError, TypeError, AttributeError, AssertionError):
            problem = f"cannot read {text!r} with its unit"
            raise InputError(name, problem, f"e.g. {example}") from None
        if not math.isfinite(value):
            raise InputError(name, f"{text!r} is not a finite number")
        return value

    return parse


def _coefficients(count: int) -> Callable[[object, str], tuple[float, ...]]:
    def parse(values: object, name: str) -> tuple[float, ...]:
        try:
            result = () if isinstance(values, str) else tuple(float(v) for v in values)
        except (TypeError, ValueError):
            result = ()
        if len(result) != count or not all(map(math.isfinite, result)):
            raise InputError(
                name, f"expected a list of {count} finite numbers, got {values!r}",
                "give the published coefficients in order, c1 first",
            )
        return result

    return parse


def _param(
    parse: Kind | str | Callable[[object, str], Any],
    bounds: str,
    example: str,
    default: Any = dataclasses.MISSING,
):
    """Declare a driver field: how a case file gives it, its bounds, an example, its default.

    ``parse`` is a :class:`Kind` (read with :func:`parse_quantity`), a unit that the value
    must convert to (e.g. ``"1/K"``; ``""`` for a ratio of like quantities), or a reader.
    ``bounds`` is an interval such as ``"(0, 1]"`` in SI, checked on construction.
    """
    if isinstance(parse, Kind):
        kind, unit = parse, parse.value.strip()
        parse = lambda text, name: parse_quantity(text, kind, name)  # noqa: E731
    elif isinstance(parse, str):
        parse, unit = _ratio(parse, example), parse or "J/J"
    else:
        unit = ""
    unit = "" if unit == "dimensionless" else f" {unit}"
    return field(
        default=default,
        metadata={"parse": parse, "unit": unit, "bounds": bounds, "example": example},
    )


def _within(value: float, bounds: str) -> bool:
    low, high = (float(end) for end in bounds[1:-1].split(","))
    above = value > low if bounds[0] == "(" else value >= low
    return above and (value < high if bounds[-1] == ")" else value <= high)


def _require(ok: bool, name: str, problem: str, fix: str) -> None:
    if not ok:
        raise InputError(name, problem, fix)


def _rpm(speed: float) -> str:
    return f"{speed * 60.0:.6g} rpm"


def _broadcast(values: ArrayLike, *arrays: ArrayLike) -> np.ndarray:
    """Return ``values`` spread to the broadcast shape of ``values`` and ``arrays``."""
    return values * np.ones(np.broadcast(values, *arrays).shape)


def _result(values: ArrayLike) -> np.ndarray | float:
    """Return a 0-d result as a numpy float, anything else as an array."""
    return np.asarray(values, dtype=float)[()]


@dataclass(frozen=True, kw_only=True)
class Driver:
    """Common part of every driver: gearbox, mechanical losses and the two questions.

    A base class: use one of the kinds in :data:`~trainopt.machines.drivers.DRIVER_KINDS`.

    Parameters
    ----------
    gear_ratio : float
        Compressor speed / driver speed [-]; 1 for a direct drive.
    mechanical_efficiency : float
        Gearbox and bearings: compressor shaft power / driver output power [-], in (0, 1].
    """

    kind: ClassVar[str] = ""
    gear_ratio: float = _param(Kind.DIMENSIONLESS, "(0, inf)", "'1' or '7.2'", 1.0)
    mechanical_efficiency: float = _param(
        Kind.DIMENSIONLESS, "(0, 1]", "'0.985' or '98.5 %'", DEFAULT_MECHANICAL_EFFICIENCY
    )

    def __post_init__(self) -> None:
        for spec in dataclasses.fields(self):
            value, meta = getattr(self, spec.name), spec.metadata
            if value is not None and meta["bounds"] and not _within(value, meta["bounds"]):
                raise InputError(
                    spec.name, f"{value:g}{meta['unit']} is outside {meta['bounds']}",
                    f"give a value in that range, e.g. {meta['example']}",
                )
        low, high = self.driver_speed_min, self.driver_speed_max
        _require(
            low <= high, "driver_speed_min",
            f"minimum speed {_rpm(low)} is above maximum speed {_rpm(high)}",
            "swap driver_speed_min and driver_speed_max, or correct one of them",
        )

    @property
    def speed_min(self) -> float:
        """Least compressor-shaft speed the driver can run at [1/s]."""
        return self.driver_speed_min * self.gear_ratio

    @property
    def speed_max(self) -> float:
        """Greatest compressor-shaft speed the driver can run at [1/s]."""
        return self.driver_speed_max * self.gear_ratio

    def _inside(self, speed: np.ndarray) -> np.ndarray:
        return (speed >= self.speed_min * (1 - _SPEED_TOLERANCE)) & (
            speed <= self.speed_max * (1 + _SPEED_TOLERANCE)
        )

    def available_shaft_power(
        self, speed: ArrayLike, ambient_temperature: ArrayLike = ISO_AMBIENT_TEMPERATURE
    ) -> np.ndarray | float:
        """Return the most power the driver can put on the compressor shaft.

        Parameters
        ----------
        speed : array_like
            Compressor-shaft speed [1/s].
        ambient_temperature : array_like, optional
            Ambient air temperature [K]; used by gas turbines only. Default 288.15 K.

        Returns
        -------
        float or numpy.ndarray
            Available shaft power at the compressor, after gearbox and bearings [W];
            0 outside the speed range.
        """
        speed = np.asarray(speed, dtype=float)
        power = self._power_limit(speed / self.gear_ratio, np.asarray(ambient_temperature, float))
        power = np.maximum(power, 0.0) * self.mechanical_efficiency
        return _result(np.where(self._inside(speed), power, 0.0))

    def energy_input(
        self,
        shaft_power: ArrayLike,
        speed: ArrayLike,
        ambient_temperature: ArrayLike = ISO_AMBIENT_TEMPERATURE,
    ) -> np.ndarray | float:
        """Return the energy rate the driver draws to deliver a compressor shaft power.

        Parameters
        ----------
        shaft_power : array_like
            Power into the compressor shaft [W], not negative. It is not checked against
            :meth:`available_shaft_power`; that is the caller's limit to enforce.
        speed : array_like
            Compressor-shaft speed [1/s].
        ambient_temperature : array_like, optional
            Ambient air temperature [K]; used by gas turbines only. Default 288.15 K.

        Returns
        -------
        float or numpy.ndarray
            Fuel energy rate on LHV basis (gas turbines), steam energy rate (steam
            turbines) or electrical input power (motors) [W]; NaN outside the speed range.

        Raises
        ------
        PhysicsError
            If a shaft power is negative.
        """
        shaft_power = np.asarray(shaft_power, dtype=float)
        if np.any(shaft_power < 0):
            raise PhysicsError(f"{self.kind}: shaft power must not be negative")
        speed = np.asarray(speed, dtype=float)
        energy = self._energy(
            shaft_power / self.mechanical_efficiency,
            speed / self.gear_ratio,
            np.asarray(ambient_temperature, float),
        )
        return _result(np.where(self._inside(speed), energy, np.nan))

    def _power_limit(self, driver_speed: np.ndarray, ambient: np.ndarray) -> np.ndarray:
        """Most power at the driver's output shaft [W]."""
        raise NotImplementedError

    def _energy(self, power: np.ndarray, driver_speed: np.ndarray, ambient: np.ndarray):
        """Energy rate for a driver output power [W]."""
        raise NotImplementedError
