"""Reading operating history (CSV or Parquet) through a column mapping, with counted skips.

A historian export has its own column names and units. A column mapping (YAML, see
``docs/studies.md``) says which column holds which quantity and in which unit; this module
reads the file, checks it against the mapping and converts every value to SI once. Rows
with a missing or impossible value in a needed column are skipped and counted by reason,
never filled; the caller sees every count in :attr:`History.skipped`.

Flows keep their basis (mass, standard volume or actual volume) until the gas and the
suction state of the row are known: :func:`mass_flow` converts them in the audit.

The column-mapping schema lives in :mod:`~trainopt.studies.history_mapping`, the
column-by-column conversion to SI in :mod:`~trainopt.studies.history_columns` and the
recycle valve's flow in :mod:`~trainopt.studies.recycle_valve`; their public names are
importable from here as well.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from trainopt.errors import InputError
from trainopt.physics.units import FlowBasis, Kind
from trainopt.studies.history_columns import NEGATIVE_ZERO_FRACTION, _linear, _Reader
from trainopt.studies.history_mapping import (
    Column,
    ColumnMapping,
    FlowColumn,
    GasColumn,
    PowerColumn,
    Quantity,
    StationColumns,
    TimeColumn,
    UnitColumns,
    ValveColumn,
    load_mapping,
)
from trainopt.studies.recycle_valve import (
    VALVE_CHARACTERISTICS,
    valve_kv_fraction,
    valve_mass_flow,
)

__all__ = [
    "NEGATIVE_ZERO_FRACTION",
    "VALVE_CHARACTERISTICS",
    "Column",
    "ColumnMapping",
    "FlowColumn",
    "GasColumn",
    "History",
    "PowerColumn",
    "Quantity",
    "StationColumns",
    "TimeColumn",
    "UnitColumns",
    "ValveColumn",
    "describe_skips",
    "load_mapping",
    "mass_flow",
    "read_history",
    "valve_kv_fraction",
    "valve_mass_flow",
]


_UNIT_STATES = {"suction_pressure": Kind.PRESSURE, "suction_temperature": Kind.TEMPERATURE,
                "discharge_pressure": Kind.PRESSURE, "discharge_temperature": Kind.TEMPERATURE}
"""Optional per-unit state columns (used by the calibration)."""


@dataclass
class History:
    """Operating history in SI, one row per timestamp.

    Attributes
    ----------
    frame : pandas.DataFrame
        Index ``time`` (timezone-aware, rising, unique). Columns: ``suction_pressure``,
        ``discharge_pressure`` [Pa]; ``suction_temperature``, ``ambient_temperature``
        [K]; ``gas`` (label); ``station_flow``; per unit ``<unit>.flow``,
        ``<unit>.recycle`` (flows in the SI unit of their basis, see ``flow_basis``),
        ``<unit>.valve`` [-], ``<unit>.speed`` [1/s], ``<unit>.power`` [W],
        ``<unit>.available`` (bool), optional ``<unit>.suction_pressure``,
        ``<unit>.discharge_pressure`` [Pa], ``<unit>.suction_temperature``,
        ``<unit>.discharge_temperature`` [K] (NaN where missing), and ``line`` (file line
        of the row).
    mapping : ColumnMapping
    flow_basis : dict of str to (FlowBasis, str or None)
        Per flow column, its basis and the reference-conditions key of standard volumes.
    skipped : dict of str to int
        Rows skipped, by reason.
    skipped_rows : pandas.DataFrame
        ``line``, ``time`` and ``reason`` of every skipped row.
    interval : float
        Median spacing of the timestamps [s]; each row stands for this long.
    gases : dict of str to object
        Label to ``"case"``, a file path, or a composition mapping.
    source : Path
    """

    frame: pd.DataFrame
    mapping: ColumnMapping
    flow_basis: dict
    skipped: dict[str, int]
    skipped_rows: pd.DataFrame
    interval: float
    gases: dict = field(default_factory=dict)
    source: Path | None = None

    @property
    def units(self) -> list[str]:
        """Unit names in the mapping."""
        return list(self.mapping.units)


def read_history(path: str | Path, mapping: ColumnMapping | str | Path, case,
                 sort: bool = False) -> History:
    """Read a history file through a column mapping; convert to SI; skip and count bad rows.

    Parameters
    ----------
    path : str or Path
        ``.csv`` (comma-separated, one header line) or ``.parquet``.
    mapping : ColumnMapping or path
        The column mapping or its YAML file.
    case : trainopt.Case
        The station: unit names, atmospheric pressure for gauge units.
    sort : bool, optional
        Sort rows by time instead of refusing a file whose timestamps go backwards.

    Returns
    -------
    History

    Raises
    ------
    InputError
        Wrong file type, unreadable file, a mapped column absent from the file, a case
        unit absent from the mapping (or the reverse), a unit string that is not a unit,
        timestamps that go backwards (unless ``sort``).
    """
    if not isinstance(mapping, ColumnMapping):
        mapping = load_mapping(mapping)
    path = Path(path)
    raw = _read_table(path)
    where = mapping.where
    _check_units(mapping, case, where)
    _check_columns(mapping, raw, path, where)
    reader = _Reader(raw, path, case.atmospheric_pressure)
    out = pd.DataFrame(index=raw.index)
    out["line"] = raw.index + (2 if path.suffix.lower() == ".csv" else 1)
    time = reader.time(mapping.time)
    st = mapping.station
    out["suction_pressure"] = reader.quantity(st.suction_pressure, Kind.PRESSURE,
                                              "station.suction_pressure")
    out["discharge_pressure"] = reader.quantity(st.discharge_pressure, Kind.PRESSURE,
                                                "station.discharge_pressure")
    out["suction_temperature"] = reader.quantity(st.suction_temperature, Kind.TEMPERATURE,
                                                 "station.suction_temperature")
    out["ambient_temperature"] = (reader.quantity(st.ambient_temperature, Kind.TEMPERATURE,
                                                  "station.ambient_temperature")
                                  if st.ambient_temperature else case.ambient_temperature)
    basis = {}
    if st.station_flow:
        out["station_flow"], basis["station_flow"] = reader.flow(st.station_flow,
                                                                 "station.station_flow")
    gases = {"case": "case"}
    out["gas"] = "case"
    if st.gas:
        out["gas"], gases = reader.labels(st.gas)
        here = mapping._path.parent if mapping._path else Path.cwd()
        gases = {label: (here / value if isinstance(value, str) and value != "case" else value)
                 for label, value in gases.items()}
    for name, unit in mapping.units.items():
        key = f"units.{name}"
        out[f"{name}.flow"], basis[f"{name}.flow"] = reader.flow(unit.flow, key + ".flow")
        if unit.recycle:
            out[f"{name}.recycle"], basis[f"{name}.recycle"] = reader.flow(unit.recycle,
                                                                           key + ".recycle")
        if unit.recycle_valve:
            out[f"{name}.valve"] = reader.valve(unit.recycle_valve, key + ".recycle_valve")
        if unit.speed:
            out[f"{name}.speed"] = reader.quantity(unit.speed, Kind.SPEED, key + ".speed",
                                                   required=False)
        if unit.power:
            out[f"{name}.power"] = reader.quantity(unit.power, Kind.POWER, key + ".power",
                                                   required=False)
        if unit.available:
            out[f"{name}.available"] = reader.flag(unit.available, key + ".available")
        for state, kind in _UNIT_STATES.items():
            spec = getattr(unit, state)
            if spec is not None:  # never skips the row: gaps are NaN, counted by calibration
                a, b = _linear(spec.unit, kind, f"{key}.{state}", case.atmospheric_pressure)
                out[f"{name}.{state}"] = a * reader.numbers(spec.column, f"{key}.{state}",
                                                            required=False) + b
    bad = reader.bad
    pair = (out["discharge_pressure"] <= out["suction_pressure"]) & ~bad.any(axis=1)
    bad["discharge pressure not above suction pressure"] = pair
    return _finish(out, time, bad, reader, mapping, basis, gases, path, sort)


def _finish(out, time, bad, reader, mapping, basis, gases, path, sort) -> History:
    out.index = time
    out.index.name = "time"
    reasons = pd.Series("", index=out.index)
    for reason in bad.columns:
        mask = bad[reason].to_numpy() & (reasons.to_numpy() == "")
        reasons.iloc[np.flatnonzero(mask)] = reason
    no_time = out.index.isna()
    reasons.iloc[np.flatnonzero(no_time & (reasons.to_numpy() == ""))] = \
        f"time: missing, unreadable or ambiguous in {mapping.time.timezone}"
    valid_time = ~no_time
    times = out.index[valid_time]
    back = np.flatnonzero(times[1:] < times[:-1]) if len(times) > 1 else np.array([], int)
    if back.size and not sort:
        lines = out["line"].to_numpy()[valid_time]
        raise InputError(f"{path}:{lines[back[0] + 1]}: {mapping.time.column}",
                         f"the time {times[back[0] + 1]} comes after {times[back[0]]}: the "
                         "timestamps go backwards", "sort the file by time, or pass "
                         "sort=True (--sort)")
    duplicated = out.index.duplicated(keep=False) & valid_time
    reasons.iloc[np.flatnonzero(duplicated & (reasons.to_numpy() == ""))] = \
        "time: the same timestamp appears on more than one row"
    keep = reasons.to_numpy() == ""
    skipped_rows = pd.DataFrame({"line": out["line"].to_numpy()[~keep],
                                 "time": out.index[~keep], "reason": reasons.to_numpy()[~keep]})
    frame = out[keep].sort_index(kind="stable")
    spacing = frame.index.to_series().diff().dt.total_seconds().to_numpy()[1:]
    interval = float(np.median(spacing)) if spacing.size else 3600.0
    skipped = skipped_rows["reason"].value_counts().to_dict()
    return History(frame, mapping, basis, {str(k): int(v) for k, v in skipped.items()},
                   skipped_rows, interval, gases, path)


def _read_table(path: Path) -> pd.DataFrame:
    suffix = path.suffix.lower()
    if not path.is_file():
        raise InputError(str(path), "file not found", "check the path")
    if suffix not in (".csv", ".parquet", ".pq"):
        raise InputError(str(path), f"'{suffix or 'no extension'}' is not a history file "
                         "type trainopt reads", "export the history as CSV (.csv) or "
                         "Parquet (.parquet)")
    try:
        if suffix == ".csv":
            frame = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True,
                                encoding="utf-8")
        else:
            frame = pd.read_parquet(path)
    except (UnicodeDecodeError, pd.errors.ParserError, pd.errors.EmptyDataError) as exc:
        raise InputError(str(path), f"cannot be read as CSV ({type(exc).__name__})",
                         "give a comma-separated UTF-8 text file with one header line") from None
    except (OSError, ValueError) as exc:
        raise InputError(str(path), f"cannot be read as Parquet ({str(exc)[:80]})",
                         "give a Parquet file written by pandas or pyarrow") from None
    if frame.empty:
        raise InputError(str(path), "holds no data rows", "export at least one row")
    frame.columns = [str(c).strip() for c in frame.columns]
    return frame.reset_index(drop=True)


def _check_units(mapping: ColumnMapping, case, where: str) -> None:
    names = [t.name for t in case.trains]
    missing = [n for n in names if n not in mapping.units]
    if missing:
        raise InputError(f"{where}: units", f"the case's unit(s) {', '.join(missing)} have no "
                         "columns in the mapping", f"add units.{missing[0]} with at least its "
                         "flow column")
    extra = [n for n in mapping.units if n not in names]
    if extra:
        raise InputError(f"{where}: units.{extra[0]}", "is not a unit of the case",
                         f"use the case's names: {', '.join(names)}")


def _mapped_columns(mapping: ColumnMapping):
    yield "time", mapping.time.column
    for key in ("suction_pressure", "suction_temperature", "discharge_pressure",
                "ambient_temperature", "station_flow", "gas"):
        spec = getattr(mapping.station, key)
        if spec is not None:
            yield f"station.{key}", spec.column
    for name, unit in mapping.units.items():
        for key in ("flow", "recycle", "recycle_valve", "speed", "power", "available",
                    *_UNIT_STATES):
            spec = getattr(unit, key)
            if spec is not None:
                yield f"units.{name}.{key}", spec.column


def _check_columns(mapping: ColumnMapping, raw: pd.DataFrame, path: Path, where: str) -> None:
    for key, column in _mapped_columns(mapping):
        if column not in raw.columns:
            near = difflib.get_close_matches(column, list(raw.columns), n=1)
            fix = f"did you mean '{near[0]}'?" if near else \
                f"the file's columns are: {', '.join(list(raw.columns)[:12])}"
            raise InputError(f"{where}: {key}.column", f"no column '{column}' in {path.name}",
                             fix)


def mass_flow(values: np.ndarray, basis: tuple, gas, suction_density: float) -> np.ndarray:
    """Convert flows in their basis SI unit to mass flow [kg/s].

    Parameters
    ----------
    values : numpy.ndarray
        kg/s, standard m³/s or actual m³/s (at the unit's suction state).
    basis : tuple of (FlowBasis, str or None)
        From :attr:`History.flow_basis`.
    gas : trainopt.physics.gas.Gas
        The row's gas (standard density).
    suction_density : float
        Suction density of the row [kg/m³] (actual volume flows).

    Returns
    -------
    numpy.ndarray
        [kg/s].
    """
    kind, reference = basis
    if kind is FlowBasis.MASS:
        return np.asarray(values, float)
    if kind is FlowBasis.STANDARD_VOLUME:
        return np.asarray(values, float) * gas.standard_density(reference)
    return np.asarray(values, float) * suction_density


def describe_skips(skipped: dict[str, int]) -> str:
    """One line per skip reason, largest first (for terminal reports)."""
    if not skipped:
        return "no rows skipped"
    width = max(len(str(v)) for v in skipped.values())
    items = sorted(skipped.items(), key=lambda kv: (-kv[1], kv[0]))
    return "\n".join(f"{n:>{width}} rows: {reason}" for reason, n in items)
