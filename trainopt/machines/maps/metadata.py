"""Map file metadata: the YAML reader with key locations, the head basis, the test conditions.

Part of the map file format (docs/maps.md); :mod:`trainopt.machines.maps.table` reads the
rest.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import yaml

from trainopt.errors import InputError
from trainopt.physics.compression import HeadBasis
from trainopt.physics.units import Kind, parse_quantity


@dataclass(frozen=True)
class TestConditions:
    """Gas and suction conditions of the test that produced a map (for the record).

    Parameters
    ----------
    gas : str or dict
        Description of the test gas, or its composition as mole fractions [-].
    suction_pressure : float or None
        Absolute suction pressure of the test [Pa].
    suction_temperature : float or None
        Suction temperature of the test [K].
    """

    __test__ = False  # not a pytest test class

    gas: str | dict[str, float] | None = None
    suction_pressure: float | None = None
    suction_temperature: float | None = None


def read_yaml_with_marks(path: Path) -> tuple[dict, dict[str, str]]:
    """Read a YAML mapping and, for each key path (``fit.speed_dependence``), its location."""
    text = path.read_text()
    try:
        root = yaml.compose(text, Loader=yaml.SafeLoader)
        data = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"{path}:{mark.line + 1}:{mark.column + 1}" if mark else str(path)
        raise InputError(where, f"not valid YAML: {getattr(exc, 'problem', exc)}") from exc
    if not isinstance(data, dict):
        raise InputError(f"{path}:1:1", "expected a mapping of keys (name, basis, table, ...)")
    marks: dict[str, str] = {}

    def walk(node, prefix):
        if isinstance(node, yaml.MappingNode):
            for key, value in node.value:
                mark = key.start_mark
                marks[prefix + str(key.value)] = f"{path}:{mark.line + 1}:{mark.column + 1}"
                walk(value, f"{prefix}{key.value}.")

    walk(root, "")
    return data, marks


def read_basis(meta: dict, marks: dict[str, str], path: Path) -> HeadBasis:
    """The ``basis`` key of a map file's metadata; InputError naming its location if bad."""
    if "basis" not in meta:
        raise InputError(
            str(path), "no 'basis' key", "add 'basis: polytropic' or 'basis: isentropic'"
        )
    try:
        return HeadBasis(str(meta["basis"]).strip().lower())
    except ValueError:
        raise InputError(
            marks["basis"],
            f"basis {meta['basis']!r} is not known",
            "write polytropic or isentropic",
        ) from None


def read_test_conditions(raw, marks: dict[str, str]) -> TestConditions:
    """The ``test_conditions`` mapping of a map file, in SI; InputError naming a bad key."""
    if raw is None:
        return TestConditions()
    if not isinstance(raw, dict):
        raise InputError(
            marks["test_conditions"],
            "expected a mapping (gas, suction_pressure, suction_temperature)",
        )
    known = {
        "gas": None,
        "suction_pressure": Kind.PRESSURE,
        "suction_temperature": Kind.TEMPERATURE,
    }
    values = {}
    for key, value in raw.items():
        where = marks[f"test_conditions.{key}"]
        if key not in known:
            raise InputError(where, f"unknown key {key!r}", f"use {', '.join(known)}")
        values[key] = value if known[key] is None else parse_quantity(value, known[key], where)
    gas = values.get("gas")
    if isinstance(gas, dict):
        total = sum(float(x) for x in gas.values())
        if abs(total - 1.0) > 1e-3:
            raise InputError(
                marks["test_conditions.gas"], f"mole fractions add up to {total:.4f}, not 1"
            )
    return TestConditions(**values)
