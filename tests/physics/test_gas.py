"""Tests of trainopt.physics.gas against NIST's GERG-2008 code, CoolProp flashes and ISO data."""

import math
import warnings

import CoolProp.CoolProp as CP
import numpy as np
import pytest
from numpy.testing import assert_allclose

from trainopt.errors import InputError, PhysicsError, TwoPhaseError
from trainopt.physics.gas import (
    COMPONENT_NAMES,
    DEW_POINT_MARGIN,
    CompositionWarning,
    EquationOfState,
    Gas,
)
from trainopt.physics.units import REFERENCE_CONDITIONS, parse_flow

# ---------------------------------------------------------------------------------------
# NIST GERG-2008 reference code, example program of GERG2008.cpp (github.com/usnistgov/AGA8):
# test gas at 400 K and 50,000 kPa.
# ---------------------------------------------------------------------------------------


def test_nist_gerg2008_test_gas_at_400_K_and_50_MPa(nist_gerg2008_test_gas):
    state = nist_gerg2008_test_gas.state(50_000e3, 400.0)
    molar_mass_g_mol = state.molar_mass * 1e3
    molar_density_mol_l = state.density / state.molar_mass / 1e3
    # CoolProp combines GERG-2008's mixing rules (reducing functions and departure terms, Kunz &
    # Wagner 2012) with its own reference equations for the pure fluids and its own pure-component
    # molar masses, where GERG-2008 uses shorter pure-fluid equations. So it reproduces NIST's code
    # to the 4th-5th digit, not to round-off. Regression values (own output, CoolProp 8.0): Z
    # 1.4e-5, density 1.5e-5, molar mass 1.4e-5, speed of sound 1.4e-4 relative. Tolerances are
    # twice those.
    assert_allclose(state.compressibility, 1.174690666383717, rtol=3e-5)
    assert_allclose(molar_density_mol_l, 12.79828626082062, rtol=3e-5)
    assert_allclose(molar_mass_g_mol, 20.5427445016, rtol=3e-5)
    assert_allclose(state.speed_of_sound, 714.4248840596024, rtol=3e-4)
    # Same source: cp 58.45522051000366 and cv 39.02948218156372 J/(mol K), isentropic
    # exponent (kappa = rho w^2 / p) 2.683820255058032. Own output differs by 7.2e-4, 7.8e-4, 3.0e-4
    # relative (caloric properties carry the pure-fluid ideal-gas parts too); tolerance twice.
    assert_allclose(state.cp * state.molar_mass, 58.45522051000366, rtol=1.5e-3)
    assert_allclose(state.cv * state.molar_mass, 39.02948218156372, rtol=1.5e-3)
    assert_allclose(state.isentropic_exponent, 2.683820255058032, rtol=6e-4)


def test_nist_gerg2008_test_gas_z_is_consistent_with_density(nist_gerg2008_test_gas):
    # Z = p / (rho_molar R T), CODATA 2018 R = 8.314462618 J/(mol K) (exact): our Z and
    # our density must satisfy it to round-off, whatever the model's own accuracy.
    state = nist_gerg2008_test_gas.state(50_000e3, 400.0)
    z = 50_000e3 / (state.density / state.molar_mass * 8.314462618 * 400.0)
    # 1e-9: CoolProp's mixture model uses R = 8.31446261815 J/(mol K) (CODATA 2018); regression
    # value (own output) 2e-11, round-off of the density solve.
    assert_allclose(state.compressibility, z, rtol=1e-9)


# ---------------------------------------------------------------------------------------
# Peng-Robinson against GERG-2008 (AGA 8 Gulf Coast gas, pipeline conditions)
# ---------------------------------------------------------------------------------------


def test_peng_robinson_z_deviation_from_gerg2008_on_aga8_gulf_coast_gas(
    aga8_gulf_coast_gas, aga8_gulf_coast_gas_peng_robinson
):
    pressures = np.array([30e5, 45e5, 60e5, 75e5, 100e5])
    temperatures = np.array([288.15, 298.15, 318.15])
    p, t = np.meshgrid(pressures, temperatures)
    z_gerg = aga8_gulf_coast_gas.properties(p, t)["compressibility"]
    z_pr = aga8_gulf_coast_gas_peng_robinson.properties(p, t)["compressibility"]
    deviation = z_pr / z_gerg - 1.0
    # Regression values (own output, CoolProp 8.0): Peng-Robinson (no volume translation) gives Z
    # 1.2 % to 2.8 % below GERG-2008 over 30-100 bar and 15-45 degC; -2.33 % at 60 bar, 25 degC.
    # docs/gas.md quotes these; the bounds below fail if either model changes.
    assert np.all(deviation < -0.010)
    assert np.all(deviation > -0.030)
    # 60 bar, 25 degC; regression value (own output)
    assert_allclose(deviation[1, 2], -0.0233, atol=0.001)


def test_peng_robinson_is_real_coolprop_cubic(aga8_gulf_coast_gas_peng_robinson):
    # The same cubic through CoolProp's own PropsSI with the phase found by CoolProp.
    gas = aga8_gulf_coast_gas_peng_robinson
    fluid = "PR::" + "&".join(
        f"{CP_NAMES[name]}[{x}]" for name, x in gas.components
    )
    expected = CP.PropsSI("Z", "P", 60e5, "T", 298.15, fluid)
    # 1e-9: same equation and inputs; only the root-finding tolerance differs.
    assert_allclose(gas.state(60e5, 298.15).compressibility, expected, rtol=1e-9)


CP_NAMES = {
    "methane": "Methane", "ethane": "Ethane", "propane": "Propane", "isobutane": "IsoButane",
    "n-butane": "n-Butane", "isopentane": "Isopentane", "n-pentane": "n-Pentane",
    "n-hexane": "n-Hexane", "nitrogen": "Nitrogen", "carbon dioxide": "CarbonDioxide",
}


# ---------------------------------------------------------------------------------------
# Pure fluids against CoolProp's PropsSI (phase found by CoolProp) and ISO data
# ---------------------------------------------------------------------------------------


def test_methane_state_matches_coolprop_propssi():
    methane = Gas.from_composition({"methane": 1.0})
    state = methane.state(60e5, 298.15)
    # 1e-10: the same Setzmann-Wagner equation in CoolProp; only the phase was imposed.
    for key, value in [("D", state.density), ("Z", state.compressibility),
                       ("C", state.cp), ("O", state.cv), ("A", state.speed_of_sound),
                       ("H", state.enthalpy), ("S", state.entropy)]:
        assert_allclose(value, CP.PropsSI(key, "P", 60e5, "T", 298.15, "Methane"), rtol=1e-10)


def test_methane_standard_density_at_iso13443_conditions():
    methane = Gas.from_composition({"methane": 1.0})
    # ISO 13443 reference conditions: 15 degC, 101.325 kPa.
    expected = CP.PropsSI("D", "T", 288.15, "P", 101_325.0, "Methane")
    # 1e-10: the same CoolProp state, reached with the gas phase imposed.
    assert_allclose(methane.standard_density("iso"), expected, rtol=1e-10)
    # ISO 6976:1995 table 2, summation factor of methane at 15 degC 0.0447, so
    # Z = 1 - 0.0447^2 = 0.99800 (from memory). 1e-4: the summation-factor method is a
    # truncated virial expansion and the factor is given to three digits.
    z = methane.state(101_325.0, 288.15).compressibility
    assert_allclose(z, 1.0 - 0.0447**2, atol=1e-4)


def test_standard_densities_at_us_and_normal_conditions():
    methane = Gas.from_composition({"methane": 1.0})
    # US standard 60 degF (288.7056 K) and 14.696 psia (101.3254 kPa); normal 0 degC,
    # 101.325 kPa (DIN 1343), both as in CoolProp PropsSI at the same state.
    us = CP.PropsSI("D", "T", (60.0 + 459.67) / 1.8, "P", 14.696 * 6894.757293168, "Methane")
    normal = CP.PropsSI("D", "T", 273.15, "P", 101_325.0, "Methane")
    # 1e-10: the same CoolProp state.
    assert_allclose(methane.standard_density("us"), us, rtol=1e-10)
    assert_allclose(methane.standard_density("normal"), normal, rtol=1e-10)
    assert_allclose(methane.standard_density(REFERENCE_CONDITIONS["normal"]), normal,
                    rtol=1e-10)


def test_standard_volume_flows_to_mass_flow_for_methane():
    methane = Gas.from_composition({"methane": 1.0})
    rho_iso = CP.PropsSI("D", "T", 288.15, "P", 101_325.0, "Methane")
    rho_us = CP.PropsSI("D", "T", (60.0 + 459.67) / 1.8, "P", 14.696 * 6894.757293168, "Methane")
    rho_normal = CP.PropsSI("D", "T", 273.15, "P", 101_325.0, "Methane")
    # 1 MMSCMD = 1e6 m3 / 86400 s = 11.574074 standard m3/s (ISO 13443 conditions).
    # 1 MMSCFD = 1e6 ft3 x 0.028316846592 m3/ft3 (NIST SP 811, foot exact) / 86400 s
    # = 0.32774128 standard m3/s at 60 degF, 14.696 psia. 1e-9: exact definitions.
    assert_allclose(methane.mass_flow(parse_flow("1 MMSCMD", "f")), 11.574074074 * rho_iso,
                    rtol=1e-9)
    assert_allclose(methane.mass_flow(parse_flow("1 MMSCFD", "f")), 0.32774128 * rho_us,
                    rtol=1e-9)
    assert_allclose(methane.mass_flow(parse_flow("3600 Nm3/h", "f")), 1.0 * rho_normal,
                    rtol=1e-9)
    assert methane.mass_flow(parse_flow("12.5 kg/s", "f")) == 12.5
    inlet = methane.state(45e5, 298.15)
    rho_inlet = CP.PropsSI("D", "P", 45e5, "T", 298.15, "Methane")
    assert_allclose(methane.mass_flow(parse_flow("3600 m3/h", "f"), inlet), rho_inlet,
                    rtol=1e-10)


def test_actual_volume_flow_without_inlet_state_is_an_input_error():
    methane = Gas.from_composition({"methane": 1.0})
    with pytest.raises(InputError, match=r"^flow: an actual volume flow needs the inlet state"):
        methane.mass_flow(parse_flow("9000 m3/h", "f"))


def test_argon_isentropic_exponent_tends_to_five_thirds():
    # Monatomic ideal gas: kappa = cp/cv = 5/3 exactly (kinetic theory, common practice).
    argon = Gas.from_composition({"Ar": 1.0})
    kappa = argon.state(1e3, 300.0).isentropic_exponent
    # 2e-5 at 1 kPa: argon's second virial coefficient still shifts kappa by 1.1e-5 there
    # (regression value (own output); it falls in proportion to pressure, 1.1e-6 at 100 Pa).
    assert_allclose(kappa, 5.0 / 3.0, rtol=2e-5)


# ---------------------------------------------------------------------------------------
# Composition: names, aliases, normalisation and rejection
# ---------------------------------------------------------------------------------------


def test_aliases_and_percentages_give_the_same_gas(aga8_gulf_coast_composition):
    by_name = Gas.from_composition(aga8_gulf_coast_composition)
    aliases = {"methane": "C1", "nitrogen": "N2", "carbon dioxide": "CO2", "ethane": "C2",
               "propane": "C3", "isobutane": "iC4", "n-butane": "nC4", "isopentane": "iC5",
               "n-pentane": "nC5", "n-hexane": "C6"}
    by_alias = Gas.from_composition(
        {aliases[k]: f"{v * 100:.4f} %" for k, v in aga8_gulf_coast_composition.items()})
    assert [n for n, _ in by_alias.components] == [n for n, _ in by_name.components]
    # 1e-12: the percentages are the published figures to 4 decimals, exactly as given.
    assert_allclose([x for _, x in by_alias.components], [x for _, x in by_name.components],
                    rtol=1e-12)
    # C1-C10 (with i-C4, i-C5), N2, CO2, H2S, H2, O2, CO, H2O, He, Ar: the components the design
    # lists.
    assert len(COMPONENT_NAMES) == 21


@pytest.mark.parametrize(("name", "coolprop_name"), [
    ("ethane", "Ethane"), ("propane", "Propane"), ("isobutane", "IsoButane"),
    ("n-butane", "n-Butane"), ("isopentane", "Isopentane"), ("n-pentane", "n-Pentane"),
    ("n-hexane", "n-Hexane"), ("n-heptane", "n-Heptane"), ("n-octane", "n-Octane"),
    ("n-nonane", "n-Nonane"), ("n-decane", "n-Decane"), ("nitrogen", "Nitrogen"),
    ("carbon dioxide", "CarbonDioxide"), ("hydrogen sulfide", "HydrogenSulfide"),
    ("hydrogen", "Hydrogen"), ("oxygen", "Oxygen"), ("carbon monoxide", "CarbonMonoxide"),
    ("water", "Water"), ("helium", "Helium"), ("argon", "Argon"),
])
def test_every_listed_component_maps_to_its_coolprop_fluid(name, coolprop_name):
    gas = Gas.from_composition({"methane": 0.99, name: 0.01})
    expected = 0.99 * CP.PropsSI("M", "Methane") + 0.01 * CP.PropsSI("M", coolprop_name)
    # 1e-12: a mole-fraction mean of CoolProp's own molar masses; round-off only.
    assert_allclose(gas.molar_mass, expected, rtol=1e-12)


def test_fractions_off_by_half_a_percent_warn_and_normalise(aga8_gulf_coast_composition):
    composition = dict(aga8_gulf_coast_composition)
    composition["methane"] += 0.005  # sum 1.005
    with pytest.warns(CompositionWarning, match=r"mole fractions sum to 1\.0050; normalised"):
        gas = Gas.from_composition(composition)
    fractions = dict(gas.components)
    # 1e-15: normalisation divides by the sum; round-off only.
    assert_allclose(sum(fractions.values()), 1.0, rtol=1e-15)
    assert_allclose(fractions["ethane"], 0.018186 / 1.005, rtol=1e-15)


def test_fractions_within_a_tenth_of_a_percent_are_normalised_silently(
    aga8_gulf_coast_composition
):
    composition = dict(aga8_gulf_coast_composition)
    composition["methane"] += 0.0009
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        gas = Gas.from_composition(composition)
    # 1e-15: round-off only.
    assert_allclose(sum(x for _, x in gas.components), 1.0, rtol=1e-15)


def test_fractions_summing_to_0_9_are_rejected(aga8_gulf_coast_composition):
    composition = dict(aga8_gulf_coast_composition)
    composition["methane"] -= 0.1
    with pytest.raises(InputError) as error:
        Gas.from_composition(composition)
    assert str(error.value) == (
        "gas.composition: mole fractions sum to 0.9000, more than 2 % off 1; check the "
        "analysis; trainopt normalises only small rounding errors")


def test_unknown_component_is_rejected_by_name():
    with pytest.raises(InputError) as error:
        Gas.from_composition({"methane": 0.95, "ethylene": 0.05}, field_name="gas.composition")
    message = str(error.value)
    assert message.startswith("gas.composition.ethylene: unknown component 'ethylene'; use one of")
    assert "n-decane" in message
    assert "\n" not in message


@pytest.mark.parametrize(
    ("composition", "expected"),
    [
        ({"methane": 1.2}, r"^gas\.composition\.methane: mole fraction 1\.2 is outside 0 to 1$"),
        ({"methane": "lots"}, r"^gas\.composition\.methane: 'lots' is not a mole fraction"),
        ({}, r"^gas\.composition: expected a mapping of component to mole fraction"),
        ([("methane", 1.0)], r"^gas\.composition: expected a mapping"),
    ],
)
def test_malformed_compositions_name_the_field(composition, expected):
    with pytest.raises(InputError, match=expected):
        Gas.from_composition(composition)


# ---------------------------------------------------------------------------------------
# Dew-point check (CoolProp phase envelope; CoolProp's own stability flash as reference)
# ---------------------------------------------------------------------------------------


def test_state_below_the_dew_point_is_rejected_with_the_dew_point(aga8_gulf_coast_gas):
    with pytest.raises(TwoPhaseError) as error:
        aga8_gulf_coast_gas.check_gas_phase(44e5, 233.15, "suction state")
    dew = aga8_gulf_coast_gas.dew_temperature(44e5)
    assert str(error.value) == (
        "suction state: -40.0 degC at 4400 kPa is inside or within 3 K of the two-phase "
        f"region; the hydrocarbon dew point at this pressure is {dew - 273.15:.1f} degC; "
        "heat the gas or check the analysis")
    # Within the margin above the dew point is still rejected; beyond it is accepted.
    with pytest.raises(TwoPhaseError):
        aga8_gulf_coast_gas.check_gas_phase(44e5, dew + DEW_POINT_MARGIN - 0.5)
    aga8_gulf_coast_gas.check_gas_phase(44e5, dew + DEW_POINT_MARGIN + 0.5)
    aga8_gulf_coast_gas.check_gas_phase(45e5, 298.15)  # a pipeline suction state


def test_retrograde_dew_point_agrees_with_coolprop_stability_flash(aga8_gulf_coast_gas):
    # At 56 bar (between the cricondentherm's pressure, 32 bar, and the cricondenbar,
    # 67 bar) the gas has two dew points; CoolProp's pressure-quality flash alone lands on
    # the lower one (-70 degC). The check must use the upper one.
    dew = aga8_gulf_coast_gas.dew_temperature(56e5)
    reference = CP.AbstractState("HEOS", "&".join(CP_NAMES[n] for n, _ in
                                                  aga8_gulf_coast_gas.components))
    reference.set_mole_fractions([x for _, x in aga8_gulf_coast_gas.components])

    def coolprop_phase(temperature):
        # CoolProp's PT flash with the phase left free runs its own stability analysis.
        reference.update(CP.PT_INPUTS, 56e5, temperature)
        return reference.phase()

    # 1.5 K either side: the envelope is interpolated linearly between traced points
    # (up to 1 K off the flash where both exist).
    assert coolprop_phase(dew - 1.5) == CP.iphase_twophase
    assert coolprop_phase(dew + 1.5) == CP.iphase_gas
    assert coolprop_phase(233.15) == CP.iphase_twophase
    with pytest.raises(TwoPhaseError, match=r"-40\.0 degC at 5600 kPa is inside"):
        aga8_gulf_coast_gas.check_gas_phase(56e5, 233.15)


def test_no_dew_point_above_the_cricondenbar(aga8_gulf_coast_gas):
    envelope = aga8_gulf_coast_gas.envelope
    # The traced envelope's cricondenbar for this gas is 67.2 bar (regression value (own output),
    # CoolProp 8.0); 0.5 bar: tracer step.
    assert_allclose(envelope.cricondenbar, 67.2e5, atol=0.5e5)
    assert math.isnan(aga8_gulf_coast_gas.dew_temperature(100e5))
    aga8_gulf_coast_gas.check_gas_phase(100e5, 253.15)  # dense phase, no dew point to cross


def test_pure_propane_below_saturation_is_rejected():
    propane = Gas.from_composition({"propane": 1.0})
    t_sat = CP.PropsSI("T", "P", 5e5, "Q", 1, "Propane")  # CoolProp saturation, 5 bar
    with pytest.raises(TwoPhaseError, match=rf"saturation temperature {t_sat - 273.15:.1f} degC"):
        propane.check_gas_phase(5e5, t_sat + 1.0)
    propane.check_gas_phase(5e5, t_sat + DEW_POINT_MARGIN + 0.1)


# ---------------------------------------------------------------------------------------
# Evaluation helpers
# ---------------------------------------------------------------------------------------


@pytest.mark.parametrize(("pressure", "temperature"), [(0.0, 300.0), (-1e5, 300.0),
                                                        (45e5, 0.0)])
def test_non_positive_state_is_a_physics_error(aga8_gulf_coast_gas, pressure, temperature):
    with pytest.raises(PhysicsError, match="state needs positive pressure and temperature"):
        aga8_gulf_coast_gas.state(pressure, temperature)


def test_properties_broadcast_like_numpy_and_match_single_states(aga8_gulf_coast_gas):
    out = aga8_gulf_coast_gas.properties([[30e5], [60e5]], [288.15, 298.15, 308.15])
    assert out["density"].shape == (2, 3)
    single = aga8_gulf_coast_gas.state(60e5, 308.15)
    assert out["density"][1, 2] == single.density
    assert out["speed_of_sound"][1, 2] == single.speed_of_sound


def test_temperature_from_enthalpy_and_entropy_invert_states(aga8_gulf_coast_gas):
    state = aga8_gulf_coast_gas.state(75e5, 340.0)
    t_h = aga8_gulf_coast_gas.temperature_from_enthalpy(75e5, state.enthalpy, 320.0)
    t_s = aga8_gulf_coast_gas.temperature_from_entropy(75e5, state.entropy, 360.0)
    # 1e-8 K: the Newton iterations stop at a 1e-9 K step.
    assert_allclose(t_h, 340.0, atol=1e-8)
    assert_allclose(t_s, 340.0, atol=1e-8)


def test_peng_robinson_and_gerg_are_distinct_models(aga8_gulf_coast_composition):
    pr = Gas.from_composition(aga8_gulf_coast_composition, EquationOfState.PENG_ROBINSON)
    gerg = Gas.from_composition(aga8_gulf_coast_composition)
    assert pr.equation_of_state is EquationOfState.PENG_ROBINSON
    assert pr != gerg
    assert pr.components == gerg.components
