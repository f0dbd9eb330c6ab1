"""Electric motor drivers: on the grid at one speed, or fed by a variable-frequency drive.

Both kinds share the part-load loss model of :meth:`_Motor.efficiency`: a constant part and
a part growing with the square of load. Their energy input is the electrical power at the
supply terminals [W].
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np
from numpy.typing import ArrayLike

from trainopt.machines.drivers.base import Driver, _broadcast, _param, _result
from trainopt.physics.units import Kind


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
