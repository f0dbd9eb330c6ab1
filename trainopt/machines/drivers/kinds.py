"""Driver kinds by their case-file name, and building a driver from a case-file mapping."""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping

from trainopt.errors import InputError
from trainopt.machines.drivers.base import Driver, _require
from trainopt.machines.drivers.motors import FixedSpeedMotor, VariableSpeedMotor
from trainopt.machines.drivers.turbines import GasTurbine, PolynomialGasTurbine, SteamTurbine

DRIVER_KINDS: dict[str, type[Driver]] = {
    cls.kind: cls
    for cls in (FixedSpeedMotor, VariableSpeedMotor, GasTurbine, PolynomialGasTurbine, SteamTurbine)
}
"""Driver classes by the ``kind`` name used in case files."""


def driver_from_dict(data: Mapping[str, object], field_prefix: str) -> Driver:
    """Build a driver from a case-file mapping whose quantities carry units.

    Parameters
    ----------
    data : mapping
        ``kind`` (a key of :data:`DRIVER_KINDS`) and the class's fields, e.g.
        ``{"kind": "gas_turbine", "rated_power": "12 MW", "heat_rate": "10500 kJ/kWh", ...}``.
    field_prefix : str
        Key path of the mapping in the case, e.g. ``units.GT1.driver``, for error messages.

    Returns
    -------
    Driver
        The driver, SI inside.

    Raises
    ------
    InputError
        Naming ``<field_prefix>.<field>`` and the fix, for an unknown kind or field, a
        missing field, a bad unit or a value out of range.
    """
    if not isinstance(data, Mapping):
        raise InputError(
            field_prefix, f"expected a mapping of driver fields, got {data!r}",
            "give kind and the fields of that kind, e.g. kind: gas_turbine",
        )
    kind = data.get("kind")
    if kind not in DRIVER_KINDS:
        raise InputError(
            f"{field_prefix}.kind", f"unknown driver kind {kind!r}",
            f"use one of {', '.join(DRIVER_KINDS)}",
        )
    cls = DRIVER_KINDS[kind]
    fields = {f.name: f for f in dataclasses.fields(cls)}
    for key in data:
        _require(
            key == "kind" or key in fields, f"{field_prefix}.{key}",
            f"is not a field of a {kind} driver", f"use one of {', '.join(fields)}",
        )
    values = {}
    for name, spec in fields.items():
        path = f"{field_prefix}.{name}"
        if name in data:
            values[name] = spec.metadata["parse"](data[name], path)
        elif spec.default is dataclasses.MISSING:
            raise InputError(path, "is missing", f"give it, e.g. {spec.metadata['example']}")
    try:
        return cls(**values)
    except InputError as error:
        raise InputError(f"{field_prefix}.{error.field}", error.problem, error.fix) from None
