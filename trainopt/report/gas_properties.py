"""A gas's properties at a state, and what compressing it takes, as a dict with units in keys."""

from __future__ import annotations

from trainopt.physics.compression import HeadBasis, PolytropicMethod, compress
from trainopt.physics.gas import Gas


def gas_summary(
    gas: Gas,
    pressure: float,
    temperature: float,
    discharge_pressure: float | None = None,
    efficiency: float | None = None,
    basis: HeadBasis = HeadBasis.POLYTROPIC,
    method: PolytropicMethod = PolytropicMethod.SCHULTZ,
) -> dict:
    """Properties at (p, T) and, if a discharge pressure is given, the compression to it.

    Parameters
    ----------
    gas : Gas
    pressure : float
        Absolute pressure [Pa].
    temperature : float
        Temperature [K].
    discharge_pressure : float, optional
        Absolute discharge pressure [Pa].
    efficiency : float, optional
        Efficiency on ``basis`` [-]; required with ``discharge_pressure``.
    basis : HeadBasis, optional
    method : PolytropicMethod, optional

    Returns
    -------
    dict
        Keys name the quantity and its unit (``"density_kg_m3"``); values are floats.
    """
    gas.check_gas_phase(pressure, temperature, "suction state")
    st = gas.state(pressure, temperature)
    out = {
        "equation_of_state": gas.equation_of_state.name,
        "pressure_kPa": pressure / 1e3,
        "temperature_C": temperature - 273.15,
        "molar_mass_g_mol": st.molar_mass * 1e3,
        "compressibility": st.compressibility,
        "density_kg_m3": st.density,
        "enthalpy_kJ_kg": st.enthalpy / 1e3,
        "entropy_kJ_kgK": st.entropy / 1e3,
        "cp_kJ_kgK": st.cp / 1e3,
        "cv_kJ_kgK": st.cv / 1e3,
        "isentropic_exponent": st.isentropic_exponent,
        "speed_of_sound_m_s": st.speed_of_sound,
        "dew_temperature_C": gas.dew_temperature(pressure) - 273.15,
    }
    if discharge_pressure is not None:
        c = compress(gas, pressure, temperature, discharge_pressure, efficiency, basis, method)
        out.update({
            "discharge_pressure_kPa": discharge_pressure / 1e3,
            "pressure_ratio": c.pressure_ratio,
            "method": c.method.value,
            "polytropic_head_kJ_kg": c.polytropic_head / 1e3,
            "polytropic_efficiency": c.polytropic_efficiency,
            "isentropic_head_kJ_kg": c.isentropic_head / 1e3,
            "isentropic_efficiency": c.isentropic_efficiency,
            "polytropic_exponent": c.polytropic_exponent,
            "schultz_factor": c.schultz_factor,
            "discharge_temperature_C": c.discharge.temperature - 273.15,
            "specific_power_kW_per_kg_s": c.specific_work / 1e3,
        })
    return out
