"""Quantities with units at the edges: parsing text such as ``"45 barg"`` into SI floats.

Everything inside trainopt is SI: pressure [Pa] (absolute), temperature [K], mass flow
[kg/s], actual volume flow [m³/s], power [W], rotational speed [1/s] (revolutions per
second), head [J/kg]. Text from case files, map headers and CLI options passes once
through :func:`parse_quantity` (or :func:`parse_flow` where mass, actual or standard
volume flows are all allowed) and the result is a plain float.

Standard volume flows carry their reference conditions in the unit's name; see
:data:`REFERENCE_CONDITIONS` and :data:`STANDARD_FLOW_UNITS`. Gauge pressures (``barg``,
``psig``, ``kPag``) need the local atmospheric pressure; :func:`atmospheric_pressure`
gives it from the site elevation.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from enum import Enum

import pint

from trainopt.errors import InputError

ureg = pint.UnitRegistry()
ureg.define("bara = bar")
ureg.define("psia = psi")

STANDARD_GRAVITY = 9.80665
"""Standard acceleration of gravity [m/s²] (CGPM 1901, exact)."""

STANDARD_ATMOSPHERE = 101_325.0
"""Standard atmospheric pressure at sea level [Pa] (ISO 2533, exact)."""

_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


@dataclass(frozen=True)
class ReferenceConditions:
    """Temperature and pressure to which a standard volume is referred.

    Parameters
    ----------
    name : str
        Short name used in reports.
    temperature : float
        Reference temperature [K].
    pressure : float
        Reference absolute pressure [Pa].
    """

    name: str
    temperature: float
    pressure: float


REFERENCE_CONDITIONS = {
    "iso": ReferenceConditions("ISO 13443 (15 degC, 101.325 kPa)", 288.15, 101_325.0),
    "us": ReferenceConditions(
        "US standard (60 degF, 14.696 psia)", (60.0 + 459.67) * 5.0 / 9.0, 14.696 * 6894.757293168
    ),
    "normal": ReferenceConditions("normal (0 degC, 101.325 kPa)", 273.15, 101_325.0),
}
"""Reference conditions for standard and normal volumes.

ISO 13443:1996 sets 15 °C and 101.325 kPa as the standard reference conditions for
natural gas; the US gas industry quotes 60 °F and 14.696 psia (common practice, e.g.
AGA Report No. 8 examples); "normal" cubic metres are at 0 °C and 101.325 kPa (DIN 1343).
"""

_FT3 = 0.3048**3
_DAY = 86_400.0
_HOUR = 3_600.0
STANDARD_FLOW_UNITS: dict[str, tuple[float, str]] = {
    "MMSCFD": (1e6 * _FT3 / _DAY, "us"),
    "MSCFD": (1e3 * _FT3 / _DAY, "us"),
    "SCFD": (_FT3 / _DAY, "us"),
    "SCFM": (_FT3 / 60.0, "us"),
    "MMSCMD": (1e6 / _DAY, "iso"),
    "SM3/D": (1.0 / _DAY, "iso"),
    "SM3/H": (1.0 / _HOUR, "iso"),
    "NM3/D": (1.0 / _DAY, "normal"),
    "NM3/H": (1.0 / _HOUR, "normal"),
}
"""Standard volume flow units: factor to standard m³/s and the reference-conditions key."""


class Kind(Enum):
    """Physical kind of a quantity, with its SI unit inside trainopt."""

    PRESSURE = "Pa"
    PRESSURE_DIFFERENCE = "Pa "
    TEMPERATURE = "K"
    TEMPERATURE_DIFFERENCE = "delta_degC"
    MASS_FLOW = "kg/s"
    VOLUME_FLOW = "m**3/s"
    POWER = "W"
    SPEED = "1/s"
    HEAD = "J/kg"
    LENGTH = "m"
    DIMENSIONLESS = "dimensionless"


_EXAMPLES = {
    Kind.PRESSURE: "'45 bar', '650 psia', '30 barg', '4.5 MPa'",
    Kind.PRESSURE_DIFFERENCE: "'0.3 bar', '5 psi', '30 kPa'",
    Kind.TEMPERATURE: "'25 degC', '77 degF', '298.15 K'",
    Kind.TEMPERATURE_DIFFERENCE: "'10 K', '18 delta_degF'",
    Kind.MASS_FLOW: "'50 kg/s', '180 t/h', '400000 lb/h'",
    Kind.VOLUME_FLOW: "'9000 m3/h', '5000 ft3/min' (actual, at inlet conditions)",
    Kind.POWER: "'12 MW', '8500 kW', '15000 hp'",
    Kind.SPEED: "'9000 rpm', '150 rev/s'",
    Kind.HEAD: "'80 kJ/kg', '25000 ft*lbf/lb', '8000 m' (metres of head)",
    Kind.LENGTH: "'350 m', '1200 ft'",
    Kind.DIMENSIONLESS: "'0.82', '82 %'",
}

_ALIASES = [
    (re.compile(r"°\s*C"), "degC"),
    (re.compile(r"°\s*F"), "degF"),
    (re.compile(r"\bdeg\s*C\b"), "degC"),
    (re.compile(r"\bdeg\s*F\b"), "degF"),
    (re.compile(r"·"), "*"),
    (re.compile(r"\bft-lbf\b"), "ft*lbf"),
    (re.compile(r"\blbm\b"), "lb"),
    (re.compile(r"\bm3\b"), "m**3"),
    (re.compile(r"\bft3\b"), "ft**3"),
    (re.compile(r"\bAm3\b"), "m**3"),
    (re.compile(r"\b(?:ACFM|acfm)\b"), "ft**3/min"),
    (re.compile(r"%"), "percent"),
]

_GAUGE = {"barg": "bar", "psig": "psi", "kPag": "kPa", "MPag": "MPa"}


def atmospheric_pressure(elevation: float) -> float:
    """Atmospheric pressure at a site elevation, from the standard atmosphere.

    Parameters
    ----------
    elevation : float
        Site elevation above mean sea level [m].

    Returns
    -------
    float
        Absolute atmospheric pressure [Pa].

    Notes
    -----
    Troposphere of the ICAO standard atmosphere (ISO 2533:1975):
    ``p = 101325 (1 - 2.25577e-5 h)^5.25588``, valid below 11 km.

    Examples
    --------
    >>> round(atmospheric_pressure(1000.0))
    89875
    """
    if not -500.0 <= elevation <= 11_000.0:
        raise InputError("site.elevation", f"{elevation:g} m is outside -500 m to 11 km")
    return STANDARD_ATMOSPHERE * (1.0 - 2.25577e-5 * elevation) ** 5.25588


def _split(text: object, field: str, kind: Kind) -> tuple[float, str]:
    if isinstance(text, bool) or text is None:
        raise InputError(field, f"expected a {_name(kind)} with a unit", f"e.g. {_EXAMPLES[kind]}")
    if isinstance(text, int | float):
        if kind is Kind.DIMENSIONLESS:
            return float(text), ""
        raise InputError(field, f"the bare number {text!r} has no unit",
                         f"write it with one, e.g. {_EXAMPLES[kind]}")
    match = _NUMBER.match(str(text))
    if not match:
        raise InputError(
            field, f"cannot read {text!r} as a number with a unit", f"e.g. {_EXAMPLES[kind]}"
        )
    value, unit = float(match.group(1)), match.group(2)
    if not math.isfinite(value):
        raise InputError(field, f"{text!r} is not a finite number")
    if not unit and kind is not Kind.DIMENSIONLESS:
        raise InputError(
            field, f"{text!r} has no unit", f"write it with one, e.g. {_EXAMPLES[kind]}"
        )
    return value, unit


def _name(kind: Kind) -> str:
    return kind.name.lower().replace("_", " ")


def parse_quantity(
    text: object, kind: Kind, field: str, *, atmospheric: float | None = None
) -> float:
    """Read a number with a unit and return it in trainopt's SI unit for that kind.

    Parameters
    ----------
    text : str or float
        The value as written, e.g. ``"45 barg"``. A bare number is accepted only for
        :attr:`Kind.DIMENSIONLESS`.
    kind : Kind
        What the value must be.
    field : str
        Where the value came from, for the error message.
    atmospheric : float, optional
        Local atmospheric pressure [Pa], needed only for gauge pressures.

    Returns
    -------
    float
        The value in SI: Pa (absolute), K, kg/s, m³/s, W, 1/s, J/kg, m or [-].

    Raises
    ------
    InputError
        If the text has no number, no unit, a unit of the wrong kind, a gauge
        pressure with no atmospheric pressure known, an absolute pressure at or below
        zero, or a temperature at or below absolute zero.

    Examples
    --------
    >>> round(parse_quantity("60 degF", Kind.TEMPERATURE, "t"), 6)
    288.705556
    >>> parse_quantity("9000 rpm", Kind.SPEED, "n")
    150.0
    """
    value, unit = _split(text, field, kind)
    if kind is Kind.SPEED:
        return _parse_speed(value, unit, field)
    if kind in (Kind.PRESSURE, Kind.PRESSURE_DIFFERENCE) and unit == "psi":
        if kind is Kind.PRESSURE:
            raise InputError(field, f"'{text}' does not say absolute or gauge",
                             "write psia or psig")
    gauge = unit in _GAUGE
    if gauge:
        if kind is not Kind.PRESSURE:
            raise InputError(field, f"gauge unit '{unit}' used for a {_name(kind)}")
        if atmospheric is None:
            raise InputError(
                field,
                f"'{text}' is a gauge pressure but no atmospheric pressure is known",
                "give site.elevation or site.atmospheric_pressure, or use an absolute unit",
            )
        unit = _GAUGE[unit]
    for pattern, replacement in _ALIASES:
        unit = pattern.sub(replacement, unit)
    try:
        quantity = ureg.Quantity(value, unit) if unit else ureg.Quantity(value)
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError, AttributeError,
            TypeError, ValueError, AssertionError) as exc:
        raise InputError(field, f"unknown unit in {text!r}", f"e.g. {_EXAMPLES[kind]}") from exc
    if kind is Kind.HEAD and quantity.check("[length]"):
        quantity = quantity * ureg.Quantity(STANDARD_GRAVITY, "m/s**2")
    if kind is Kind.TEMPERATURE_DIFFERENCE and quantity.check("[temperature]"):
        unit_text = str(quantity.units)
        if "degree" in unit_text and "delta" not in unit_text:
            quantity = ureg.Quantity(value, "delta_" + unit_text)
    target = "delta_degC" if kind is Kind.TEMPERATURE_DIFFERENCE else kind.value.strip()
    try:
        result = float(quantity.to(target).magnitude)
    except pint.errors.DimensionalityError as exc:
        raise InputError(
            field, f"'{text}' is not a {_name(kind)}", f"e.g. {_EXAMPLES[kind]}"
        ) from exc
    if gauge:
        result += atmospheric
    if kind is Kind.PRESSURE and not result > 0.0:
        raise InputError(field, f"'{text}' is not above zero absolute pressure",
                         f"give a positive absolute pressure, e.g. {_EXAMPLES[kind]}")
    if kind is Kind.TEMPERATURE and not result > 0.0:
        raise InputError(field, f"'{text}' is at or below absolute zero",
                         f"give a temperature above 0 K, e.g. {_EXAMPLES[kind]}")
    return result


_SPEED_UNITS = {
    "rpm": 1 / 60.0, "rev/min": 1 / 60.0, "r/min": 1 / 60.0, "1/min": 1 / 60.0,
    "rev/s": 1.0, "1/s": 1.0, "Hz": 1.0, "rad/s": 1 / (2 * math.pi),
}


def _parse_speed(value: float, unit: str, field: str) -> float:
    if unit not in _SPEED_UNITS:
        raise InputError(
            field, f"unknown speed unit '{unit}'", f"use one of {', '.join(_SPEED_UNITS)}"
        )
    return value * _SPEED_UNITS[unit]


class FlowBasis(Enum):
    """How a flow is stated."""

    MASS = "mass"
    ACTUAL_VOLUME = "actual volume"
    STANDARD_VOLUME = "standard volume"


@dataclass(frozen=True)
class Flow:
    """A flow as the user stated it, in SI, with its basis.

    Parameters
    ----------
    basis : FlowBasis
        Mass, actual volume (at the stated inlet state) or standard volume.
    value : float
        kg/s for mass, m³/s for actual volume, standard m³/s for standard volume.
    reference : ReferenceConditions or None
        Reference conditions of a standard volume; None otherwise.
    """

    basis: FlowBasis
    value: float
    reference: ReferenceConditions | None = None


def parse_flow(text: object, field: str) -> Flow:
    """Read a mass, actual-volume or standard-volume flow with its unit.

    Parameters
    ----------
    text : str
        E.g. ``"120 MMSCFD"``, ``"35000 Sm3/h"``, ``"60 kg/s"``, ``"9000 m3/h"``.
    field : str
        Where the value came from, for the error message.

    Returns
    -------
    Flow
        The flow in SI with its basis and, for standard volumes, reference conditions.

    Examples
    --------
    >>> f = parse_flow("1 MMSCMD", "demand")
    >>> round(f.value, 4), f.reference.temperature
    (11.5741, 288.15)
    """
    value, unit = _split(text, field, Kind.MASS_FLOW)
    key = unit.replace(" ", "").upper()
    if key in STANDARD_FLOW_UNITS:
        factor, reference = STANDARD_FLOW_UNITS[key]
        return Flow(FlowBasis.STANDARD_VOLUME, value * factor, REFERENCE_CONDITIONS[reference])
    try:
        return Flow(FlowBasis.MASS, parse_quantity(text, Kind.MASS_FLOW, field))
    except InputError:
        pass
    try:
        return Flow(FlowBasis.ACTUAL_VOLUME, parse_quantity(text, Kind.VOLUME_FLOW, field))
    except InputError:
        pass
    raise InputError(
        field,
        f"'{text}' is not a flow",
        "give a mass flow ('60 kg/s'), an actual volume flow ('9000 m3/h') or a standard "
        f"volume flow in one of {', '.join(STANDARD_FLOW_UNITS)}",
    )


def to_unit(value: float, kind: Kind, unit: str) -> float:
    """Convert an SI value of a kind to a display unit (the inverse of parsing).

    Parameters
    ----------
    value : float
        Value in trainopt's SI unit for ``kind``.
    kind : Kind
        Its kind.
    unit : str
        Target unit, e.g. ``"kPa"``, ``"degC"``, ``"rpm"``, ``"kW"``.

    Returns
    -------
    float
        The value in ``unit``.
    """
    if kind is Kind.SPEED:
        return value / _SPEED_UNITS[unit]
    return float(ureg.Quantity(value, kind.value.strip()).to(unit).magnitude)
