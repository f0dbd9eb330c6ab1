"""Maps published as coefficients (the GasLib layout), from Python or from a map file.

:func:`map_from_coefficients` builds a :class:`~trainopt.machines.maps.compressor_map.CompressorMap`
that is exactly the published polynomials; :func:`coefficient_map_from_yaml` reads the
``coefficients`` mapping of a map file (see docs/maps.md).
"""

from __future__ import annotations

from collections.abc import Sequence

from trainopt.errors import InputError
from trainopt.machines.maps.compressor_map import (
    CompressorMap,
    HeadBasis,
    HeadCurve,
    Monomials,
)
from trainopt.machines.maps.plausibility import check_map_units
from trainopt.machines.maps.shape import check_map_shape
from trainopt.physics.units import Kind, parse_quantity


def map_from_coefficients(
    head: Sequence[float],
    efficiency: Sequence[float],
    surge: Sequence[float],
    stonewall: Sequence[float],
    speed_min: float,
    speed_max: float,
    *,
    name: str,
    basis: HeadBasis = HeadBasis.ISENTROPIC,
    source: str = "",
    impeller_diameter: float | None = None,
) -> CompressorMap:
    """Build a map from coefficients published in the GasLib layout.

    Parameters
    ----------
    head : sequence of 9 float
        ``c1..c9`` of the head [kJ/kg]: ``H = c1 + c2 n + c3 n² + (c4 + c5 n + c6 n²) Q
        + (c7 + c8 n + c9 n²) Q²`` with n in [1/min] and Q in [m³/s].
    efficiency : sequence of 9 float
        ``c1..c9`` of the efficiency [-], same layout.
    surge, stonewall : sequence of 3 float
        ``c1..c3`` of the surge and stonewall (choke) lines, ``H = c1 + c2 Q + c3 Q²``
        [kJ/kg], Q in [m³/s].
    speed_min, speed_max : float
        Tested speed range [1/s].
    name : str
        Name of the machine.
    basis : HeadBasis
        Basis of head and efficiency; GasLib maps are adiabatic (isentropic).
    source : str
        Citation or file, for messages.
    impeller_diameter : float, optional
        Impeller outer diameter [m], for the unit check
        (:func:`~trainopt.machines.maps.plausibility.check_map_units`).

    Returns
    -------
    CompressorMap
        The map, exactly the published polynomials.

    Raises
    ------
    InputError
        If the coefficients are not 9, 9, 3, 3 numbers, the speed range is empty, or the
        map breaks the physics inside its range (see
        :func:`~trainopt.machines.maps.shape.check_map_shape`).

    References
    ----------
    Schmidt, M. et al. (2017), "GasLib - A Library of Gas Network Instances", Data 2(4):40,
    doi:10.3390/data2040040.
    """
    field_name = source or name
    for label, values, count in (
        ("head", head, 9),
        ("efficiency", efficiency, 9),
        ("surge", surge, 3),
        ("stonewall", stonewall, 3),
    ):
        if len(values) != count or not all(isinstance(v, int | float) for v in values):
            raise InputError(f"{field_name}: {label}", f"expected {count} numbers, got {values!r}")
    if not 0 < speed_min <= speed_max:
        raise InputError(
            f"{field_name}: speed range",
            f"minimum speed {speed_min * 60:g} rpm is not between 0 and "
            f"the maximum {speed_max * 60:g} rpm",
        )
    flow_powers = (0, 0, 0, 1, 1, 1, 2, 2, 2)
    speed_powers = (0, 1, 2, 0, 1, 2, 0, 1, 2)
    per_rpm = [60.0**b for b in speed_powers]  # n [1/min] = 60 N [1/s]

    def surface(coefficients, scale):
        return Monomials(
            tuple(float(c) * k for c, k in zip(coefficients, per_rpm, strict=True)),
            flow_powers,
            speed_powers,
            1.0,
            1.0,
            scale,
        )

    compressor_map = CompressorMap(
        name=name,
        basis=basis,
        head_surface=surface(head, 1e3),
        efficiency_surface=surface(efficiency, 1.0),
        surge_line=HeadCurve(tuple(1e3 * float(c) for c in surge)),
        stonewall_line=HeadCurve(tuple(1e3 * float(c) for c in stonewall)),
        speed_range=(float(speed_min), float(speed_max)),
        source=source,
    )
    check_map_shape(compressor_map, field_name)
    check_map_units(compressor_map, field_name, impeller_diameter)
    return compressor_map


def coefficient_map_from_yaml(
    raw, marks, name, basis, path, *, impeller_diameter=None
) -> CompressorMap:
    """A map from the ``coefficients`` mapping of a map file (``marks``: key -> location)."""
    keys = {"layout", "speed_min", "speed_max", "head", "efficiency", "surge", "stonewall"}
    if not isinstance(raw, dict):
        raise InputError(marks["coefficients"], "expected a mapping of coefficients")
    for key in sorted(keys - set(raw)):
        raise InputError(marks["coefficients"], f"missing {key!r}", f"give all of {sorted(keys)}")
    for key in sorted(set(raw) - keys):
        raise InputError(marks[f"coefficients.{key}"], f"unknown key {key!r}")
    if raw["layout"] != "gaslib":
        raise InputError(
            marks["coefficients.layout"],
            f"layout {raw['layout']!r} is not known",
            "write 'layout: gaslib' (the only layout read so far)",
        )
    for key in ("head", "efficiency", "surge", "stonewall"):
        count = 3 if key in ("surge", "stonewall") else 9
        value = raw[key]
        if not (
            isinstance(value, list)
            and len(value) == count
            and all(isinstance(v, int | float) for v in value)
        ):
            raise InputError(marks[f"coefficients.{key}"], f"expected a list of {count} numbers")
    speeds = [
        parse_quantity(raw[k], Kind.SPEED, marks[f"coefficients.{k}"])
        for k in ("speed_min", "speed_max")
    ]
    if not 0 < speeds[0] <= speeds[1]:
        raise InputError(
            marks["coefficients.speed_min"], "speed_min must be positive and not above speed_max"
        )
    return map_from_coefficients(
        raw["head"],
        raw["efficiency"],
        raw["surge"],
        raw["stonewall"],
        speeds[0],
        speeds[1],
        name=name,
        basis=basis,
        source=path,
        impeller_diameter=impeller_diameter,
    )
