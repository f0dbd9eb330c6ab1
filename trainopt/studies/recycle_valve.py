"""Recycle flow from a recycle valve's recorded position (IEC 60534-2-1 sizing, via fluids).

A unit whose history records the recycle valve's position instead of a recycle flow meter
gets its recycle mass flow from the valve's rated Kv (or Cv), its inherent characteristic
and the header pressures: :func:`valve_mass_flow`.
"""

from __future__ import annotations

import numpy as np

from trainopt.studies.history_mapping import ValveColumn

VALVE_CHARACTERISTICS = ("linear", "equal_percentage", "quick_opening")
"""Inherent valve characteristics known by name (the curves of the ``fluids`` library)."""


def valve_kv_fraction(spec: ValveColumn, position: np.ndarray) -> np.ndarray:
    """Kv as a fraction of the rated Kv at valve positions [-] (inherent characteristic).

    Parameters
    ----------
    spec : ValveColumn
    position : numpy.ndarray
        Opening, 0 closed to 1 fully open [-].

    Returns
    -------
    numpy.ndarray
        Kv / rated Kv [-]: the user's table if given, else the named inherent curve of
        the ``fluids`` library (``Cv_char_linear``, ``Cv_char_equal_percentage``,
        ``Cv_char_quick_opening``), zero at zero opening.
    """
    from fluids import control_valve

    position = np.clip(np.asarray(position, float), 0.0, 1.0)
    if spec.table:
        table = np.asarray(spec.table, float)
        return np.interp(position * 100.0, table[:, 0], table[:, 1])
    curve = {"linear": control_valve.Cv_char_linear,
             "equal_percentage": control_valve.Cv_char_equal_percentage,
             "quick_opening": control_valve.Cv_char_quick_opening}[spec.characteristic]
    grid = np.linspace(0.0, 1.0, 201)
    values = np.array([float(curve(x)) for x in grid])
    values[0] = 0.0
    return np.interp(position, grid, np.clip(values, 0.0, None))


def valve_mass_flow(spec: ValveColumn, position: np.ndarray, gas, inlet_pressure: float,
                    inlet_temperature: float, outlet_pressure: float) -> np.ndarray:
    """Mass flow through a recycle valve at positions [kg/s] (IEC 60534-2-1, via fluids).

    Parameters
    ----------
    spec : ValveColumn
    position : numpy.ndarray
        Opening [-].
    gas : trainopt.physics.gas.Gas
    inlet_pressure, outlet_pressure : float
        Valve inlet (discharge header) and outlet (suction header) pressure [Pa].
    inlet_temperature : float
        [K].

    Returns
    -------
    numpy.ndarray
        [kg/s].

    Notes
    -----
    Without pipe diameters the IEC 60534-2-1 gas equation is linear in flow for a given
    pressure drop (turbulent, no piping geometry factor), so ``fluids``'s sizing routine
    (which returns the Kv a flow needs) is evaluated once for a unit flow and inverted:
    ``W = W_1 Kv / Kv_1``. The flow rate there is referred to 0 °C and 101.325 kPa as an
    ideal gas, the convention of the standard's N9 constant.
    """
    from fluids.control_valve import Cv_to_Kv, size_control_valve_g

    rated = spec.rated_kv if spec.rated_kv is not None else Cv_to_Kv(spec.rated_cv)
    state = gas.state(inlet_pressure, inlet_temperature)
    molar_mass = gas.molar_mass * 1e3
    kv_unit = size_control_valve_g(T=inlet_temperature, MW=molar_mass, mu=1.1e-5,
                                   gamma=state.cp / state.cv, Z=state.compressibility,
                                   P1=inlet_pressure, P2=outlet_pressure, Q=1.0,
                                   xT=spec.x_t, allow_laminar=False)
    normal_density = 101_325.0 * gas.molar_mass / (8.314462618 * 273.15)
    kv = rated * valve_kv_fraction(spec, position)
    return kv / kv_unit * normal_density
