"""Tests of trainopt.physics.units: every accepted unit against NIST SP 811, gauge rule, errors.

Conversion factors are from NIST Special Publication 811 (2008 edition), Appendix B.8/B.9,
which prints them to 7 significant digits; exact definitions are used where SP 811 marks
them exact (foot, pound, bar, standard atmosphere, degree Fahrenheit).
"""

import pytest
from numpy.testing import assert_allclose

from trainopt.errors import InputError
from trainopt.physics.units import (
    REFERENCE_CONDITIONS,
    STANDARD_ATMOSPHERE,
    STANDARD_FLOW_UNITS,
    FlowBasis,
    Kind,
    atmospheric_pressure,
    parse_flow,
    parse_quantity,
    to_unit,
)

SP811 = 5e-7  # SP 811 factors carry 7 significant digits: half a unit in the 7th digit.
EXACT = 1e-12  # exact definitions: round-off only.


@pytest.mark.parametrize(
    ("text", "kind", "expected", "rtol"),
    [
        # pressure [Pa]: bar = 1e5 Pa exact; psi = 6.894 757 E+03 Pa (SP 811)
        ("45 bar", Kind.PRESSURE, 45e5, EXACT),
        ("45 bara", Kind.PRESSURE, 45e5, EXACT),
        ("650 psia", Kind.PRESSURE, 650 * 6.894757e3, SP811),
        ("4500 kPa", Kind.PRESSURE, 4.5e6, EXACT),
        ("4.5 MPa", Kind.PRESSURE, 4.5e6, EXACT),
        # temperature [K]: T = t/degC + 273.15; T = (t/degF + 459.67)/1.8 (SP 811, exact)
        ("298.15 K", Kind.TEMPERATURE, 298.15, EXACT),
        ("25 degC", Kind.TEMPERATURE, 298.15, EXACT),
        ("25 °C", Kind.TEMPERATURE, 298.15, EXACT),
        ("77 degF", Kind.TEMPERATURE, (77 + 459.67) / 1.8, EXACT),
        ("77 °F", Kind.TEMPERATURE, 298.15, EXACT),
        # mass flow [kg/s]: pound per hour = 1.259 979 E-04 kg/s (SP 811)
        ("50 kg/s", Kind.MASS_FLOW, 50.0, EXACT),
        ("180000 kg/h", Kind.MASS_FLOW, 50.0, EXACT),
        ("400000 lb/h", Kind.MASS_FLOW, 400000 * 1.259979e-4, SP811),
        # actual volume flow [m3/s]: cubic foot per minute = 4.719 474 E-04 m3/s (SP 811)
        ("9000 m3/h", Kind.VOLUME_FLOW, 2.5, EXACT),
        ("5000 ft3/min", Kind.VOLUME_FLOW, 5000 * 4.719474e-4, SP811),
        ("5000 ACFM", Kind.VOLUME_FLOW, 5000 * 4.719474e-4, SP811),
        # power [W]: horsepower (550 ft lbf/s) = 7.456 999 E+02 W (SP 811)
        ("8500 kW", Kind.POWER, 8.5e6, EXACT),
        ("12 MW", Kind.POWER, 12e6, EXACT),
        ("15000 hp", Kind.POWER, 15000 * 7.456999e2, SP811),
        # rotational speed [1/s]: revolutions per second
        ("9000 rpm", Kind.SPEED, 150.0, EXACT),
        ("150 rev/s", Kind.SPEED, 150.0, EXACT),
        # head [J/kg]: foot pound-force per pound = 2.989 067 E+00 J/kg (SP 811)
        ("80 kJ/kg", Kind.HEAD, 80e3, EXACT),
        ("25000 ft*lbf/lbm", Kind.HEAD, 25000 * 2.989067, SP811),
        ("25000 ft·lbf/lbm", Kind.HEAD, 25000 * 2.989067, SP811),
        ("25000 ft-lbf/lb", Kind.HEAD, 25000 * 2.989067, SP811),
        # metres of head times standard gravity 9.80665 m/s2 (CGPM 1901, exact)
        ("8000 m", Kind.HEAD, 8000 * 9.80665, EXACT),
        # differences and fractions
        ("18 delta_degF", Kind.TEMPERATURE_DIFFERENCE, 10.0, EXACT),
        ("10 degC", Kind.TEMPERATURE_DIFFERENCE, 10.0, EXACT),
        ("5 psi", Kind.PRESSURE_DIFFERENCE, 5 * 6.894757e3, SP811),
        ("82 %", Kind.DIMENSIONLESS, 0.82, EXACT),
        (0.82, Kind.DIMENSIONLESS, 0.82, EXACT),
        ("1200 ft", Kind.LENGTH, 1200 * 0.3048, EXACT),
    ],
)
def test_units_convert_with_nist_sp811_factors(text, kind, expected, rtol):
    assert_allclose(parse_quantity(text, kind, "field"), expected, rtol=rtol)


def test_standard_atmosphere_at_1000_m_iso2533():
    # ISO 2533:1975 standard atmosphere: 101.325 kPa at sea level (exact), 89.875 kPa at
    # 1000 m and 79.495 kPa at 2000 m (tabulated, from memory). 5 Pa: the table's last digit.
    assert atmospheric_pressure(0.0) == STANDARD_ATMOSPHERE == 101_325.0
    assert_allclose(atmospheric_pressure(1000.0), 89_875.0, atol=5.0)
    assert_allclose(atmospheric_pressure(2000.0), 79_495.0, atol=5.0)


def test_gauge_pressures_add_the_stated_atmosphere():
    site = atmospheric_pressure(1000.0)
    # 30 barg at a site 1000 m up is 30e5 Pa + 89.875 kPa; 0 psig is the atmosphere itself.
    assert_allclose(parse_quantity("30 barg", Kind.PRESSURE, "f", atmospheric=site),
                    30e5 + 89_875.0, atol=5.0)  # 5 Pa: the ISO 2533 table digit
    assert parse_quantity("0 psig", Kind.PRESSURE, "f", atmospheric=site) == site
    assert_allclose(parse_quantity("100 psig", Kind.PRESSURE, "f", atmospheric=101_325.0),
                    100 * 6.894757e3 + 101_325.0, rtol=SP811)
    assert_allclose(parse_quantity("50 kPag", Kind.PRESSURE, "f", atmospheric=101_325.0),
                    151_325.0, rtol=EXACT)


def test_gauge_pressure_without_atmosphere_names_the_field():
    with pytest.raises(InputError) as error:
        parse_quantity("30 barg", Kind.PRESSURE, "stations.A.suction.pressure")
    assert str(error.value) == (
        "stations.A.suction.pressure: '30 barg' is a gauge pressure but no atmospheric "
        "pressure is known; give site.elevation or site.atmospheric_pressure, or use an "
        "absolute unit")


def test_reference_conditions_iso13443_us_and_normal():
    iso, us, normal = (REFERENCE_CONDITIONS[k] for k in ("iso", "us", "normal"))
    # ISO 13443: 15 degC and 101.325 kPa; normal: 0 degC and 101.325 kPa (DIN 1343).
    assert (iso.temperature, iso.pressure) == (288.15, 101_325.0)
    assert (normal.temperature, normal.pressure) == (273.15, 101_325.0)
    # US standard: 60 degF = 288.7056 K; 14.696 psia = 101.3254 kPa (SP 811 psi factor).
    assert_allclose(us.temperature, (60.0 + 459.67) / 1.8, rtol=EXACT)
    assert_allclose(us.pressure, 14.696 * 6.894757e3, rtol=SP811)
    # Ideal-gas molar volume at normal conditions: 22.413 969 54 L/mol (CODATA 2018).
    assert_allclose(8.314462618 * normal.temperature / normal.pressure, 22.41396954e-3,
                    rtol=1e-9)


@pytest.mark.parametrize(
    ("text", "value", "reference"),
    [
        # 1 MMSCMD = 1e6 m3 / 86400 s = 11.574074 m3/s at ISO 13443 conditions.
        ("1 MMSCMD", 11.574074074, "iso"),
        # 1 MMSCF = 1e6 ft3 x 0.3048^3 = 28 316.846 592 m3 exactly (SP 811: foot exact);
        # per day 0.327 741 28 m3/s at 60 degF, 14.696 psia.
        ("1 MMSCFD", 0.32774128, "us"),
        ("1000 MSCFD", 0.32774128, "us"),
        ("1 mmscfd", 0.32774128, "us"),
        ("3600 Sm3/h", 1.0, "iso"),
        ("86400 Sm3/d", 1.0, "iso"),
        ("3600 Nm3/h", 1.0, "normal"),
        ("60 SCFM", 60 * 0.3048**3 / 60, "us"),
    ],
)
def test_standard_volume_flows(text, value, reference):
    flow = parse_flow(text, "demand")
    assert flow.basis is FlowBasis.STANDARD_VOLUME
    assert flow.reference == REFERENCE_CONDITIONS[reference]
    # 1e-9: the factors above are exact to the digits written.
    assert_allclose(flow.value, value, rtol=1e-9)


def test_mass_and_actual_volume_flows_keep_their_basis():
    mass = parse_flow("400000 lb/h", "demand")
    actual = parse_flow("5000 ft3/min", "demand")
    assert mass.basis is FlowBasis.MASS
    assert mass.reference is None
    assert actual.basis is FlowBasis.ACTUAL_VOLUME
    assert actual.reference is None
    assert_allclose(mass.value, 400000 * 1.259979e-4, rtol=SP811)  # SP 811
    assert_allclose(actual.value, 5000 * 4.719474e-4, rtol=SP811)  # SP 811
    assert set(STANDARD_FLOW_UNITS) >= {"MMSCFD", "MSCFD", "MMSCMD", "SM3/H", "NM3/H"}


@pytest.mark.parametrize(
    ("value", "kind", "unit", "expected", "rtol"),
    [
        (150.0, Kind.SPEED, "rpm", 9000.0, EXACT),
        (1e5, Kind.PRESSURE, "psi", 1e5 / 6.894757e3, SP811),  # SP 811
        (298.15, Kind.TEMPERATURE, "degC", 25.0, EXACT),
        (298.15, Kind.TEMPERATURE, "degF", 77.0, EXACT),
        (7.456999e2, Kind.POWER, "hp", 1.0, SP811),  # SP 811
        (2.989067, Kind.HEAD, "ft*lbf/lb", 1.0, SP811),  # SP 811
    ],
)
def test_to_unit_inverts_parsing(value, kind, unit, expected, rtol):
    assert_allclose(to_unit(value, kind, unit), expected, rtol=rtol)


@pytest.mark.parametrize(
    ("text", "kind", "expected"),
    [
        (45, Kind.PRESSURE, "suction.pressure: the bare number 45 has no unit; write it with "
         "one, e.g. '45 bar', '650 psia', '30 barg', '4.5 MPa'"),
        ("45", Kind.PRESSURE, "suction.pressure: '45' has no unit; write it with one, e.g. "
         "'45 bar', '650 psia', '30 barg', '4.5 MPa'"),
        ("45 psi", Kind.PRESSURE, "suction.pressure: '45 psi' does not say absolute or "
         "gauge; write psia or psig"),
        ("45 kg", Kind.PRESSURE, "suction.pressure: '45 kg' is not a pressure; e.g. '45 bar', "
         "'650 psia', '30 barg', '4.5 MPa'"),
        ("45 blah", Kind.PRESSURE, "suction.pressure: unknown unit in '45 blah'; e.g. "
         "'45 bar', '650 psia', '30 barg', '4.5 MPa'"),
        ("high bar", Kind.PRESSURE, "suction.pressure: cannot read 'high bar' as a number "
         "with a unit; e.g. '45 bar', '650 psia', '30 barg', '4.5 MPa'"),
        (None, Kind.PRESSURE, "suction.pressure: expected a pressure with a unit; e.g. "
         "'45 bar', '650 psia', '30 barg', '4.5 MPa'"),
        ("-5 bar", Kind.PRESSURE, "suction.pressure: '-5 bar' is not above zero absolute "
         "pressure; give a positive absolute pressure, e.g. '45 bar', '650 psia', '30 barg', "
         "'4.5 MPa'"),
        ("0 MPa", Kind.PRESSURE, "suction.pressure: '0 MPa' is not above zero absolute "
         "pressure; give a positive absolute pressure, e.g. '45 bar', '650 psia', '30 barg', "
         "'4.5 MPa'"),
        ("-300 degC", Kind.TEMPERATURE, "suction.pressure: '-300 degC' is at or below "
         "absolute zero; give a temperature above 0 K, e.g. '25 degC', '77 degF', '298.15 K'"),
        ("9000 rpm", Kind.POWER, "suction.pressure: '9000 rpm' is not a power; e.g. '12 MW', "
         "'8500 kW', '15000 hp'"),
        ("30 barg", Kind.PRESSURE_DIFFERENCE, "suction.pressure: gauge unit 'barg' used for "
         "a pressure difference"),
        ("9000 furlongs", Kind.SPEED, "suction.pressure: unknown speed unit 'furlongs'; use "
         "one of rpm, rev/min, r/min, 1/min, rev/s, 1/s, Hz, rad/s"),
    ],
)
def test_bad_quantities_give_one_line_naming_the_field(text, kind, expected):
    with pytest.raises(InputError) as error:
        parse_quantity(text, kind, "suction.pressure")
    assert str(error.value) == expected
    assert "\n" not in str(error.value)


def test_negative_gauge_below_vacuum_is_rejected():
    with pytest.raises(InputError, match=r"^p: '-2 barg' is not above zero absolute pressure"):
        parse_quantity("-2 barg", Kind.PRESSURE, "p", atmospheric=101_325.0)


def test_bad_flows_name_the_field():
    with pytest.raises(InputError, match=r"^demand: '45 bar' is not a flow; give a mass flow"):
        parse_flow("45 bar", "demand")
    with pytest.raises(InputError, match=r"^demand: the bare number 120 has no unit"):
        parse_flow(120, "demand")


def test_elevation_outside_the_troposphere_is_rejected():
    with pytest.raises(InputError, match=r"^site\.elevation: 12000 m is outside -500 m to 11 km$"):
        atmospheric_pressure(12_000.0)
