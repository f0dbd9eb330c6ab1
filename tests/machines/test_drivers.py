"""Tests of trainopt.machines.drivers: identities, outside references and every validation error."""

import dataclasses
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from trainopt.errors import InputError, PhysicsError
from trainopt.machines.drivers import (
    DRIVER_KINDS,
    ISO_AMBIENT_TEMPERATURE,
    FixedSpeedMotor,
    GasTurbine,
    PolynomialGasTurbine,
    SteamTurbine,
    VariableSpeedMotor,
    driver_from_dict,
)

PREFIX = "units.GT1.driver"

# Invented demo machines (not outside data), written as a case file would carry them.
GAS_TURBINE = {
    "kind": "gas_turbine", "rated_power": "12 MW", "heat_rate": "10500 kJ/kWh",
    "driver_speed_min": "4800 rpm", "driver_speed_max": "10500 rpm", "optimum_speed": "9500 rpm",
}
FIXED_MOTOR = {
    "kind": "fixed_speed_motor", "rated_power": "5 MW", "rated_speed": "1490 rpm",
    "gear_ratio": "7.5",
}
VSD_MOTOR = {
    "kind": "variable_speed_motor", "rated_power": "6 MW", "driver_speed_min": "900 rpm",
    "driver_speed_max": "1800 rpm", "base_speed": "1500 rpm", "gear_ratio": "6",
}
STEAM_TURBINE = {
    "kind": "steam_turbine", "maximum_power": "8 MW", "driver_speed_min": "6000 rpm",
    "driver_speed_max": "10000 rpm", "full_load_steam_rate": "4.5 kg/kWh",
    "enthalpy_drop": "900 kJ/kg",
}

# GasLib-135 gas-turbine coefficients, file GasLib-135.cs of GasLib (Schmidt et al. 2017,
# Data 2(4):40, doi:10.3390/data2040040; CC BY 3.0; please also cite Pfetsch et al. 2012,
# ZIB-Report 12-41): gas_turbine_power_fun_coeff_1..9 and energy_rate_fun_coeff_1..3.
GASLIB135_POWER = [
    -1164.594258777371, 2.555634634291757, -0.000104977631291941,
    7.005733212792697, -0.01537367568342418, 6.315034378705861e-07,
    -0.02328473640875715, 5.109700513125207e-05, -2.098908229218584e-09,
]
GASLIB135_ENERGY_RATE = [0.01, 0.0, 0.0]
GASLIB135_TURBINE = {
    "kind": "polynomial_gas_turbine", "power_coefficients": GASLIB135_POWER,
    "energy_rate_coefficients": GASLIB135_ENERGY_RATE,
    "driver_speed_min": "3419 rpm", "driver_speed_max": "11999 rpm",
}


def rpm(value):
    return value / 60.0


@pytest.fixture
def gas_turbine():
    return driver_from_dict(GAS_TURBINE, PREFIX)


# --- gas turbine -------------------------------------------------------------------------


def test_iso_conditions_give_rated_power_exactly(gas_turbine):
    # ISO 3977-2 / ISO 2314 rating at 15 degC, 101.325 kPa, optimum speed: every factor is 1.
    power = gas_turbine.available_shaft_power(rpm(9500), ISO_AMBIENT_TEMPERATURE)
    assert power == 12e6 * 0.985


def test_heat_rate_gives_thermal_efficiency_3600_over_kj_per_kwh(gas_turbine):
    # Identity: efficiency = 3600 / HR [kJ/kWh], since 1 kWh = 3600 kJ (exact).
    assert_allclose(gas_turbine.thermal_efficiency, 3600 / 10500, rtol=1e-15)  # one rounding


def test_heat_rate_in_btu_per_kwh():
    # 1 Btu_IT = 1055.05585262 J exactly (NIST SP 811, 2008, App. B.9), so 1 kWh = 3412.14 Btu
    # and 10 000 Btu/kWh is 34.1214 % efficient. pint's Btu is the rounded 1055.056 J, a
    # relative difference of 1.4e-7, hence rtol 2e-7.
    driver = driver_from_dict({**GAS_TURBINE, "heat_rate": "10000 Btu/kWh"}, PREFIX)
    assert_allclose(driver.thermal_efficiency, 3.6e6 / 1055.05585262 / 10000, rtol=2e-7)
    assert_allclose(driver.heat_rate, 10000 * 1055.05585262 / 3.6e6, rtol=2e-7)


def test_temperature_lapse_and_elevation(gas_turbine):
    # 0.7 %/K above 15 degC (common practice band 0.5-0.9 %/K): 25 degC loses 7 %.
    hot = gas_turbine.available_shaft_power(rpm(9500), 298.15)
    assert_allclose(hot, 12e6 * 0.985 * 0.93, rtol=1e-14)  # rounding of a few operations
    # Power scales with ISO 2533 pressure: about 3.5 % lost per 1000 ft (common practice).
    high = driver_from_dict({**GAS_TURBINE, "site_elevation": "1000 ft"}, PREFIX)
    loss = 1 - high.available_shaft_power(rpm(9500)) / (12e6 * 0.985)
    assert_allclose(loss, 0.0356, atol=5e-4)  # the trade figure is quoted to two digits


def test_power_turbine_speed_parabola(gas_turbine):
    # c = 1: the ideal impulse-stage blade-speed-ratio parabola x (2 - x) (textbook).
    x = np.array([0.6, 0.8, 1.0, 1.1])
    power = gas_turbine.available_shaft_power(x * rpm(9500))
    assert_allclose(power / (12e6 * 0.985), x * (2 - x), rtol=1e-14)  # arithmetic rounding


def test_full_load_fuel_is_heat_rate_times_power_at_any_speed(gas_turbine):
    speeds = rpm(np.array([4800, 7000, 9500, 10500]))
    full = gas_turbine.available_shaft_power(speeds, 303.15)
    fuel = gas_turbine.energy_input(full, speeds, 303.15)
    gas_generator_power = 12e6 * (1 - 0.007 * 15)
    assert_allclose(fuel, 10500 / 3600 * gas_generator_power, rtol=1e-13)  # rounding only


def test_part_load_heat_rate_against_a_published_typical_curve(gas_turbine):
    # TransiEnt Library 1.0.1 (Hamburg University of Technology), record
    # Producer/Electrical/Base/PartloadEfficiency/Gasturbine.mo, "Typical gasturbine
    # partload efficiency": efficiency / full-load efficiency against load.
    load = np.array([0.30, 0.40, 0.50, 0.60, 0.70, 0.8, 0.9, 1])
    transient = np.array([0.619, 0.701, 0.776, 0.846, 0.905, 0.946, 0.975, 1])
    full = gas_turbine.available_shaft_power(rpm(9500))
    fuel = gas_turbine.energy_input(load * full, rpm(9500))
    relative_efficiency = load * full / fuel / (full / fuel[-1])
    # Our default (b = 0.3, from memory) is a one-parameter curve; it stays within 6 % of the
    # published shape from 30 % load up, and within 2.5 % from 50 % up.
    assert_allclose(relative_efficiency, transient, rtol=0.06)
    assert_allclose(relative_efficiency[2:], transient[2:], rtol=0.025)


def test_fuel_is_linear_in_power_and_gives_mass_flow(gas_turbine):
    power = np.linspace(0, 11e6, 12)
    fuel = gas_turbine.energy_input(power, rpm(9000))
    assert_allclose(np.diff(fuel, 2), 0, atol=1e-6)  # J/s; float noise on 1e7-W values
    assert_allclose(fuel[0], 0.3 * 10500 / 3600 * 12e6, rtol=1e-14)  # no-load fuel fraction
    lhv = 47.0e6  # J/kg, an invented pipeline-gas value
    assert_allclose(gas_turbine.fuel_mass_flow(power, rpm(9000), 288.15, lhv), fuel / lhv,
                    rtol=1e-15)  # one division


def test_speed_range_and_gear_ratio():
    driver = driver_from_dict({**GAS_TURBINE, "gear_ratio": "1.2"}, PREFIX)
    assert_allclose([driver.speed_min, driver.speed_max], [rpm(4800 * 1.2), rpm(10500 * 1.2)],
                    rtol=1e-15)  # one multiplication
    assert driver.available_shaft_power(rpm(9500 * 1.2)) == 12e6 * 0.985
    assert driver.available_shaft_power(rpm(10500 * 1.25)) == 0
    assert np.isnan(driver.energy_input(1e6, rpm(4000)))


def test_vectorised_equals_point_by_point(gas_turbine):
    speeds = rpm(np.array([5000.0, 8000.0, 9500.0, 12000.0]))
    ambient = np.array([263.15, 288.15, 313.15, 288.15])
    vector = gas_turbine.available_shaft_power(speeds, ambient)
    loop = [gas_turbine.available_shaft_power(s, t) for s, t in zip(speeds, ambient, strict=True)]
    assert_allclose(vector, loop, rtol=0)  # the same arithmetic
    assert isinstance(gas_turbine.available_shaft_power(rpm(9500)), float)


def test_gaslib135_power_function_reads_as_celsius():
    # The published polynomial separates as f(n) (1 + a t + b t^2): its lapse is the same at
    # every speed, 0.590 %/K at 15 degC, inside the 0.5-0.9 %/K band of common practice. Read
    # in kelvin, power would rise with temperature, which no gas turbine does.
    driver = driver_from_dict(GASLIB135_TURBINE, PREFIX)
    assert driver.illustrative
    speeds = rpm(np.array([3419.0, 6000.0, 9000.0, 11999.0]))
    at_15, at_16 = (driver.available_shaft_power(speeds, t) for t in (288.15, 289.15))
    assert_allclose(1 - at_16 / at_15, 0.005902, rtol=1e-4)  # check value rounded to 4 digits
    c = GASLIB135_POWER
    n, kelvin = 9000.0, 288.15
    slope_in_kelvin = (c[3] + c[4] * n + c[5] * n**2) + 2 * kelvin * (c[6] + c[7] * n + c[8] * n**2)
    assert slope_in_kelvin > 0
    # The published energy-rate coefficients give a constant 0.01 kW, whatever the power.
    assert_allclose(driver.energy_input([0.0, 5e6], rpm(9000)), 10.0, rtol=1e-15)


# --- motors ------------------------------------------------------------------------------


def test_fixed_speed_motor():
    motor = driver_from_dict({**FIXED_MOTOR, "service_factor": "1.15"}, PREFIX)
    speed = rpm(1490 * 7.5)
    assert motor.speed_min == motor.speed_max == speed
    assert_allclose(motor.available_shaft_power(speed), 5e6 * 1.15 * 0.985, rtol=1e-15)
    assert motor.available_shaft_power(speed * 0.99) == 0
    assert_allclose(motor.efficiency(1.0), 0.96, rtol=1e-15)  # rated efficiency by construction
    # Electrical input at rated output: 5 MW / 0.96, mechanical losses added first.
    assert_allclose(motor.energy_input(5e6 * 0.985, speed), 5e6 / 0.96, rtol=1e-14)


def test_motor_efficiency_peaks_where_fixed_and_variable_losses_are_equal():
    # Textbook result: maximum efficiency where load-dependent losses equal constant losses,
    # at x = sqrt(f / (1 - f)); brute force on a fine grid as the independent check.
    motor = driver_from_dict(FIXED_MOTOR, PREFIX)
    load = np.linspace(0.05, 1.5, 290_001)
    best = load[np.argmax(motor.efficiency(load))]
    assert_allclose(best, np.sqrt(0.35 / 0.65), atol=1e-5)  # grid spacing 5e-6


def test_variable_speed_motor_constant_torque_below_base_speed():
    motor = driver_from_dict(VSD_MOTOR, PREFIX)
    motor_speed = np.array([900.0, 1200.0, 1500.0, 1800.0])
    power = motor.available_shaft_power(rpm(motor_speed * 6))
    expected = 6e6 * 0.985 * np.minimum(motor_speed / 1500, 1)
    assert_allclose(power, expected, rtol=1e-14)  # rounding of a few operations
    assert_allclose(motor.efficiency(1.0), 0.94, rtol=1e-15)
    assert np.isnan(motor.energy_input(1e6, rpm(2000 * 6)))


def test_negative_shaft_power_is_refused():
    motor = driver_from_dict(VSD_MOTOR, PREFIX)
    with pytest.raises(PhysicsError, match="negative"):
        motor.energy_input([1e6, -1.0], rpm(9000))


# --- steam turbine -----------------------------------------------------------------------


def test_willans_line():
    turbine = driver_from_dict(STEAM_TURBINE, PREFIX)
    assert_allclose(turbine.full_load_steam_rate, 4.5 / 3.6e6, rtol=1e-15)  # kg/kWh -> kg/J
    speed = rpm(9000)
    power = np.linspace(0, 8e6 * 0.985, 9)
    flow = turbine.steam_mass_flow(power, speed)
    # Linear by construction (Willans line): second differences vanish.
    assert_allclose(np.diff(flow, 2), 0, atol=1e-12)  # kg/s; float noise on ~10 kg/s
    full_flow = 4.5 / 3.6e6 * 8e6  # 10 kg/s
    assert_allclose(flow[[0, -1]], [0.1 * full_flow, full_flow], rtol=1e-14)
    assert_allclose(turbine.energy_input(power, speed), flow * 900e3, rtol=1e-15)
    assert_allclose(turbine.available_shaft_power(speed), 8e6 * 0.985, rtol=1e-15)


# --- validation --------------------------------------------------------------------------

# (base case, field, text written, problem reported); the error must name that field.
BAD_FIELD = [
    (GAS_TURBINE, "driver_speed_min", "11000 rpm", "is above maximum speed 10500 rpm"),
    (GAS_TURBINE, "driver_speed_min", "0 rpm", "0 1/s is outside (0, inf)"),
    (GAS_TURBINE, "gear_ratio", "0", "0 is outside (0, inf)"),
    (GAS_TURBINE, "gear_ratio", "-2", "-2 is outside (0, inf)"),
    (GAS_TURBINE, "mechanical_efficiency", "0", "0 is outside (0, 1]"),
    (GAS_TURBINE, "mechanical_efficiency", "101 %", "1.01 is outside (0, 1]"),
    (GAS_TURBINE, "rated_power", "0 MW", "0 W is outside (0, inf)"),
    (GAS_TURBINE, "rated_power", "-5 MW", "-5e+06 W is outside (0, inf)"),
    (GAS_TURBINE, "rated_power", 12, "has no unit"),
    (GAS_TURBINE, "heat_rate", "3000 kJ/kWh", "0.833333 J/J is outside (1, inf)"),
    (GAS_TURBINE, "heat_rate", "2.9", "cannot read '2.9' with its unit"),
    (GAS_TURBINE, "heat_rate", "10500 kJ/kg", "with its unit"),
    (GAS_TURBINE, "optimum_speed", "11000 rpm", "outside the speed range"),
    (GAS_TURBINE, "temperature_lapse", "-0.1 %/K", "-0.001 1/K is outside [0, 0.05)"),
    (GAS_TURBINE, "temperature_lapse", "0.7 %/degC", "with its unit"),
    (GAS_TURBINE, "speed_power_coefficient", "1.5", "1.5 is outside [0, 1]"),
    (GAS_TURBINE, "no_load_fuel_fraction", "1", "1 is outside [0, 1)"),
    (GAS_TURBINE, "heat_rate_lapse", "6 %/K", "0.06 1/K is outside (-0.05, 0.05)"),
    (GAS_TURBINE, "site_elevation", "12 km", "12000 m is outside [-500, 11000]"),
    (GAS_TURBINE, "colour", "red", "is not a field of a gas_turbine driver"),
    (GAS_TURBINE, "kind", "diesel", "unknown driver kind"),
    (FIXED_MOTOR, "rated_speed", "0 rpm", "0 1/s is outside (0, inf)"),
    (FIXED_MOTOR, "rated_efficiency", "0", "0 is outside (0, 1]"),
    (FIXED_MOTOR, "rated_efficiency", "1.2", "1.2 is outside (0, 1]"),
    (FIXED_MOTOR, "constant_loss_fraction", "1.1", "1.1 is outside [0, 1]"),
    (FIXED_MOTOR, "service_factor", "0.9", "0.9 is outside [1, 2]"),
    (FIXED_MOTOR, "rated_power", "5 MW/s", "is not a power"),
    (VSD_MOTOR, "base_speed", "0 rpm", "0 1/s is outside (0, inf)"),
    (STEAM_TURBINE, "maximum_power", "0 kW", "0 W is outside (0, inf)"),
    (STEAM_TURBINE, "enthalpy_drop", "-5 kJ/kg", "-5000 J/kg is outside (0, inf)"),
    (STEAM_TURBINE, "no_load_steam_fraction", "1", "1 is outside [0, 1)"),
    (GASLIB135_TURBINE, "power_coefficients", [1, 2, 3], "a list of 9 finite numbers"),
    (GASLIB135_TURBINE, "energy_rate_coefficients", "123", "a list of 3 finite numbers"),
]
# Cases where the change is not one field's text, or the error names another field.
BAD_CASE = [
    ({**VSD_MOTOR, "driver_speed_max": "800 rpm"}, "driver_speed_min", "is above maximum"),
    ({**GAS_TURBINE, "driver_speed_max": "19000 rpm"}, "speed_power_coefficient",
     "no power at an end of the speed range"),
    ({**STEAM_TURBINE, "full_load_steam_rate": "3 kg/kWh", "enthalpy_drop": "1000 kJ/kg"},
     "full_load_steam_rate", "more power than the steam's energy"),
    ({k: v for k, v in GAS_TURBINE.items() if k != "heat_rate"}, "heat_rate", "is missing"),
] + [({**base, name: text}, name, problem) for base, name, text, problem in BAD_FIELD]


@pytest.mark.parametrize(("case", "field", "problem"), BAD_CASE)
def test_bad_input_names_field_and_fix(case, field, problem):
    with pytest.raises(InputError) as caught:
        driver_from_dict(case, PREFIX)
    error = caught.value
    assert error.field == f"{PREFIX}.{field}"
    assert problem in error.problem
    assert error.fix
    assert "\n" not in str(error)


def test_not_a_mapping_and_bad_lower_heating_value(gas_turbine):
    with pytest.raises(InputError, match=f"^{PREFIX}: expected a mapping"):
        driver_from_dict(["gas_turbine"], PREFIX)
    with pytest.raises(InputError, match="^fuel_lower_heating_value: "):
        gas_turbine.fuel_mass_flow(1e6, rpm(9000), 288.15, 0.0)


def test_direct_construction_names_the_bare_field():
    with pytest.raises(InputError, match="^driver_speed_min: minimum speed 600 rpm is above"):
        SteamTurbine(maximum_power=1e6, driver_speed_min=10, driver_speed_max=5,
                     full_load_steam_rate=1e-6, enthalpy_drop=2e6)


def test_every_kind_is_registered():
    assert set(DRIVER_KINDS.values()) == {
        FixedSpeedMotor, VariableSpeedMotor, GasTurbine, PolynomialGasTurbine, SteamTurbine,
    }


def test_direct_construction_refuses_nan():
    with pytest.raises(InputError, match="^rated_power: nan W is outside"):
        FixedSpeedMotor(rated_power=float("nan"), rated_speed=25.0)


def test_docs_tables_match_the_schema():
    # docs/drivers.md carries one table per kind; each row must be the schema's own.
    text = (Path(__file__).parents[2] / "docs" / "drivers.md").read_text(encoding="utf-8")
    for kind, cls in DRIVER_KINDS.items():
        section = text.split(f"#### {kind}\n", 1)[1].split("\n\n", 1)[0]
        for spec in dataclasses.fields(cls):
            meta = spec.metadata
            default = "required" if spec.default is dataclasses.MISSING else spec.default
            row = (f"| `{spec.name}` | {meta['unit'].strip() or '-'} | {meta['bounds'] or '-'} "
                   f"| {default} | {meta['example']} |")
            assert row in section, row
