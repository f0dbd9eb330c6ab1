"""Map input: our map file format (YAML metadata + CSV table) and published-coefficient maps.

A map is a YAML file of metadata that names a CSV table of measured points, or that holds
a published fit as coefficients (GasLib layout). The format is described in docs/maps.md.
Every problem found in the input raises :class:`~trainopt.errors.InputError` naming
``file:line:column`` (CSV: line number and column name; YAML: line and column numbers).
"""

from __future__ import annotations

import csv
import re
from dataclasses import dataclass, field
from enum import Enum
from pathlib import Path

import numpy as np
import pandas as pd

from trainopt.errors import InputError
from trainopt.machines.maps.coefficients import coefficient_map_from_yaml
from trainopt.machines.maps.compressor_map import (
    CompressorMap,
    HeadBasis,
)
from trainopt.machines.maps.metadata import (
    TestConditions,
    read_basis,
    read_test_conditions,
    read_yaml_with_marks,
)
from trainopt.machines.maps.pressure_curves import PRESSURE_COLUMNS, heads_from_pressures
from trainopt.physics.units import Kind, parse_quantity

MIN_POINTS_PER_LINE = 3
"""Fewest points a speed line may have: a surge point and two more, enough to fix a
quadratic in flow along the line."""


class PointKind(Enum):
    """Role of a point on its speed line (the ``point`` column)."""

    SPEED_LINE = ""
    SURGE = "surge"
    STONEWALL = "stonewall"


@dataclass(frozen=True, eq=False)
class MapTable:
    """Measured points of a map, validated, in SI, with where each came from.

    Parameters
    ----------
    name : str
        Name of the machine.
    basis : HeadBasis
        Basis of head and efficiency.
    points : pandas.DataFrame
        One row per point: ``speed`` [1/s], ``flow`` [m³/s], ``head`` [J/kg],
        ``efficiency`` [-] (NaN where not given), ``kind`` (:class:`PointKind`) and
        ``line`` (line number in the CSV file).
    path : str
        The CSV file, for messages.
    header_line : int
        Line number of the CSV header.
    units : dict
        Column name to the unit written in the header, for messages and reports.
    test_conditions : TestConditions
        Gas and suction conditions of the test.
    description : str
        Free text from the metadata (source, caveats).
    speed_dependence : str or None
        Fit option from the metadata (``fit.speed_dependence``), if given.
    speed_dependence_field : str
        Where that option was written (``file:line:column``).
    impeller_diameter : float or None
        Impeller outer diameter [m], if stated (``impeller_diameter``), for the unit check.
    conversion : pandas.DataFrame or None
        Where the table gave pressure ratio or discharge pressure instead of head, the
        conversion per point (see
        :func:`~trainopt.machines.maps.pressure_curves.heads_from_pressures`).
    conversion_note : str
        One line saying how heads were converted; empty when the table gave head.
    """

    name: str
    basis: HeadBasis
    points: pd.DataFrame
    path: str
    header_line: int
    units: dict[str, str]
    test_conditions: TestConditions = field(default_factory=TestConditions)
    description: str = ""
    speed_dependence: str | None = None
    speed_dependence_field: str = ""
    impeller_diameter: float | None = None
    conversion: pd.DataFrame | None = None
    conversion_note: str = ""

    @property
    def speed_lines(self) -> list[pd.DataFrame]:
        """The points of each speed line, lines by rising speed, points by rising flow."""
        ordered = self.points.sort_values(["speed", "flow"], kind="stable")
        return [group for _, group in ordered.groupby("speed", sort=True)]


_COLUMNS = {
    "speed": Kind.SPEED,
    "flow": Kind.VOLUME_FLOW,
    "head": Kind.HEAD,
    "efficiency": Kind.DIMENSIONLESS,
    "point": None,
    "pressure_ratio": Kind.DIMENSIONLESS,
    "discharge_pressure": Kind.PRESSURE,
}
_REQUIRED = ("speed", "flow")
_HEAD_COLUMNS = ("head", *PRESSURE_COLUMNS)
_EXAMPLE = {
    "speed": "speed [rpm]",
    "flow": "flow [m3/s]",
    "head": "head [kJ/kg]",
    "efficiency": "efficiency [-]",
    "pressure_ratio": "pressure_ratio [-]",
    "discharge_pressure": "discharge_pressure [bar]",
}
_HEADER_CELL = re.compile(r"^\s*([A-Za-z_]+)\s*(?:\[\s*(.*?)\s*\])?\s*$")
_METADATA_KEYS = {
    "name",
    "description",
    "basis",
    "table",
    "coefficients",
    "test_conditions",
    "fit",
    "impeller_diameter",
}


def read_map_source(path: str | Path) -> MapTable | CompressorMap:
    """Read a map file: a table of points to be fitted, or a published-coefficient map.

    Parameters
    ----------
    path : str or Path
        The YAML metadata file, or the CSV table with its YAML metadata beside it (same
        name, ``.yaml``).

    Returns
    -------
    MapTable or CompressorMap
        The validated points, or the map built from published coefficients.

    Raises
    ------
    InputError
        Naming ``file:line:column`` and the reason, for any problem in the input.
    """
    path = Path(path)
    if path.suffix.lower() == ".csv":
        meta_path = path.with_suffix(".yaml")
        if not meta_path.exists():
            raise InputError(
                str(path),
                f"no metadata file {meta_path.name} beside the table",
                f"write {meta_path.name} with at least 'basis: polytropic' (or isentropic) "
                f"and 'table: {path.name}'",
            )
    else:
        meta_path = path
    if not meta_path.exists():
        raise InputError(str(meta_path), "no such map file")
    meta, marks = read_yaml_with_marks(meta_path)
    for key in meta:
        if key not in _METADATA_KEYS:
            raise InputError(
                marks[key], f"unknown key {key!r}", f"use only {', '.join(sorted(_METADATA_KEYS))}"
            )
    name = str(meta.get("name", meta_path.stem))
    basis = read_basis(meta, marks, meta_path)
    diameter = None
    if meta.get("impeller_diameter") is not None:
        where = marks["impeller_diameter"]
        diameter = parse_quantity(meta["impeller_diameter"], Kind.LENGTH, where)
        if not diameter > 0:
            raise InputError(where, "is not positive", "give the impeller diameter, e.g. '0.45 m'")
    if "coefficients" in meta:
        return coefficient_map_from_yaml(
            meta["coefficients"], marks, name, basis, str(meta_path), impeller_diameter=diameter
        )
    if "table" not in meta:
        raise InputError(
            str(meta_path),
            "no 'table' (nor 'coefficients') key",
            "name the CSV table of points, e.g. 'table: unit_a.csv'",
        )
    table_path = meta_path.parent / str(meta["table"])
    if not table_path.exists():
        raise InputError(marks["table"], f"the table {table_path} does not exist")
    fit = meta.get("fit") or {}
    if not isinstance(fit, dict) or set(fit) - {"speed_dependence"}:
        raise InputError(
            marks["fit"],
            "expected 'fit:' with only 'speed_dependence:' under it",
            "e.g. 'fit: {speed_dependence: three_term}'",
        )
    return _read_csv(
        table_path,
        name=name,
        basis=basis,
        test_conditions=read_test_conditions(meta.get("test_conditions"), marks),
        description=str(meta.get("description", "")).strip(),
        speed_dependence=fit.get("speed_dependence"),
        speed_dependence_field=marks.get("fit.speed_dependence", marks.get("fit", "")),
        impeller_diameter=diameter,
    )


# table ---------------------------------------------------------------------------------


def _read_csv(path: Path, **metadata) -> MapTable:
    lines = path.read_text().splitlines()
    rows = [
        (number, text)
        for number, text in enumerate(lines, start=1)
        if text.strip() and not text.lstrip().startswith("#")
    ]
    if not rows:
        raise InputError(
            f"{path}:1:1",
            "the table is empty",
            "write a header 'speed [rpm],flow [m3/s],head [kJ/kg],efficiency [-],point'",
        )
    header_line, header_text = rows[0]
    names, factors, units = _header(path, header_line, header_text)
    records = []
    for number, text in rows[1:]:
        cells = next(csv.reader([text]))
        if len(cells) != len(names):
            raise InputError(
                f"{path}:{number}:{names[min(len(cells), len(names)) - 1]}",
                f"{len(cells)} cells where the header has {len(names)}",
            )
        records.append(_record(path, number, dict(zip(names, cells, strict=True)), factors, units))
    points = pd.DataFrame(records, columns=["speed", "flow", "head", "efficiency", "kind", "line"])
    column = next(name for name in _HEAD_COLUMNS if name in names)
    conversion, note = None, ""
    if column != "head":
        points[column] = points["head"]
        heads, conversion, note = heads_from_pressures(
            points,
            column,
            metadata["test_conditions"],
            metadata["basis"],
            str(path),
            header_line,
        )
        points = points.drop(columns=column).assign(head=heads)
        factors, units = {**factors, "head": 1e3}, {**units, "head": "kJ/kg (converted)"}
    table = MapTable(
        points=points,
        path=str(path),
        header_line=header_line,
        units=units,
        conversion=conversion,
        conversion_note=note,
        **metadata,
    )
    _check_lines(table, factors)
    return table


def _header(path: Path, number: int, text: str):
    names, factors, units = [], {}, {}
    for cell in next(csv.reader([text])):
        match = _HEADER_CELL.match(cell)
        where = f"{path}:{number}:{cell.strip()}"
        if not match or match.group(1).lower() not in _COLUMNS:
            raise InputError(
                where,
                f"unknown column {cell.strip()!r}",
                f"use {', '.join(_COLUMNS)}, each numeric one with its unit, e.g. 'flow [m3/s]'",
            )
        name, unit = match.group(1).lower(), match.group(2)
        where = f"{path}:{number}:{name}"
        if name in names:
            raise InputError(where, f"column {name!r} appears twice")
        kind = _COLUMNS[name]
        if kind is not None:
            if not unit:
                raise InputError(
                    where,
                    f"column {name!r} has no unit",
                    f"write it with its unit in brackets, e.g. '{_EXAMPLE[name]}'",
                )
            factors[name] = 1.0 if unit == "-" else parse_quantity(f"1 {unit}", kind, where)
            units[name] = unit
        names.append(name)
    for name in _REQUIRED:
        if name not in names:
            raise InputError(
                f"{path}:{number}:{name}",
                f"no {name!r} column",
                "the header needs speed, flow and head (or pressure_ratio or "
                "discharge_pressure) with units",
            )
    given = [name for name in _HEAD_COLUMNS if name in names]
    if len(given) != 1:
        raise InputError(
            f"{path}:{number}:{given[1] if given else 'head'}",
            "no 'head' column" if not given else f"both {given[0]!r} and {given[1]!r} given",
            "give one of head, pressure_ratio or discharge_pressure (absolute), with its unit",
        )
    return names, factors, units


def _record(path: Path, number: int, cells: dict[str, str], factors, units) -> tuple:
    values = {}
    for name, factor in factors.items():
        text = cells[name].strip()
        where = f"{path}:{number}:{name}"
        if not text:
            if name == "efficiency":
                values[name] = np.nan
                continue
            raise InputError(where, f"no {name} value")
        try:
            value = float(text) * factor
        except ValueError:
            raise InputError(where, f"{text!r} is not a number") from None
        if not np.isfinite(value):
            raise InputError(where, f"{text!r} is not a finite number")
        if name == "efficiency" and not 0 < value <= 1:
            raise InputError(
                where,
                f"efficiency {text} {units[name]} is not in (0, 1]",
                "give efficiency as a fraction [-] or in percent [%]",
            )
        if name != "efficiency" and value <= 0:
            raise InputError(
                where,
                f"{name} {text} {units[name]} is not positive",
                "flow, head and speed on a map are positive",
            )
        values[name] = value
    marker = cells.get("point", "").strip().lower()
    try:
        kind = PointKind(marker)
    except ValueError:
        raise InputError(
            f"{path}:{number}:point",
            f"unknown point marker {marker!r}",
            "write surge, stonewall or leave it empty",
        ) from None
    return (
        values["speed"],
        values["flow"],
        next(values[name] for name in _HEAD_COLUMNS if name in values),
        values.get("efficiency", np.nan),
        kind,
        number,
    )


def _check_lines(table: MapTable, factors: dict[str, float]) -> None:
    """Refuse speed lines that are too short, unordered or crossing.

    Head may be flat or rise with flow along a line (often so between the vendor's surge
    point and the peak of the line); the fitted map is checked for what it must satisfy.
    """
    path = table.path

    def show(name, value):
        return f"{value / factors[name]:.5g} {table.units[name]}"

    lines = table.speed_lines
    with_stonewall = [(line.kind == PointKind.STONEWALL).any() for line in lines]
    for line, has_stonewall in zip(lines, with_stonewall, strict=True):
        speed = show("speed", line.speed.iloc[0])
        first = int(line.line.min())
        if len(line) < MIN_POINTS_PER_LINE:
            raise InputError(
                f"{path}:{first}:speed",
                f"the speed line at {speed} has {len(line)} point(s); "
                f"at least {MIN_POINTS_PER_LINE} are needed",
                "give the surge point and at least two more points on each line",
            )
        given = int(line.efficiency.notna().sum())
        if given < MIN_POINTS_PER_LINE:
            raise InputError(
                f"{path}:{first}:efficiency",
                f"the speed line at {speed} has {given} efficiency value(s); "
                f"at least {MIN_POINTS_PER_LINE} are needed",
            )
        duplicate = line.flow.duplicated()
        if duplicate.any():
            raise InputError(
                f"{path}:{int(line.line[duplicate].iloc[0])}:flow",
                f"two points at the same flow on the speed line at {speed}",
            )
        for kind, position, edge in (
            (PointKind.SURGE, 0, "lowest"),
            (PointKind.STONEWALL, -1, "highest"),
        ):
            marked = line[line.kind == kind]
            if len(marked) > 1:
                raise InputError(
                    f"{path}:{int(marked.line.iloc[1])}:point",
                    f"a second {kind.value} point on the speed line at {speed}",
                )
            if len(marked) == 1 and marked.index[0] != line.index[position]:
                raise InputError(
                    f"{path}:{int(marked.line.iloc[0])}:point",
                    f"the {kind.value} point is not the {edge}-flow point of the "
                    f"speed line at {speed}",
                )
        if not (line.kind == PointKind.SURGE).any():
            raise InputError(
                f"{path}:{first}:point",
                f"the speed line at {speed} has no surge point",
                "mark its lowest-flow point 'surge'",
            )
        if any(with_stonewall) and not has_stonewall:
            raise InputError(
                f"{path}:{first}:point",
                f"the speed line at {speed} has no stonewall point but other lines do",
                "mark the highest-flow point 'stonewall' on every line or on none",
            )
    for lower, upper in zip(lines, lines[1:], strict=False):
        for own, other, sign in ((lower, upper, 1.0), (upper, lower, -1.0)):
            within = (own.flow >= other.flow.min()) & (own.flow <= other.flow.max())
            other_head = np.interp(own.flow, other.flow, other["head"])
            crossing = within & (sign * (other_head - own["head"]) <= 0)
            if crossing.any():
                row = own[crossing].iloc[0]
                raise InputError(
                    f"{path}:{int(row.line)}:head",
                    f"the speed lines at {show('speed', lower.speed.iloc[0])} and "
                    f"{show('speed', upper.speed.iloc[0])} cross near {show('flow', row.flow)}",
                    "a higher speed must give more head at the same flow; check speeds and heads",
                )
