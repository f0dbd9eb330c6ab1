"""Turbine drivers: two-shaft gas turbines (curve shapes or published coefficients), steam turbines.

Gas turbines burn fuel: their energy input is the fuel energy rate on a lower-heating-value
basis [W], and :meth:`_FuelBurning.fuel_mass_flow` turns it into a fuel mass flow. Steam
turbines draw steam flow times enthalpy drop [W] along a Willans line.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np
from numpy.typing import ArrayLike

from trainopt.machines.drivers.base import (
    ISO_AMBIENT_TEMPERATURE,
    Driver,
    _broadcast,
    _coefficients,
    _param,
    _require,
    _rpm,
)
from trainopt.physics.units import STANDARD_ATMOSPHERE, Kind, atmospheric_pressure


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
        Site elevation [m]; power scales with standard-atmosphere pressure. Default 0 here;
        a case file gives the site's (``site.elevation`` or ``site.atmospheric_pressure``)
        unless the driver states its own (:mod:`trainopt.case.loading`).
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
