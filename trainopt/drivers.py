"""Drivers of centrifugal compressors: what shaft power they give and what energy they take.

Four kinds, each a small frozen dataclass: :class:`FixedSpeedMotor`,
:class:`VariableSpeedMotor`, :class:`GasTurbine` (two-shaft, free power turbine),
:class:`SteamTurbine`, plus :class:`PolynomialGasTurbine` for gas turbines published as
coefficients in the GasLib layout (illustrative). Each answers two questions, vectorised
over numpy arrays:

- ``available_shaft_power(speed, ambient_temperature)``: the most power the compressor
  shaft can take at that compressor speed and ambient, after gearbox and bearings [W];
- ``energy_input(shaft_power, speed, ambient_temperature)``: the energy rate the driver
  draws to put that power on the compressor shaft [W]: fuel on a lower-heating-value basis
  for gas turbines, steam flow times enthalpy drop for steam turbines, electrical power at
  the supply terminals for motors.

Speeds given to these methods are compressor-shaft speeds [1/s]; the dataclass fields
named ``driver_speed_*``, ``rated_speed``, ``optimum_speed`` and ``base_speed`` are speeds
of the driver's own output shaft. ``gear_ratio`` is compressor speed / driver speed, and
``mechanical_efficiency`` covers gearbox and bearings. Outside its speed range a driver
gives no power (``available_shaft_power`` is 0) and its energy input is NaN.

The curves are typical shapes (sources in each class's Notes and in docs/drivers.md);
vendor data take precedence wherever they exist.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np
import pint
from numpy.typing import ArrayLike

from trainopt.errors import InputError, PhysicsError
from trainopt.units import STANDARD_ATMOSPHERE, Kind, atmospheric_pressure, parse_quantity, ureg

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

    A base class: use one of the kinds in :data:`DRIVER_KINDS`.

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


@dataclass(frozen=True, kw_only=True)
class _Motor(Driver):
    rated_power: float = _param(Kind.POWER, "(0, inf)", "'5 MW'")
    rated_efficiency: float = _param(Kind.DIMENSIONLESS, "(0, 1]", "'96 %'", 0.96)
    constant_loss_fraction: float = _param(Kind.DIMENSIONLESS, "[0, 1]", "'0.35'", 0.35)

    def efficiency(self, load_fraction: ArrayLike) -> np.ndarray | float:
        """Return the electrical efficiency at a load fraction.

        Parameters
        ----------
        load_fraction : array_like
            Motor output power / rated power [-], above 0.

        Returns
        -------
        float or numpy.ndarray
            Output power / electrical input power [-].

        Notes
        -----
        Losses are a constant part (iron, friction, windage; and for a drive, its standing
        losses) and a part growing with the square of load (copper):
        ``losses = L_r (f + (1 - f) x²)``, ``L_r = P_r (1/η_r - 1)``, x the load fraction.
        Efficiency peaks where the two parts are equal, at ``x = sqrt(f / (1 - f))``
        (textbook result for electrical machines, common practice).
        """
        load = np.asarray(load_fraction, dtype=float)
        power = load * self.rated_power
        return _result(power / self._energy(power, None, None))

    def _energy(self, power, driver_speed, ambient):
        full_load_losses = self.rated_power * (1 / self.rated_efficiency - 1)
        load = power / self.rated_power
        f = self.constant_loss_fraction
        return power + full_load_losses * (f + (1 - f) * load**2)


@dataclass(frozen=True, kw_only=True)
class FixedSpeedMotor(_Motor):
    """Electric motor on the grid at one speed (induction or synchronous).

    Parameters
    ----------
    rated_power : float
        Rated output power at the motor shaft [W].
    rated_speed : float
        Motor shaft speed [1/s] (e.g. 1490 rpm for a 4-pole motor at 50 Hz).
    rated_efficiency : float
        Efficiency at rated load [-]; default 0.96.
    constant_loss_fraction : float
        Share of full-load losses that does not vary with load [-]; default 0.35.
    service_factor : float
        Permitted continuous overload: available power = rated power x service factor [-];
        default 1.0.
    gear_ratio, mechanical_efficiency : float
        See :class:`Driver`.

    Notes
    -----
    The part-load efficiency curve is the loss model of :meth:`efficiency`; the defaults
    (96 % at full load, 35 % of full-load losses constant, so peak efficiency near 73 %
    load) are from memory for MW-class induction motors. IEC 60034-2-1 gives the test
    methods, not a curve: use the vendor's efficiencies at 50, 75 and 100 % load.
    """

    kind: ClassVar[str] = "fixed_speed_motor"
    rated_speed: float = _param(Kind.SPEED, "(0, inf)", "'1490 rpm'")
    service_factor: float = _param(Kind.DIMENSIONLESS, "[1, 2]", "'1.0' or '1.15'", 1.0)
    driver_speed_min = property(lambda self: self.rated_speed)
    driver_speed_max = property(lambda self: self.rated_speed)

    def _power_limit(self, driver_speed, ambient):
        return _broadcast(self.rated_power * self.service_factor, driver_speed, ambient)


@dataclass(frozen=True, kw_only=True)
class VariableSpeedMotor(_Motor):
    """Electric motor fed by a variable-frequency drive.

    Parameters
    ----------
    rated_power : float
        Rated output power at the motor shaft [W].
    driver_speed_min, driver_speed_max : float
        Motor speed range [1/s].
    base_speed : float or None
        Motor speed below which the drive gives constant torque, so available power falls
        in proportion to speed [1/s]; None (default) for rated power across the range.
    rated_efficiency : float
        Motor x drive efficiency at rated load [-]; default 0.94.
    constant_loss_fraction : float
        See :class:`FixedSpeedMotor`.
    gear_ratio, mechanical_efficiency : float
        See :class:`Driver`.

    Notes
    -----
    Available power: ``P_r min(1, n / n_base)`` (constant torque below base speed,
    constant power above; common practice). Efficiency: the loss model of
    :meth:`efficiency` for motor and drive together, independent of speed; the default
    0.94 is from memory (about 0.965 motor x 0.975 drive).
    """

    kind: ClassVar[str] = "variable_speed_motor"
    driver_speed_min: float = _param(Kind.SPEED, "(0, inf)", "'900 rpm'")
    driver_speed_max: float = _param(Kind.SPEED, "(0, inf)", "'1800 rpm'")
    base_speed: float | None = _param(Kind.SPEED, "(0, inf)", "'1500 rpm'", None)
    rated_efficiency: float = _param(Kind.DIMENSIONLESS, "(0, 1]", "'94 %'", 0.94)

    def _power_limit(self, driver_speed, ambient):
        derate = 1.0 if self.base_speed is None else np.minimum(1.0, driver_speed / self.base_speed)
        return _broadcast(self.rated_power * derate, driver_speed, ambient)


class _FuelBurning:
    def fuel_mass_flow(
        self,
        shaft_power: ArrayLike,
        speed: ArrayLike,
        ambient_temperature: ArrayLike,
        fuel_lower_heating_value: float,
    ) -> np.ndarray | float:
        """Return the fuel mass flow for a compressor shaft power.

        Parameters
        ----------
        shaft_power : array_like
            Power into the compressor shaft [W].
        speed : array_like
            Compressor-shaft speed [1/s].
        ambient_temperature : array_like
            Ambient air temperature [K].
        fuel_lower_heating_value : float
            Lower heating value of the fuel gas [J/kg].

        Returns
        -------
        float or numpy.ndarray
            Fuel mass flow [kg/s]: :meth:`energy_input` / LHV.
        """
        _require(
            fuel_lower_heating_value > 0, "fuel_lower_heating_value",
            f"{fuel_lower_heating_value:g} J/kg is not positive", "give it in J/kg, e.g. 47e6",
        )
        return self.energy_input(shaft_power, speed, ambient_temperature) / fuel_lower_heating_value


@dataclass(frozen=True, kw_only=True)
class GasTurbine(_FuelBurning, Driver):
    """Two-shaft (free power turbine) industrial gas turbine.

    Parameters
    ----------
    rated_power : float
        Output power at ISO conditions (15 °C, 101.325 kPa, 60 % RH) and optimum speed [W].
    heat_rate : float
        Full-load heat rate at ISO conditions: fuel energy (LHV) / output energy [-]
        (10 500 kJ/kWh is 2.917); thermal efficiency = 1 / heat_rate.
    driver_speed_min, driver_speed_max : float
        Power-turbine speed range [1/s].
    optimum_speed : float
        Power-turbine speed of the rated power, where power is highest [1/s].
    temperature_lapse : float
        Fractional loss of power per kelvin above 15 °C (gain below) [1/K]; default 0.007.
    site_elevation : float
        Site elevation [m]; power scales with standard-atmosphere pressure. Default 0.
    speed_power_coefficient : float
        c in the power-turbine speed parabola [-], in [0, 1]; default 1.0.
    no_load_fuel_fraction : float
        Fuel at zero output / fuel at full output, at the same ambient [-]; default 0.3.
    heat_rate_lapse : float
        Fractional rise of full-load heat rate per kelvin above 15 °C [1/K]; default 0.
    gear_ratio, mechanical_efficiency : float
        See :class:`Driver`.

    Notes
    -----
    With ``θ = T - 288.15 K``, ``x = n / n_opt`` and ``G = P_iso (1 - k θ) p(z) / p_0``
    (gas-generator power expressed at optimum speed):

    - available power ``P_avail = G s(x)``, ``s(x) = 1 - c (x - 1)²``;
    - fuel energy ``E = HR_iso (1 + h θ) [(1 - b) P / s(x) + b G]``, so the part-load
      heat rate is ``HR_full ((1 - b) + b / load)`` and fuel at full throttle is the same
      at any power-turbine speed.

    Sources: ISO 3977-2 / ISO 2314 reference conditions; lapse 0.5-0.9 %/K (common
    practice, default 0.7 %/K); power ∝ ambient pressure with ISO 2533 atmosphere (about
    3.5 % per 1000 ft, common practice); c = 1 is the ideal impulse-stage blade-speed-ratio
    parabola ``x (2 - x)`` (textbook, from memory; real power turbines are flatter, so the
    default is conservative); b = 0.3 from memory, compared in the tests with a published
    typical part-load curve. Vendor curves take precedence.
    """

    kind: ClassVar[str] = "gas_turbine"
    rated_power: float = _param(Kind.POWER, "(0, inf)", "'12 MW'")
    heat_rate: float = _param("", "(1, inf)", "'10500 kJ/kWh' or '9950 Btu/kWh'")
    driver_speed_min: float = _param(Kind.SPEED, "(0, inf)", "'4800 rpm'")
    driver_speed_max: float = _param(Kind.SPEED, "(0, inf)", "'10500 rpm'")
    optimum_speed: float = _param(Kind.SPEED, "(0, inf)", "'9500 rpm'")
    temperature_lapse: float = _param("1/K", "[0, 0.05)", "'0.7 %/K'", 0.007)
    site_elevation: float = _param(Kind.LENGTH, "[-500, 11000]", "'350 m'", 0.0)
    speed_power_coefficient: float = _param(Kind.DIMENSIONLESS, "[0, 1]", "'1.0'", 1.0)
    no_load_fuel_fraction: float = _param(Kind.DIMENSIONLESS, "[0, 1)", "'0.3'", 0.3)
    heat_rate_lapse: float = _param("1/K", "(-0.05, 0.05)", "'0.1 %/K'", 0.0)

    def __post_init__(self) -> None:
        super().__post_init__()
        _require(
            self.driver_speed_min <= self.optimum_speed <= self.driver_speed_max, "optimum_speed",
            f"{_rpm(self.optimum_speed)} is outside the speed range "
            f"{_rpm(self.driver_speed_min)} to {_rpm(self.driver_speed_max)}",
            "give the power-turbine speed of the ISO rating",
        )
        ends = self._speed_factor(np.array([self.driver_speed_min, self.driver_speed_max]))
        _require(
            bool(np.all(ends > 0)), "speed_power_coefficient",
            f"{self.speed_power_coefficient:g} leaves no power at an end of the speed range",
            "lower it, or narrow the speed range",
        )

    @property
    def thermal_efficiency(self) -> float:
        """Full-load thermal efficiency at ISO conditions, 1 / heat rate [-]."""
        return 1.0 / self.heat_rate

    def _gas_generator_power(self, ambient: np.ndarray) -> np.ndarray:
        pressure = atmospheric_pressure(self.site_elevation) / STANDARD_ATMOSPHERE
        theta = ambient - ISO_AMBIENT_TEMPERATURE
        return np.maximum(self.rated_power * (1 - self.temperature_lapse * theta) * pressure, 0)

    def _speed_factor(self, driver_speed: np.ndarray) -> np.ndarray:
        x = driver_speed / self.optimum_speed
        return 1 - self.speed_power_coefficient * (x - 1) ** 2

    def _power_limit(self, driver_speed, ambient):
        return self._gas_generator_power(ambient) * self._speed_factor(driver_speed)

    def _energy(self, power, driver_speed, ambient):
        b = self.no_load_fuel_fraction
        full_load_heat_rate = self.heat_rate * (
            1 + self.heat_rate_lapse * (ambient - ISO_AMBIENT_TEMPERATURE)
        )
        speed_factor = np.maximum(self._speed_factor(driver_speed), 1e-12)
        gas_power = (1 - b) * power / speed_factor + b * self._gas_generator_power(ambient)
        return full_load_heat_rate * gas_power


@dataclass(frozen=True, kw_only=True)
class PolynomialGasTurbine(_FuelBurning, Driver):
    """Gas turbine given as published polynomial coefficients (GasLib layout; illustrative).

    Parameters
    ----------
    power_coefficients : tuple of 9 floats
        ``P_max [kW] = c1 + c2 n + c3 n² + (c4 + c5 n + c6 n²) t + (c7 + c8 n + c9 n²) t²``
        with n the driver speed [1/min] and t the ambient temperature [°C].
    energy_rate_coefficients : tuple of 3 floats
        ``E [kW] = e1 + e2 P + e3 P²`` with P the driver output power [kW].
    driver_speed_min, driver_speed_max : float
        Speed range [1/s].
    gear_ratio, mechanical_efficiency : float
        See :class:`Driver`.

    Notes
    -----
    GasLib (Schmidt et al. 2017, doi:10.3390/data2040040; CC BY 3.0) publishes
    ``power_fun`` and ``energy_rate_fun`` coefficients without stating their layout or the
    temperature unit. The layout above is read from the dataset's compressor fits; °C is
    inferred because it gives the GasLib-135 turbine a power lapse of about 0.6 %/K at
    15 °C, while kelvin would make power rise with temperature. The GasLib-135 energy-rate
    coefficients (0.01, 0, 0) give a constant, not a usable fuel curve. Use this form for
    illustration and comparison only.
    """

    kind: ClassVar[str] = "polynomial_gas_turbine"
    illustrative: ClassVar[bool] = True
    power_coefficients: tuple[float, ...] = _param(_coefficients(9), "", "[c1, ..., c9]")
    energy_rate_coefficients: tuple[float, ...] = _param(_coefficients(3), "", "[e1, e2, e3]")
    driver_speed_min: float = _param(Kind.SPEED, "(0, inf)", "'3419 rpm'")
    driver_speed_max: float = _param(Kind.SPEED, "(0, inf)", "'11999 rpm'")

    def __post_init__(self) -> None:
        super().__post_init__()
        _coefficients(9)(self.power_coefficients, "power_coefficients")
        _coefficients(3)(self.energy_rate_coefficients, "energy_rate_coefficients")

    def _power_limit(self, driver_speed, ambient):
        n, t, c = driver_speed * 60.0, ambient - 273.15, self.power_coefficients
        rows = [c[i] + c[i + 1] * n + c[i + 2] * n**2 for i in (0, 3, 6)]
        return 1e3 * (rows[0] + rows[1] * t + rows[2] * t**2)

    def _energy(self, power, driver_speed, ambient):
        e, kw = self.energy_rate_coefficients, power / 1e3
        return _broadcast(1e3 * (e[0] + e[1] * kw + e[2] * kw**2), driver_speed, ambient)


@dataclass(frozen=True, kw_only=True)
class SteamTurbine(Driver):
    """Mechanical-drive steam turbine with a Willans-line steam consumption.

    Parameters
    ----------
    maximum_power : float
        Power limit at the turbine shaft [W], over the whole speed range.
    driver_speed_min, driver_speed_max : float
        Speed range [1/s].
    full_load_steam_rate : float
        Steam flow per output power at maximum power [kg/J] (case files: '4.5 kg/kWh').
    enthalpy_drop : float
        Energy charged to each kilogram of steam [J/kg]: the isentropic drop from inlet to
        exhaust state, or inlet minus returned-condensate enthalpy, as the cost basis needs.
    no_load_steam_fraction : float
        Steam flow at zero output / steam flow at maximum power [-]; default 0.1.
    gear_ratio, mechanical_efficiency : float
        See :class:`Driver`.

    Notes
    -----
    Willans line (common practice; e.g. any steam-turbine or power-plant textbook):
    ``m = m_0 + (m_full - m_0) P / P_max`` with ``m_full = SR P_max`` and
    ``m_0 = a m_full``; energy input ``m Δh``. The default a = 0.1 is from memory; the
    vendor's steam rates at two loads fix the line. Speed effects are not modelled.
    """

    kind: ClassVar[str] = "steam_turbine"
    maximum_power: float = _param(Kind.POWER, "(0, inf)", "'8 MW'")
    driver_speed_min: float = _param(Kind.SPEED, "(0, inf)", "'6000 rpm'")
    driver_speed_max: float = _param(Kind.SPEED, "(0, inf)", "'10000 rpm'")
    full_load_steam_rate: float = _param("kg/J", "(0, inf)", "'4.5 kg/kWh'")
    enthalpy_drop: float = _param(Kind.HEAD, "(0, inf)", "'900 kJ/kg'")
    no_load_steam_fraction: float = _param(Kind.DIMENSIONLESS, "[0, 1)", "'0.1'", 0.1)

    def __post_init__(self) -> None:
        super().__post_init__()
        _require(
            self.full_load_steam_rate * self.enthalpy_drop > 1, "full_load_steam_rate",
            f"{self.full_load_steam_rate * 3.6e6:g} kg/kWh with an enthalpy drop of "
            f"{self.enthalpy_drop / 1e3:g} kJ/kg would give more power than the steam's energy",
            "check the steam rate (kg/kWh) and the enthalpy drop (kJ/kg)",
        )

    def steam_mass_flow(
        self,
        shaft_power: ArrayLike,
        speed: ArrayLike,
        ambient_temperature: ArrayLike = ISO_AMBIENT_TEMPERATURE,
    ) -> np.ndarray | float:
        """Return the steam mass flow for a compressor shaft power [kg/s].

        Parameters are those of :meth:`energy_input`; the result is it / ``enthalpy_drop``.
        """
        return self.energy_input(shaft_power, speed, ambient_temperature) / self.enthalpy_drop

    def _power_limit(self, driver_speed, ambient):
        return _broadcast(self.maximum_power, driver_speed, ambient)

    def _energy(self, power, driver_speed, ambient):
        full_flow = self.full_load_steam_rate * self.maximum_power
        a = self.no_load_steam_fraction
        flow = full_flow * (a + (1 - a) * power / self.maximum_power)
        return _broadcast(flow * self.enthalpy_drop, driver_speed, ambient)


DRIVER_KINDS: dict[str, type[Driver]] = {
    cls.kind: cls
    for cls in (FixedSpeedMotor, VariableSpeedMotor, GasTurbine, PolynomialGasTurbine, SteamTurbine)
}
"""Driver classes by the ``kind`` name used in case files."""


def driver_from_dict(data: Mapping[str, object], field_prefix: str) -> Driver:
    """Build a driver from a case-file mapping whose quantities carry units.

    Parameters
    ----------
    data : mapping
        ``kind`` (a key of :data:`DRIVER_KINDS`) and the class's fields, e.g.
        ``{"kind": "gas_turbine", "rated_power": "12 MW", "heat_rate": "10500 kJ/kWh", ...}``.
    field_prefix : str
        Key path of the mapping in the case, e.g. ``units.GT1.driver``, for error messages.

    Returns
    -------
    Driver
        The driver, SI inside.

    Raises
    ------
    InputError
        Naming ``<field_prefix>.<field>`` and the fix, for an unknown kind or field, a
        missing field, a bad unit or a value out of range.
    """
    if not isinstance(data, Mapping):
        raise InputError(
            field_prefix, f"expected a mapping of driver fields, got {data!r}",
            "give kind and the fields of that kind, e.g. kind: gas_turbine",
        )
    kind = data.get("kind")
    if kind not in DRIVER_KINDS:
        raise InputError(
            f"{field_prefix}.kind", f"unknown driver kind {kind!r}",
            f"use one of {', '.join(DRIVER_KINDS)}",
        )
    cls = DRIVER_KINDS[kind]
    fields = {f.name: f for f in dataclasses.fields(cls)}
    for key in data:
        _require(
            key == "kind" or key in fields, f"{field_prefix}.{key}",
            f"is not a field of a {kind} driver", f"use one of {', '.join(fields)}",
        )
    values = {}
    for name, spec in fields.items():
        path = f"{field_prefix}.{name}"
        if name in data:
            values[name] = spec.metadata["parse"](data[name], path)
        elif spec.default is dataclasses.MISSING:
            raise InputError(path, "is missing", f"give it, e.g. {spec.metadata['example']}")
    try:
        return cls(**values)
    except InputError as error:
        raise InputError(f"{field_prefix}.{error.field}", error.problem, error.fix) from None
