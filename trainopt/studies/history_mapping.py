"""The column mapping of an operating history: which column holds which quantity, in which unit.

A historian export has its own column names and units; the mapping (YAML, see
``docs/studies.md``) names them. The pydantic models below are its schema, and
:func:`load_mapping` reads and validates a mapping file. The history itself is read by
:func:`~trainopt.studies.history_reader.read_history`.
"""

from __future__ import annotations

from pathlib import Path
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, PrivateAttr, ValidationError

from trainopt.case.gas_file import read_yaml
from trainopt.errors import InputError

Quantity = str | float | int


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
    suction_pressure: Column | None = Field(None, description="The unit's own suction "
                                            "pressure (calibration); default the header's.")
    suction_temperature: Column | None = Field(None, description="The unit's own suction "
                                               "temperature (calibration); default the "
                                               "header's.")
    discharge_pressure: Column | None = Field(None, description="The unit's own discharge "
                                              "pressure (calibration); default the header's.")
    discharge_temperature: Column | None = Field(None, description="The unit's discharge "
                                                 "temperature, before any cooler "
                                                 "(calibration needs it).")


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
