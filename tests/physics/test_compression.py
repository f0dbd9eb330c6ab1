"""Tests of trainopt.physics.compression: ideal gas (fluids), Schultz vs path, inverses, errors."""

import math

import pytest
from fluids.compressible import (
    isentropic_efficiency,
    isentropic_T_rise_compression,
    isentropic_work_compression,
    polytropic_exponent,
)
from numpy.testing import assert_allclose

from trainopt.errors import InputError
from trainopt.physics.compression import (
    HeadBasis,
    PolytropicMethod,
    compress,
    compress_to_head,
    isentropic_discharge,
)
from trainopt.physics.gas import Gas

# Monatomic ideal gas: k = cp/cv = 5/3 exactly (kinetic theory, common practice); argon's
# cp does not vary with temperature, so constant-k formulas are exact in its ideal-gas limit.
ARGON_K = 5.0 / 3.0
ARGON_MOLAR_MASS = 39.948e-3  # [kg/mol], IUPAC standard atomic weight (CoolProp uses it too)
# Diatomic rigid rotor: k = 7/5 (kinetic theory, common practice); nitrogen's vibrational
# mode adds 0.6 % to cp between 300 K and 445 K (from memory), so 7/5 is approximate.
NITROGEN_K = 7.0 / 5.0
NITROGEN_MOLAR_MASS = 28.0134e-3  # [kg/mol], 2 x 14.0067 (IUPAC abridged), from memory
ETA_P = 0.80


def fluids_ideal_gas(t1, p1, p2, k, molar_mass, eta_p):
    """Ideal-gas compression from the general-purpose ``fluids.compressible`` functions."""
    n = polytropic_exponent(k, eta_p=eta_p)
    return {
        "n": n,
        # isentropic_work_compression with the polytropic exponent and eta 1 is the
        # polytropic head (fluids' docstring: "provide n instead of k"); per mole.
        "polytropic_head": isentropic_work_compression(t1, n, 1.0, p1, p2, eta=1.0) / molar_mass,
        "isentropic_head": isentropic_work_compression(t1, k, 1.0, p1, p2, eta=1.0) / molar_mass,
        "discharge_temperature": isentropic_T_rise_compression(t1, p1, p2, n, 1.0),
        "isentropic_efficiency": isentropic_efficiency(p1, p2, k, eta_p=eta_p),
    }


@pytest.fixture(scope="module")
def argon():
    return Gas.from_composition({"argon": 1.0})


# ---------------------------------------------------------------------------------------
# Ideal-gas limit against fluids.compressible
# ---------------------------------------------------------------------------------------


def test_argon_1_to_3_bar_matches_fluids_ideal_gas(argon):
    c = compress(argon, 1e5, 300.0, 3e5, ETA_P)
    ref = fluids_ideal_gas(300.0, 1e5, 3e5, ARGON_K, ARGON_MOLAR_MASS, ETA_P)
    # At 1 bar argon's Z is 0.99939 (CoolProp), so real-gas terms of order 1 - Z = 6e-4 remain.
    # Regression values (own output): heads 1.2e-4 and 1.0e-4, T2 0.095 K low (of 519.6 K), exponent
    # 1.8e-3 (a volume exponent, twice as sensitive), Schultz factor 6.0e-5 from 1. Tolerances about
    # 3 times those. k = 5/3 and eta_p = 0.8 give n = 2 exactly, so T2 = 300 K x 3^(1/2); round-off
    # only.
    assert_allclose(ref["discharge_temperature"], 300.0 * math.sqrt(3.0), rtol=1e-12)
    assert_allclose(c.polytropic_head, ref["polytropic_head"], rtol=4e-4)
    assert_allclose(c.isentropic_head, ref["isentropic_head"], rtol=4e-4)
    assert_allclose(c.specific_work, ref["polytropic_head"] / ETA_P, rtol=4e-4)
    assert_allclose(c.discharge.temperature, ref["discharge_temperature"], atol=0.3)
    assert_allclose(c.polytropic_exponent, ref["n"], rtol=5e-3)
    assert_allclose(c.isentropic_efficiency, ref["isentropic_efficiency"], atol=5e-5)
    assert_allclose(c.schultz_factor, 1.0, atol=2e-4)


def test_argon_real_gas_residual_falls_with_pressure(argon):
    # The ideal-gas limit proper: at a tenth of the pressure every residual is a tenth
    # (second-virial behaviour). Regression values (own output) at 0.1 -> 0.3 bar: heads 7e-6 and
    # 5e-6, T2 0.010 K, exponent 1.8e-4, Schultz factor 6.0e-6 from 1. The heads level off near 5e-6
    # because CoolProp's argon equation uses R = 8.31451 J/(mol K), 6e-6 above the CODATA 2018 value
    # that fluids uses. Tolerances about 3 times those values.
    c = compress(argon, 1e4, 300.0, 3e4, ETA_P)
    ref = fluids_ideal_gas(300.0, 1e4, 3e4, ARGON_K, ARGON_MOLAR_MASS, ETA_P)
    assert_allclose(c.polytropic_head, ref["polytropic_head"], rtol=2.5e-5)
    assert_allclose(c.isentropic_head, ref["isentropic_head"], rtol=2.5e-5)
    assert_allclose(c.discharge.temperature, ref["discharge_temperature"], atol=0.03)
    assert_allclose(c.polytropic_exponent, ref["n"], rtol=5e-4)
    assert_allclose(c.isentropic_efficiency, ref["isentropic_efficiency"], atol=5e-6)
    assert_allclose(c.schultz_factor, 1.0, atol=2e-5)


def test_nitrogen_1_to_3_bar_matches_fluids_ideal_gas():
    nitrogen = Gas.from_composition({"N2": 1.0})
    c = compress(nitrogen, 1e5, 300.0, 3e5, ETA_P)
    ref = fluids_ideal_gas(300.0, 1e5, 3e5, NITROGEN_K, NITROGEN_MOLAR_MASS, ETA_P)
    # Here the residual is mostly the vibrational rise of cp with temperature, which a constant k
    # ignores: own output's polytropic head 2.0e-4 low, isentropic head 1.2e-4 high, T2 0.58 K low
    # (of 444 K), exponent 1.2e-4, Schultz factor 2.4e-5 from 1.
    assert_allclose(c.polytropic_head, ref["polytropic_head"], rtol=1e-3)
    assert_allclose(c.isentropic_head, ref["isentropic_head"], rtol=1e-3)
    assert_allclose(c.discharge.temperature, ref["discharge_temperature"], atol=1.5)
    assert_allclose(c.polytropic_exponent, ref["n"], rtol=2e-3)
    assert_allclose(c.isentropic_efficiency, ref["isentropic_efficiency"], atol=1e-3)
    assert_allclose(c.schultz_factor, 1.0, atol=2e-4)


# ---------------------------------------------------------------------------------------
# Schultz against the path method on a lean pipeline gas (AGA 8 Gulf Coast)
# ---------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def pipeline_pair(aga8_gulf_coast_gas):
    """45 -> 75 bar at 25 degC, eta_p 0.80, by Schultz and by the path method (48 steps)."""
    args = (aga8_gulf_coast_gas, 45e5, 298.15, 75e5, ETA_P)
    return (compress(*args), compress(*args, method=PolytropicMethod.PATH))


def test_schultz_against_path_method_at_pipeline_ratio(pipeline_pair):
    schultz, path = pipeline_pair
    # Huntington (1985), ASME J. Eng. Gas Turbines Power 107(4):872, reports Schultz's method within
    # well under 1 % of a rigorous path integration for natural gas away from the critical point
    # (from memory). Regression values (own output, CoolProp 8.0): Schultz's head 0.028 % below the
    # path method's, discharge temperature 0.0099 K lower. Tolerances 0.05 % and 0.02 K: twice that
    # difference, far inside Huntington's bound.
    assert_allclose(schultz.polytropic_head, path.polytropic_head, rtol=5e-4)
    assert_allclose(schultz.discharge.temperature, path.discharge.temperature, atol=0.02)
    assert schultz.polytropic_head < path.polytropic_head
    # A lean gas at 25 degC is far from its critical point: f is within 0.1 % of one.
    assert_allclose(schultz.schultz_factor, 1.0, atol=1e-3)
    assert schultz.method is PolytropicMethod.SCHULTZ
    assert path.method is PolytropicMethod.PATH


def test_schultz_against_path_method_at_ratio_four(aga8_gulf_coast_gas):
    args = (aga8_gulf_coast_gas, 20e5, 298.15, 80e5, ETA_P)
    schultz = compress(*args)
    path = compress(*args, method=PolytropicMethod.PATH, path_steps=24)
    # A ratio of 4 in one section: regression values (own output) 0.24 % in head and 0.26 K in T2
    # (path at 24 steps, itself within 5e-6 of converged). Still well under Huntington's 1 %.
    assert_allclose(schultz.polytropic_head, path.polytropic_head, rtol=4e-3)
    assert_allclose(schultz.discharge.temperature, path.discharge.temperature, atol=0.5)


def test_path_method_head_converges_as_steps_to_minus_two(aga8_gulf_coast_gas, pipeline_pair):
    heads = {
        steps: compress(aga8_gulf_coast_gas, 45e5, 298.15, 75e5, ETA_P,
                        method=PolytropicMethod.PATH, path_steps=steps).polytropic_head
        for steps in (6, 12, 24)
    }
    # Trapezoidal integration in ln p with a corrected end state: error ~ steps^-2, so successive
    # differences shrink by 4 (regression values (own output) 4.00 and 4.01).
    ratio = (heads[12] - heads[6]) / (heads[24] - heads[12])
    assert_allclose(ratio, 4.0, rtol=0.05)
    # Richardson extrapolation of the 12- and 24-step heads agrees with 48 steps (whose
    # own error is 1.2e-6 by the same rule) to 2e-6.
    extrapolated = heads[24] + (heads[24] - heads[12]) / 3.0
    assert_allclose(pipeline_pair[1].polytropic_head, extrapolated, rtol=2e-6)


def test_path_method_head_is_eta_times_work(pipeline_pair):
    _, path = pipeline_pair
    # The path integrates dh = v dp / eta_p, so over the path H_p = eta_p (h2 - h1); 2e-8: each
    # step's end state gets three corrector passes, which leaves the summed head and the enthalpy
    # rise 4e-9 apart (regression value, own output).
    assert_allclose(path.polytropic_head, ETA_P * path.specific_work, rtol=2e-8)


def test_schultz_head_is_eta_times_work(pipeline_pair):
    schultz, _ = pipeline_pair
    # Schultz's discharge is found so that H_p = eta_p (h2 - h1) (ASME PTC 10 eq. 5.1T);
    # 1e-9: brentq's xtol of 1e-9 K on the discharge temperature.
    assert_allclose(schultz.polytropic_head, ETA_P * schultz.specific_work, rtol=1e-9)
    assert_allclose(schultz.pressure_ratio, 75.0 / 45.0, rtol=1e-15)


# ---------------------------------------------------------------------------------------
# Isentropic basis, efficiency conversion, inverses
# ---------------------------------------------------------------------------------------


def test_isentropic_discharge_has_suction_entropy(aga8_gulf_coast_gas):
    suction = aga8_gulf_coast_gas.state(45e5, 298.15)
    ideal = isentropic_discharge(aga8_gulf_coast_gas, suction, 75e5)
    # 1e-9 J/(kg K): the temperature solve stops at 1e-9 K, times cp/T ~ 8 J/(kg K^2).
    assert_allclose(ideal.entropy, suction.entropy, atol=1e-7)
    assert ideal.pressure == 75e5


def test_isentropic_and_polytropic_efficiencies_convert_both_ways(aga8_gulf_coast_gas,
                                                                  pipeline_pair):
    polytropic, _ = pipeline_pair
    isentropic = compress(aga8_gulf_coast_gas, 45e5, 298.15, 75e5,
                          polytropic.isentropic_efficiency, basis=HeadBasis.ISENTROPIC)
    # The same actual end state from either basis: eta_p back to 0.80 and the same T2;
    # 1e-9 from the nested temperature solves.
    assert_allclose(isentropic.polytropic_efficiency, ETA_P, rtol=1e-9)
    assert_allclose(isentropic.discharge.temperature, polytropic.discharge.temperature,
                    atol=1e-7)
    assert_allclose(isentropic.polytropic_head, polytropic.polytropic_head, rtol=1e-9)
    # For compression the isentropic efficiency is below the polytropic one (the
    # reheat effect, common practice). fluids' ideal-gas conversion with the real-gas
    # isentropic exponent at suction (1.3191) gives 0.78707 against our 0.78777: 2e-3
    # covers the exponent's drift along the path.
    assert polytropic.isentropic_efficiency < ETA_P
    kappa = polytropic.suction.isentropic_exponent
    assert_allclose(polytropic.isentropic_efficiency,
                    isentropic_efficiency(45e5, 75e5, kappa, eta_p=ETA_P), atol=2e-3)


def test_path_method_on_isentropic_basis_recovers_polytropic_efficiency(aga8_gulf_coast_gas):
    args = (aga8_gulf_coast_gas, 45e5, 298.15, 75e5)
    forward = compress(*args, ETA_P, method=PolytropicMethod.PATH, path_steps=12)
    back = compress(*args, forward.isentropic_efficiency, basis=HeadBasis.ISENTROPIC,
                    method=PolytropicMethod.PATH, path_steps=12)
    # 1e-8: brentq on the path efficiency with xtol 1e-10.
    assert_allclose(back.polytropic_efficiency, ETA_P, rtol=1e-8)
    assert_allclose(back.specific_work, forward.specific_work, rtol=1e-10)
    # On this basis the head is eta_p (h2 - h1); forward it is the summed path integral. With 12
    # steps the three corrector passes leave the two 2.7e-7 apart (regression value, own output;
    # 4e-9 at the default 48 steps), hence 1e-6.
    assert_allclose(back.polytropic_head, forward.polytropic_head, rtol=1e-6)


@pytest.mark.parametrize("basis", [HeadBasis.POLYTROPIC, HeadBasis.ISENTROPIC])
def test_compress_to_head_inverts_compress(aga8_gulf_coast_gas, pipeline_pair, basis):
    schultz, _ = pipeline_pair
    if basis is HeadBasis.POLYTROPIC:
        head, eta = schultz.polytropic_head, ETA_P
    else:
        head, eta = schultz.isentropic_head, schultz.isentropic_efficiency
    back = compress_to_head(aga8_gulf_coast_gas, 45e5, 298.15, head, eta, basis)
    # 1e-8 relative on p2: brentq on the pressure ratio with xtol and rtol 1e-12.
    assert_allclose(back.discharge.pressure, 75e5, rtol=1e-8)


def test_compress_to_head_inverts_path_method(aga8_gulf_coast_gas, pipeline_pair):
    _, path = pipeline_pair
    back = compress_to_head(aga8_gulf_coast_gas, 45e5, 298.15, path.polytropic_head, ETA_P,
                            method=PolytropicMethod.PATH)
    # 1e-8: as above; both use the default 48 path steps.
    assert_allclose(back.discharge.pressure, 75e5, rtol=1e-8)


# ---------------------------------------------------------------------------------------
# Bad input: one-line errors naming the field
# ---------------------------------------------------------------------------------------


def test_discharge_below_suction_is_rejected(aga8_gulf_coast_gas):
    with pytest.raises(InputError) as error:
        compress(aga8_gulf_coast_gas, 45e5, 298.15, 30e5, ETA_P)
    assert str(error.value) == (
        "discharge_pressure: 3000.0 kPa is not above the suction pressure 4500.0 kPa; a "
        "compressor raises pressure: give a discharge pressure above suction")


@pytest.mark.parametrize(
    ("p1", "t1", "p2", "eta", "expected"),
    [
        (0.0, 298.15, 75e5, 0.8, r"^suction_pressure: 0 Pa is not a positive absolute pressure$"),
        (-1e5, 298.15, 75e5, 0.8, r"^suction_pressure: -100000 Pa is not a positive"),
        (45e5, -5.0, 75e5, 0.8, r"^suction_temperature: -5 K is not a positive temperature$"),
        (45e5, 298.15, 45e5, 0.8, r"^discharge_pressure: 4500\.0 kPa is not above"),
        (45e5, 298.15, 75e5, 1.2, r"^efficiency: 1\.2 is outside \(0, 1\]; give e\.g\. 0\.80$"),
        (45e5, 298.15, 75e5, 0.0, r"^efficiency: 0 is outside \(0, 1\]"),
    ],
)
def test_bad_compression_input_names_the_field(aga8_gulf_coast_gas, p1, t1, p2, eta, expected):
    with pytest.raises(InputError, match=expected):
        compress(aga8_gulf_coast_gas, p1, t1, p2, eta)


def test_non_positive_head_is_rejected(aga8_gulf_coast_gas):
    with pytest.raises(InputError, match=r"^head: -5000 J/kg is not positive$"):
        compress_to_head(aga8_gulf_coast_gas, 45e5, 298.15, -5e3, ETA_P)
