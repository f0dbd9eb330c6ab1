"""Reading a demand and conditions forecast (CSV or Parquet) for the commitment schedule.

One row per period: a time, the station demand, suction pressure and temperature,
discharge pressure and (optionally) ambient temperature. Columns are named either by a
column mapping (YAML, the same column and unit entries as the history mapping,
``docs/schedule.md``) or, without one, by headers carrying their unit:
``demand [MMSCMD]``, ``suction_pressure [bar]``... Values are converted to SI by the
history reader's column conversion, and the history reader's rules apply to time: time
going backwards is refused, a repeated timestamp or a bad value is counted; a schedule
needs every period, so any skipped row or gap is then refused with the rows named.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
from pydantic import ValidationError

from trainopt.case.gas_file import read_yaml
from trainopt.errors import InputError
from trainopt.physics.units import Kind
from trainopt.studies.history_columns import _Reader
from trainopt.studies.history_mapping import Column, TimeColumn, _Schema
from trainopt.studies.history_reader import _finish, _read_table, mass_flow

QUANTITIES = ("demand", "suction_pressure", "suction_temperature", "discharge_pressure",
              "ambient_temperature")
_HEADER = re.compile(r"^\s*([A-Za-z_ ]+?)\s*\[\s*(.+?)\s*\]\s*$")


class ForecastMapping(_Schema):
    """Which forecast column holds which quantity, and in which unit."""

    time: TimeColumn
    demand: Column
    suction_pressure: Column
    suction_temperature: Column
    discharge_pressure: Column
    ambient_temperature: Column | None = None
    _path: Path | None = None

    @property
    def where(self) -> str:
        """The mapping file, for messages."""
        return str(self._path) if self._path else "forecast columns"


@dataclass
class Forecast:
    """A forecast in SI, one row per period.

    Attributes
    ----------
    frame : pandas.DataFrame
        Index ``time`` (rising, evenly spaced); columns ``demand`` [kg/s],
        ``suction_pressure``, ``discharge_pressure`` [Pa], ``suction_temperature``,
        ``ambient_temperature`` [K], ``line``.
    period : float
        Spacing of the rows [s].
    source : Path
    """

    frame: pd.DataFrame
    period: float
    source: Path


def load_forecast_mapping(path: str | Path) -> ForecastMapping:
    """Read and validate a forecast column mapping (YAML)."""
    path = Path(path)
    try:
        mapping = ForecastMapping.model_validate(read_yaml(path))
    except ValidationError as exc:
        err = exc.errors()[0]
        loc = ".".join(str(p) for p in err["loc"])
        raise InputError(f"{path}: {loc}", err["msg"], "see docs/schedule.md for the "
                         "forecast mapping") from None
    mapping._path = path
    return mapping


def mapping_from_headers(columns, where: str) -> ForecastMapping:
    """A mapping from headers of the form ``name [unit]`` and a ``time`` column."""
    found: dict = {}
    for col in columns:
        match = _HEADER.match(str(col))
        if match and match.group(1).strip().replace(" ", "_") in QUANTITIES:
            found[match.group(1).strip().replace(" ", "_")] = {"column": col,
                                                                "unit": match.group(2)}
    time = next((c for c in columns if str(c).strip().lower() in ("time", "timestamp")), None)
    missing = [q for q in QUANTITIES[:4] if q not in found] + ([] if time else ["time"])
    if missing:
        raise InputError(where, f"no column for {', '.join(missing)}",
                         "name the columns 'time', 'demand [MMSCMD]', 'suction_pressure "
                         "[bar]', 'suction_temperature [degC]', 'discharge_pressure [bar]' "
                         "(and optionally 'ambient_temperature [degC]'), or give --columns")
    return ForecastMapping.model_validate({"time": {"column": time}, **found})


def read_forecast(path: str | Path, case, mapping: ForecastMapping | str | Path | None = None
                  ) -> Forecast:
    """Read a forecast, convert it to SI and check it is complete and evenly spaced.

    Parameters
    ----------
    path : str or Path
        ``.csv`` or ``.parquet``.
    case : trainopt.Case
        Atmospheric pressure for gauge units, gas for standard volumes, default ambient.
    mapping : ForecastMapping or path, optional
        Without one, headers must carry their units.

    Returns
    -------
    Forecast

    Raises
    ------
    InputError
        Unreadable file, missing column, time going backwards, a repeated time, a bad
        value, a gap, or uneven spacing; the message names the rows.
    """
    path = Path(path)
    raw = _read_table(path)
    if mapping is None:
        mapping = mapping_from_headers(list(raw.columns), str(path))
    elif not isinstance(mapping, ForecastMapping):
        mapping = load_forecast_mapping(mapping)
    absent = [c.column for c in (mapping.time, *(getattr(mapping, q) for q in QUANTITIES))
              if c is not None and c.column not in raw.columns]
    if absent:
        raise InputError(f"{path}", f"column(s) {', '.join(absent)} are not in the file",
                         f"check the names in {mapping.where}")
    reader = _Reader(raw, path, case.atmospheric_pressure)
    out = pd.DataFrame(index=raw.index)
    out["line"] = raw.index + (2 if path.suffix.lower() == ".csv" else 1)
    time = reader.time(mapping.time)
    flow, basis = reader.flow(mapping.demand, "demand")
    for q, kind in (("suction_pressure", Kind.PRESSURE), ("discharge_pressure", Kind.PRESSURE),
                    ("suction_temperature", Kind.TEMPERATURE),
                    ("ambient_temperature", Kind.TEMPERATURE)):
        spec = getattr(mapping, q)
        out[q] = (case.ambient_temperature if spec is None
                  else reader.quantity(spec, kind, q))
    bad = reader.bad
    bad["discharge pressure not above suction pressure"] = \
        (out["discharge_pressure"] <= out["suction_pressure"]).to_numpy() & ~bad.any(axis=1)
    out["flow"] = flow
    history = _finish(out, time, bad, reader, mapping, {}, {}, path, False)
    if len(history.skipped_rows):
        first = history.skipped_rows.iloc[0]
        raise InputError(f"{path}:{first['line']}", f"{len(history.skipped_rows)} row(s) "
                         f"unusable, the first: {first['reason']}", "a schedule needs every "
                         "period: correct or fill those rows")
    frame = history.frame
    if len(frame) < 2:
        raise InputError(str(path), f"{len(frame)} period(s)", "give at least two periods")
    step = frame.index.to_series().diff().dt.total_seconds().to_numpy()[1:]
    period = float(np.median(step))
    uneven = np.flatnonzero(np.abs(step - period) > 1e-6 * period)
    if uneven.size:
        k = uneven[0]
        raise InputError(f"{path}:{frame['line'].iloc[k + 1]}",
                         f"{frame.index[k + 1]} follows {frame.index[k]} after "
                         f"{step[k] / 3600:g} h where the forecast steps {period / 3600:g} h",
                         "fill the gap: every period of the horizon needs a row")
    frame = frame.copy()
    density = np.array([case.gas.state(p, t).density for p, t in
                        zip(frame["suction_pressure"], frame["suction_temperature"],
                            strict=True)])
    frame["demand"] = mass_flow(frame.pop("flow").to_numpy(float), basis, case.gas, density)
    return Forecast(frame, period, path)
