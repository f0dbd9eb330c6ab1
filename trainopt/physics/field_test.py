"""Field-test reduction: head and efficiency from measured suction and discharge states.

A field performance test finds a compressor's head and efficiency from its measured
pressures and temperatures, not from its power: the temperature rise gives the actual
enthalpy rise ``h2 - h1`` and the pressures and temperatures the head, both on the real gas
(ASME PTC 10-1997, sections 5 and 6 and appendix G; the "test from the temperature rise"
approach). Power, where measured, is only a cross-check (``m (h2 - h1)`` plus losses).

On the polytropic basis the head is Schultz's: the volume exponent ``n`` from the measured
end states, ``H_p = f n/(n - 1) (p2 v2 - p1 v1)`` with Schultz's factor ``f`` from the
isentropic discharge; the polytropic efficiency is ``H_p / (h2 - h1)``. On the isentropic
basis ``H_s = h(p2, s1) - h1`` and ``eta_s = H_s / (h2 - h1)``.

:func:`measured_compression` works on whole arrays on a
:class:`~trainopt.physics.gas_table.GasTable` (thousands of history rows at once);
:func:`measured_compression_state` takes CoolProp states directly, for one point and as
the reference the table is checked against.

References
----------
.. [1] ASME PTC 10-1997, Performance Test Code on Compressors and Exhausters, appendix G.
.. [2] Schultz, J. M. (1962). The polytropic analysis of centrifugal compressors.
   Journal of Engineering for Power 84(1), 69-82. doi:10.1115/1.3673381
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from trainopt.physics.compression import HeadBasis, _schultz, isentropic_discharge
from trainopt.physics.gas import Gas
from trainopt.physics.gas_table import GasTable, _schultz_factor, _schultz_head


@dataclass(frozen=True)
class MeasuredCompression:
    """Head and efficiency reduced from measured end states (arrays of one shape).

    Attributes
    ----------
    head : numpy.ndarray
        Head on the requested basis [J/kg].
    efficiency : numpy.ndarray
        Efficiency on the same basis [-].
    specific_work : numpy.ndarray
        Actual enthalpy rise h2 - h1 [J/kg].
    suction_density : numpy.ndarray
        [kg/m³].
    """

    head: np.ndarray
    efficiency: np.ndarray
    specific_work: np.ndarray
    suction_density: np.ndarray


def measured_compression(table: GasTable, suction_pressure, suction_temperature,
                         discharge_pressure, discharge_temperature,
                         basis: HeadBasis) -> MeasuredCompression:
    """Head and efficiency from measured end states, on a gas table (vectorised).

    Parameters
    ----------
    table : GasTable
        The gas, tabulated over the pressures and temperatures of the rows.
    suction_pressure, discharge_pressure : array_like
        Absolute pressures p1, p2 [Pa].
    suction_temperature, discharge_temperature : array_like
        Temperatures T1, T2 [K].
    basis : HeadBasis
        Polytropic (Schultz) or isentropic.

    Returns
    -------
    MeasuredCompression
        NaN where a state leaves the table, where p2 <= p1 or where T2 gives no enthalpy
        rise.

    Notes
    -----
    Equations of ASME PTC 10-1997 appendix G (see the module notes). The table agrees with
    CoolProp to a few parts in a million (``trainopt.physics.gas_table``), far inside a field
    test's uncertainty, which the temperature measurement dominates: 0.5 K on a 40 K rise is
    about 1.3 % of the efficiency.
    """
    p1, t1, p2, t2 = np.broadcast_arrays(*(np.asarray(a, float) for a in (
        suction_pressure, suction_temperature, discharge_pressure, discharge_temperature)))
    h1, s1, rho1 = table.properties(p1, t1)
    h2, _, rho2 = table.properties(p2, t2)
    lnp2 = np.log(p2)
    inside = np.isfinite(s1) & np.isfinite(lnp2)
    guess = np.where(inside, t1 * (p2 / p1) ** 0.25, t1)
    _, h2s, v2s = table._isentropic(np.where(inside, lnp2, np.log(p1)),
                                    np.where(inside, s1, 0.0), guess)
    work = h2 - h1
    with np.errstate(divide="ignore", invalid="ignore"):
        if basis is HeadBasis.ISENTROPIC:
            head = h2s - h1
        else:
            v1, v2 = 1.0 / rho1, 1.0 / rho2
            head = _schultz_head(_schultz_factor(p1, v1, h1, p2, v2s, h2s), p1, v1, p2, v2)
        ok = inside & (p2 > p1) & (work > 0)
        efficiency = head / work
    nan = np.nan
    return MeasuredCompression(np.where(ok, head, nan), np.where(ok, efficiency, nan),
                               np.where(ok, work, nan), rho1)


def measured_compression_state(gas: Gas, suction_pressure: float, suction_temperature: float,
                               discharge_pressure: float, discharge_temperature: float,
                               basis: HeadBasis) -> tuple[float, float]:
    """Head [J/kg] and efficiency [-] of one measured point on CoolProp states.

    Parameters
    ----------
    gas : Gas
    suction_pressure, discharge_pressure : float
        [Pa].
    suction_temperature, discharge_temperature : float
        [K].
    basis : HeadBasis

    Returns
    -------
    head, efficiency : float
        On ``basis``; same equations as :func:`measured_compression`.
    """
    suction = gas.state(suction_pressure, suction_temperature)
    discharge = gas.state(discharge_pressure, discharge_temperature)
    ideal = isentropic_discharge(gas, suction, discharge_pressure)
    work = discharge.enthalpy - suction.enthalpy
    if basis is HeadBasis.ISENTROPIC:
        head = ideal.enthalpy - suction.enthalpy
    else:
        head = _schultz(suction, discharge, ideal)[0]
    return head, head / work
