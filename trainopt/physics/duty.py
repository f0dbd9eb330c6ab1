"""Today's gas conditions at a station: suction state and the head a pressure ratio needs.

The required head depends on the efficiency only weakly (through the discharge state in
Schultz's method), so it is tabulated once per (gas, suction, discharge, basis) on a grid
of efficiencies and interpolated; the interpolation error is below 1e-6 relative on the
grid used (smooth in efficiency, see ``tests/physics/test_compression.py``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from trainopt.physics.compression import HeadBasis, compress
from trainopt.physics.gas import Gas, GasState

_EFFICIENCY_GRID = np.linspace(0.30, 0.98, 18)


@dataclass(frozen=True)
class Duty:
    """What one compression step must do: gas, suction state, discharge pressure.

    Attributes
    ----------
    gas : Gas
    suction : GasState
        Suction state (after any recycle mixing, taken at suction temperature).
    discharge_pressure : float
        Absolute pressure to reach [Pa].
    basis : HeadBasis
        Basis of the head and efficiency of the map that will meet the duty.
    efficiency_grid, head_grid, discharge_temperature_grid : numpy.ndarray
        Efficiency [-], required head [J/kg] and discharge temperature [K] tabulated.
    """

    gas: Gas
    suction: GasState
    discharge_pressure: float
    basis: HeadBasis
    efficiency_grid: np.ndarray
    head_grid: np.ndarray
    discharge_temperature_grid: np.ndarray

    @classmethod
    def build(cls, gas: Gas, suction_pressure: float, suction_temperature: float,
              discharge_pressure: float, basis: HeadBasis) -> Duty:
        """Tabulate the required head and discharge temperature against efficiency.

        Parameters
        ----------
        gas : Gas
        suction_pressure : float
            [Pa].
        suction_temperature : float
            [K].
        discharge_pressure : float
            [Pa], above the suction pressure.
        basis : HeadBasis

        Returns
        -------
        Duty
        """
        heads, temps = [], []
        for eta in _EFFICIENCY_GRID:
            c = compress(gas, suction_pressure, suction_temperature, discharge_pressure, eta, basis)
            heads.append(c.polytropic_head if basis is HeadBasis.POLYTROPIC else c.isentropic_head)
            temps.append(c.discharge.temperature)
        suction = gas.state(suction_pressure, suction_temperature)
        return cls(gas, suction, discharge_pressure, basis, _EFFICIENCY_GRID.copy(),
                   np.array(heads), np.array(temps))

    def head(self, efficiency):
        """Required head on the duty's basis [J/kg] at an efficiency [-] (array-friendly)."""
        eta = np.clip(efficiency, self.efficiency_grid[0], self.efficiency_grid[-1])
        return np.interp(eta, self.efficiency_grid, self.head_grid)

    def discharge_temperature(self, efficiency):
        """Discharge temperature [K] at an efficiency [-] (array-friendly)."""
        eta = np.clip(efficiency, self.efficiency_grid[0], self.efficiency_grid[-1])
        return np.interp(1.0 / eta, 1.0 / self.efficiency_grid[::-1],
                         self.discharge_temperature_grid[::-1])

    def specific_work(self, efficiency):
        """Actual enthalpy rise h2 - h1 [J/kg] at an efficiency [-]: head over efficiency."""
        return self.head(efficiency) / np.asarray(efficiency)
