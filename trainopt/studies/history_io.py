"""Reading operating history (CSV or Parquet) through a column mapping, with counted skips.

A historian export has its own column names and units. A column mapping (YAML, see
``docs/studies.md``) says which column holds which quantity and in which unit; this module
reads the file, checks it against the mapping and converts every value to SI once. Rows
with a missing or impossible value in a needed column are skipped and counted by reason,
never filled; the caller sees every count in :attr:`History.skipped`.

Flows keep their basis (mass, standard volume or actual volume) until the gas and the
suction state of the row are known: :func:`mass_flow` converts them in the audit.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

import numpy as np
import pandas as pd
from pydantic import BaseModel, ConfigDict, Field, PrivateAttr, ValidationError

from trainopt.errors import InputError
from trainopt.io_gas import read_yaml
from trainopt.units import FlowBasis, Kind, parse_flow, parse_quantity

Quantity = str | float | int

VALVE_CHARACTERISTICS = ("linear", "equal_percentage", "quick_opening")
"""Inherent valve characteristics known by name (the curves of the ``fluids`` library)."""

NEGATIVE_ZERO_FRACTION = 0.01
"""Negative readings down to this fraction of the column's 99th-percentile magnitude are
read as zero (meter zero drift); more negative readings are bad values [-]."""


class _Schema(BaseModel):
    model_config = ConfigDict(extra="forbid")


class TimeColumn(_Schema):
    """The timestamp column."""

    column: str = Field(..., description="Column holding the timestamps.")
    timezone: str = Field("UTC", description="Time zone of timestamps written without an "
                          "offset, e.g. 'UTC' or 'Europe/Berlin'.")
    format: str | None = Field(None, description="strftime format if not ISO 8601.")


class Column(_Schema):
    """A column and the unit of its numbers."""

    column: str = Field(..., description="Column name in the file.")
    unit: str | None = Field(None, description="Unit of the numbers, e.g. 'barg', 'degC', "
                             "'Sm3/h', 'rpm', 'kW', '%'.")


class FlowColumn(Column):
    """A unit's flow meter."""

    measures: Literal["through", "net"] = Field("through", description="'through': the "
                                                "compressor's own flow, recycle included "
                                                "(the anti-surge flow element); 'net': "
                                                "what the unit delivers to the header.")


class PowerColumn(Column):
    """A unit's power meter."""

    measures: Literal["shaft", "driver_input"] = Field("driver_input", description=
                                                       "'shaft': compressor shaft power; "
                                                       "'driver_input': motor electrical "
                                                       "input or turbine fuel (LHV).")


class ValveColumn(Column):
    """A recycle valve's position and its flow characteristic (IEC 60534-2-1 sizing)."""

    unit: str | None = Field("%", description="Unit of the position, '%' or '' (fraction).")
    rated_kv: float | None = Field(None, description="Kv at full opening [m3/h].")
    rated_cv: float | None = Field(None, description="Cv at full opening [US gpm/psi^0.5], "
                                   "instead of rated_kv.")
    characteristic: Literal["linear", "equal_percentage", "quick_opening"] = Field(
        "linear", description="Inherent characteristic, unless 'table' is given.")
    table: list[tuple[float, float]] | None = Field(None, description="[position %, Kv / "
                                                    "rated Kv] pairs, rising.")
    x_t: float = Field(0.7, description="Pressure differential ratio factor at choked flow "
                       "[-] (IEC 60534-2-1 x_T).")
    inlet_temperature: Quantity | None = Field(None, description="Gas temperature at the "
                                               "valve inlet; default the suction temperature.")


class GasColumn(_Schema):
    """A column of gas labels and the composition each label stands for."""

    column: str = Field(..., description="Column holding a label of the gas in each row.")
    compositions: dict[str, str | dict[str, Quantity]] = Field(..., description="Label to "
                                                               "'case', a gas YAML file, or "
                                                               "a composition mapping.")


class StationColumns(_Schema):
    """Header conditions and station meters."""

    suction_pressure: Column
    suction_temperature: Column
    discharge_pressure: Column
    ambient_temperature: Column | None = None
    station_flow: Column | None = Field(None, description="Station delivery meter; a check "
                                        "against the sum of the units' net flows.")
    gas: GasColumn | None = None


class UnitColumns(_Schema):
    """One unit's columns."""

    flow: FlowColumn
    recycle: Column | None = Field(None, description="Recycle flow meter.")
    recycle_valve: ValveColumn | None = Field(None, description="Recycle valve position.")
    speed: Column | None = None
    power: PowerColumn | None = None
    available: Column | None = Field(None, description="1/0 (true/false, yes/no, on/off): "
                                     "whether the unit could have run that hour.")


class ColumnMapping(_Schema):
    """The whole column mapping."""

    time: TimeColumn
    station: StationColumns
    units: dict[str, UnitColumns]
    _path: Path | None = PrivateAttr(None)

    @property
    def where(self) -> str:
        """The mapping file, for error messages."""
        return str(self._path) if self._path else "column mapping"


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
        ``<unit>.available`` (bool), and ``line`` (file line of the row).
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


def load_mapping(path: str | Path) -> ColumnMapping:
    """Read and validate a column mapping (YAML).

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    ColumnMapping
    """
    path = Path(path)
    data = read_yaml(path)
    try:
        mapping = ColumnMapping.model_validate(data)
    except ValidationError as exc:
        err = exc.errors()[0]
        loc = ".".join(str(p) for p in err["loc"])
        problem = {"extra_forbidden": "is not a key of the column mapping",
                   "missing": "is missing"}.get(err["type"], err["msg"])
        raise InputError(f"{path}: {loc}", problem, "see docs/studies.md for the mapping "
                         "format") from None
    for name, unit in mapping.units.items():
        if (unit.recycle is None) == (unit.recycle_valve is None) and unit.flow.measures == \
                "through":
            raise InputError(f"{path}: units.{name}", "give exactly one of 'recycle' (a flow "
                             "meter) or 'recycle_valve' (a position)",
                             "a unit whose flow meter measures net flow may give neither "
                             "only if it never recycles")
        valve = unit.recycle_valve
        if valve is not None and (valve.rated_kv is None) == (valve.rated_cv is None):
            raise InputError(f"{path}: units.{name}.recycle_valve",
                             "give exactly one of rated_kv or rated_cv")
        if valve is not None and not 0 < valve.x_t < 1:
            raise InputError(f"{path}: units.{name}.recycle_valve.x_t",
                             f"{valve.x_t:g} is outside 0 to 1", "typical values 0.6-0.8")
    mapping._path = path
    return mapping


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
        for key in ("flow", "recycle", "recycle_valve", "speed", "power", "available"):
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


def _linear(unit: str | None, kind: Kind, field_name: str, atmospheric: float):
    """(a, b) with SI = a x + b for numbers x written in ``unit``."""
    if unit is None:
        raise InputError(f"{field_name}.unit", "is missing", "give the unit of the numbers")
    one = parse_quantity(f"1 {unit}", kind, f"{field_name}.unit", atmospheric=atmospheric)
    two = parse_quantity(f"2 {unit}", kind, f"{field_name}.unit", atmospheric=atmospheric)
    return two - one, 2 * one - two


class _Reader:
    """Column-by-column conversion, collecting bad-value masks by reason."""

    def __init__(self, raw: pd.DataFrame, path: Path, atmospheric: float):
        self.raw, self.path, self.atm = raw, path, atmospheric
        self.bad = pd.DataFrame(index=raw.index)

    def _mark(self, reason: str, mask) -> None:
        mask = np.asarray(mask, bool)
        if mask.any():
            previous = self.bad[reason].to_numpy() if reason in self.bad else False
            self.bad[reason] = previous | mask

    def numbers(self, column: str, key: str, required: bool = True) -> np.ndarray:
        text = self.raw[column]
        if not pd.api.types.is_numeric_dtype(text):
            text = text.astype(str).str.strip()
            empty = text.isin(["", "nan", "NaN", "None", "null", "NULL"]).to_numpy()
            values = pd.to_numeric(text.where(~empty), errors="coerce").to_numpy(float)
        else:
            values = text.to_numpy(dtype=float)
            empty = np.isnan(values)
        if required:
            self._mark(f"{key}: missing", empty)
            self._mark(f"{key}: not a number", ~empty & ~np.isfinite(values))
        return np.where(np.isfinite(values), values, np.nan)

    def quantity(self, spec: Column, kind: Kind, key: str, required: bool = True) -> np.ndarray:
        a, b = _linear(spec.unit, kind, key, self.atm)
        x = a * self.numbers(spec.column, key, required) + b
        with np.errstate(invalid="ignore"):
            if kind is Kind.PRESSURE:
                self._mark(f"{key}: not a positive absolute pressure", x <= 0)
            elif kind is Kind.TEMPERATURE:
                self._mark(f"{key}: outside 150 K to 600 K", (x < 150) | (x > 600))
            else:
                x = self._negatives(x, key, required)
        return x

    def _negatives(self, x: np.ndarray, key: str, required: bool) -> np.ndarray:
        finite = np.abs(x[np.isfinite(x)])
        scale = float(np.percentile(finite, 99)) if finite.size else 0.0
        with np.errstate(invalid="ignore"):
            drift = (x < 0) & (x >= -NEGATIVE_ZERO_FRACTION * scale)
            very = x < -NEGATIVE_ZERO_FRACTION * scale
        if required:
            self._mark(f"{key}: negative", very)
        else:
            x = np.where(very, np.nan, x)
        return np.where(drift, 0.0, x)

    def flow(self, spec: Column, key: str):
        if spec.unit is None:
            raise InputError(f"{key}.unit", "is missing", "give e.g. 'Sm3/h', 't/h', 'kg/s'")
        flow = parse_flow(f"1 {spec.unit}", f"{key}.unit")
        reference = None
        if flow.basis is FlowBasis.STANDARD_VOLUME:
            reference = next(k for k, v in _references().items() if v == flow.reference)
        x = self._negatives(flow.value * self.numbers(spec.column, key), key, True)
        return x, (flow.basis, reference)

    def valve(self, spec: ValveColumn, key: str) -> np.ndarray:
        unit = spec.unit if spec.unit not in (None, "") else "dimensionless"
        a, b = _linear(unit, Kind.DIMENSIONLESS, key, self.atm)
        x = a * self.numbers(spec.column, key) + b
        with np.errstate(invalid="ignore"):
            self._mark(f"{key}: outside 0 to 100 %", (x < -0.01) | (x > 1.01))
        return np.clip(x, 0.0, 1.0)

    def flag(self, spec: Column, key: str) -> np.ndarray:
        text = self.raw[spec.column].astype(str).str.strip().str.lower()
        yes = text.isin(["1", "1.0", "true", "yes", "on", "y", "t"]).to_numpy()
        no = text.isin(["0", "0.0", "false", "no", "off", "n", "f"]).to_numpy()
        self._mark(f"{key}: missing", text.isin(["", "nan", "none"]).to_numpy())
        self._mark(f"{key}: not 1/0, true/false, yes/no or on/off",
                   ~yes & ~no & ~text.isin(["", "nan", "none"]).to_numpy())
        return yes

    def labels(self, spec: GasColumn):
        text = self.raw[spec.column].astype(str).str.strip()
        known = text.isin(list(spec.compositions)).to_numpy()
        empty = text.isin(["", "nan", "None"]).to_numpy()
        self._mark("station.gas: missing", empty)
        self._mark(f"station.gas: label not in the mapping ({', '.join(spec.compositions)})",
                   ~known & ~empty)
        return text.to_numpy(), dict(spec.compositions)

    def time(self, spec: TimeColumn) -> pd.DatetimeIndex:
        text = self.raw[spec.column]
        if pd.api.types.is_datetime64_any_dtype(text):
            parsed = pd.DatetimeIndex(text)
        else:
            text = text.astype(str).str.strip()
            fmt = spec.format or "ISO8601"
            try:
                parsed = pd.DatetimeIndex(pd.to_datetime(text, format=fmt, errors="coerce"))
            except (ValueError, TypeError):
                parsed = pd.DatetimeIndex(pd.to_datetime(text, format=fmt, errors="coerce",
                                                         utc=True))
        try:
            if parsed.tz is None:
                return parsed.tz_localize(spec.timezone, ambiguous="NaT", nonexistent="NaT")
            return parsed.tz_convert(spec.timezone)
        except (KeyError, ValueError) as exc:  # zoneinfo: KeyError; offsets: ValueError
            raise InputError("time.timezone", f"'{spec.timezone}' is not a time zone "
                             f"({type(exc).__name__})", "give e.g. 'UTC' or "
                             "'Europe/Berlin'") from None


def _references() -> dict:
    from trainopt.units import REFERENCE_CONDITIONS

    return REFERENCE_CONDITIONS


def mass_flow(values: np.ndarray, basis: tuple, gas, suction_density: float) -> np.ndarray:
    """Convert flows in their basis SI unit to mass flow [kg/s].

    Parameters
    ----------
    values : numpy.ndarray
        kg/s, standard m³/s or actual m³/s (at the unit's suction state).
    basis : tuple of (FlowBasis, str or None)
        From :attr:`History.flow_basis`.
    gas : trainopt.gas.Gas
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


def valve_kv_fraction(spec: ValveColumn, position: np.ndarray) -> np.ndarray:
    """Kv as a fraction of the rated Kv at valve positions [-] (inherent characteristic).

    Parameters
    ----------
    spec : ValveColumn
    position : numpy.ndarray
        Opening, 0 closed to 1 fully open [-].

    Returns
    -------
    numpy.ndarray
        Kv / rated Kv [-]: the user's table if given, else the named inherent curve of
        the ``fluids`` library (``Cv_char_linear``, ``Cv_char_equal_percentage``,
        ``Cv_char_quick_opening``), zero at zero opening.
    """
    from fluids import control_valve

    position = np.clip(np.asarray(position, float), 0.0, 1.0)
    if spec.table:
        table = np.asarray(spec.table, float)
        return np.interp(position * 100.0, table[:, 0], table[:, 1])
    curve = {"linear": control_valve.Cv_char_linear,
             "equal_percentage": control_valve.Cv_char_equal_percentage,
             "quick_opening": control_valve.Cv_char_quick_opening}[spec.characteristic]
    grid = np.linspace(0.0, 1.0, 201)
    values = np.array([float(curve(x)) for x in grid])
    values[0] = 0.0
    return np.interp(position, grid, np.clip(values, 0.0, None))


def valve_mass_flow(spec: ValveColumn, position: np.ndarray, gas, inlet_pressure: float,
                    inlet_temperature: float, outlet_pressure: float) -> np.ndarray:
    """Mass flow through a recycle valve at positions [kg/s] (IEC 60534-2-1, via fluids).

    Parameters
    ----------
    spec : ValveColumn
    position : numpy.ndarray
        Opening [-].
    gas : trainopt.gas.Gas
    inlet_pressure, outlet_pressure : float
        Valve inlet (discharge header) and outlet (suction header) pressure [Pa].
    inlet_temperature : float
        [K].

    Returns
    -------
    numpy.ndarray
        [kg/s].

    Notes
    -----
    Without pipe diameters the IEC 60534-2-1 gas equation is linear in flow for a given
    pressure drop (turbulent, no piping geometry factor), so ``fluids``'s sizing routine
    (which returns the Kv a flow needs) is evaluated once for a unit flow and inverted:
    ``W = W_1 Kv / Kv_1``. The flow rate there is referred to 0 °C and 101.325 kPa as an
    ideal gas, the convention of the standard's N9 constant.
    """
    from fluids.control_valve import Cv_to_Kv, size_control_valve_g

    rated = spec.rated_kv if spec.rated_kv is not None else Cv_to_Kv(spec.rated_cv)
    state = gas.state(inlet_pressure, inlet_temperature)
    molar_mass = gas.molar_mass * 1e3
    kv_unit = size_control_valve_g(T=inlet_temperature, MW=molar_mass, mu=1.1e-5,
                                   gamma=state.cp / state.cv, Z=state.compressibility,
                                   P1=inlet_pressure, P2=outlet_pressure, Q=1.0,
                                   xT=spec.x_t, allow_laminar=False)
    normal_density = 101_325.0 * gas.molar_mass / (8.314462618 * 273.15)
    kv = rated * valve_kv_fraction(spec, position)
    return kv / kv_unit * normal_density


def describe_skips(skipped: dict[str, int]) -> str:
    """One line per skip reason, largest first (for terminal reports)."""
    if not skipped:
        return "no rows skipped"
    width = max(len(str(v)) for v in skipped.values())
    items = sorted(skipped.items(), key=lambda kv: (-kv[1], kv[0]))
    return "\n".join(f"{n:>{width}} rows: {reason}" for reason, n in items)
