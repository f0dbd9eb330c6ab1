"""Today's gas conditions at a station: suction state and the head a pressure ratio needs.

The required head depends on the efficiency only weakly (through the discharge state in
Schultz's method), so it is tabulated once per (gas, suction, discharge, basis) on 18
efficiencies from 0.30 to 0.98 and interpolated by cubic splines [1]_: the heads in the
efficiency, the discharge temperature in its inverse (the temperature rise goes nearly as
1 / efficiency). Against :func:`~trainopt.physics.compression.compress` between the grid
points, at pressure ratios 1.06 to 3 on a lean pipeline gas, the heads differ by at most
1.1e-7 relative and the discharge temperature by 2 µK (``tests/physics/test_duty.py``;
linear interpolation, used before, was 1.4e-4 and 10 mK off at ratio 3).
:meth:`Duty.compression` gives the heads on both bases, both efficiencies and the discharge
temperature at one efficiency from the same table, so a new operating point at today's
conditions needs no new gas state.

References
----------
.. [1] de Boor, C. (2001). A Practical Guide to Splines, revised edition. Springer
   (cubic spline interpolation with the not-a-knot end condition; error of order h^4).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from trainopt.physics.compression import HeadBasis, compress
from trainopt.physics.gas import Gas, GasState

_EFFICIENCY_GRID = np.linspace(0.30, 0.98, 18)


@dataclass(frozen=True)
class PointCompression:
    """Heads, efficiencies and discharge temperature of one compression.

    Attributes
    ----------
    polytropic_head, isentropic_head : float
        [J/kg].
    polytropic_efficiency, isentropic_efficiency : float
        [-].
    discharge_temperature : float
        [K].
    """

    polytropic_head: float
    polytropic_efficiency: float
    isentropic_head: float
    isentropic_efficiency: float
    discharge_temperature: float


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
    polytropic_head_grid, isentropic_head_grid : numpy.ndarray
        The head on each basis [J/kg] at the same efficiencies (on the duty's basis).
    """

    gas: Gas
    suction: GasState
    discharge_pressure: float
    basis: HeadBasis
    efficiency_grid: np.ndarray
    head_grid: np.ndarray
    discharge_temperature_grid: np.ndarray
    polytropic_head_grid: np.ndarray
    isentropic_head_grid: np.ndarray

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
        rows = []
        for eta in _EFFICIENCY_GRID:
            c = compress(gas, suction_pressure, suction_temperature, discharge_pressure, eta, basis)
            rows.append((c.polytropic_head, c.isentropic_head, c.discharge.temperature))
        hp, hs, temps = (np.array(column) for column in zip(*rows, strict=True))
        suction = gas.state(suction_pressure, suction_temperature)
        return cls(gas, suction, discharge_pressure, basis, _EFFICIENCY_GRID.copy(),
                   hp if basis is HeadBasis.POLYTROPIC else hs, temps, hp, hs)

    @cached_property
    def _dense(self):
        """The cubic splines sampled every 0.0005 in efficiency, for fast linear lookup.

        Heads are splined in the efficiency, the discharge temperature in its inverse; the
        linear lookup between samples adds at most about 2e-8 relative to the splines.
        """
        from scipy.interpolate import CubicSpline

        g = self.efficiency_grid
        eta = np.linspace(g[0], g[-1], 1361)
        inv = 1.0 / eta[::-1]
        t2 = CubicSpline(1.0 / g[::-1], self.discharge_temperature_grid[::-1])(inv)
        return eta, inv, tuple(CubicSpline(g, y)(eta) for y in (
            self.head_grid, self.polytropic_head_grid, self.isentropic_head_grid)) + (t2,)

    def _at(self, which: int, efficiency):
        eta = np.clip(efficiency, self.efficiency_grid[0], self.efficiency_grid[-1])
        grid, inv, values = self._dense
        if which == 3:
            out = np.interp(1.0 / eta, inv, values[3])
        else:
            out = np.interp(eta, grid, values[which])
        return out if np.ndim(out) else float(out)

    def head(self, efficiency):
        """Required head on the duty's basis [J/kg] at an efficiency [-] (array-friendly)."""
        return self._at(0, efficiency)

    def discharge_temperature(self, efficiency):
        """Discharge temperature [K] at an efficiency [-] (array-friendly)."""
        return self._at(3, efficiency)

    def specific_work(self, efficiency):
        """Actual enthalpy rise h2 - h1 [J/kg] at an efficiency [-]: head over efficiency."""
        return self.head(efficiency) / np.asarray(efficiency)

    def compression(self, efficiency: float) -> PointCompression:
        """Both heads, both efficiencies and the discharge temperature at one efficiency.

        Parameters
        ----------
        efficiency : float
            Efficiency on the duty's basis [-], inside the tabulated 0.30-0.98.

        Returns
        -------
        PointCompression
            The other basis's efficiency is its head over the specific work
            (ASME PTC 10-1997, 5.1; Schultz's factor is in the polytropic head).
        """
        eta = float(np.clip(efficiency, self.efficiency_grid[0], self.efficiency_grid[-1]))
        work = self.head(eta) / eta
        hp, hs = self._at(1, eta), self._at(2, eta)
        return PointCompression(hp, hp / work, hs, hs / work, self.discharge_temperature(eta))
