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

The public names are gathered here: the shared base and field parsing in
:mod:`~trainopt.machines.drivers.base`, the motors in
:mod:`~trainopt.machines.drivers.motors`, the gas and
steam turbines in :mod:`~trainopt.machines.drivers.turbines`, and :data:`DRIVER_KINDS` with
:func:`driver_from_dict` in :mod:`~trainopt.machines.drivers.kinds`.
"""

from trainopt.machines.drivers.base import (
    DEFAULT_MECHANICAL_EFFICIENCY,
    ISO_AMBIENT_TEMPERATURE,
    Driver,
)
from trainopt.machines.drivers.kinds import DRIVER_KINDS, driver_from_dict
from trainopt.machines.drivers.motors import FixedSpeedMotor, VariableSpeedMotor
from trainopt.machines.drivers.turbines import GasTurbine, PolynomialGasTurbine, SteamTurbine

__all__ = [
    "DEFAULT_MECHANICAL_EFFICIENCY",
    "DRIVER_KINDS",
    "ISO_AMBIENT_TEMPERATURE",
    "Driver",
    "FixedSpeedMotor",
    "GasTurbine",
    "PolynomialGasTurbine",
    "SteamTurbine",
    "VariableSpeedMotor",
    "driver_from_dict",
]
