"""Study tables: the audit's monthly and per-unit sums, and writing tables to CSV or Excel.

Every column name carries its unit (``recycle_MWh``, ``co2_t``); times are written in the
history's time zone, named in the column (``time_UTC``). Nothing the user already has is
overwritten unless asked: :func:`check_free` refuses existing files. Each CSV ends with the
caution as a ``#`` line (read with ``pandas.read_csv(path, comment="#")``); a workbook opens
on a ``caution`` sheet.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from trainopt.caution import CAUTION
from trainopt.errors import InputError
from trainopt.report.output_folder import write_csv

_ENERGY = {  # unit_hours column -> monthly column, all as energy over the row's interval
    "shaft_power_kW": "shaft_MWh", "useful_power_kW": "useful_MWh",
    "recycle_power_kW": "recycle_MWh", "optimum_shaft_power_kW": "optimum_shaft_MWh",
    "driver_input_kW": "driver_input_MWh", "optimum_driver_input_kW": "optimum_driver_input_MWh",
    "measured_power_kW": "measured_MWh",
}
_MONEY = {"cost_per_h": "cost", "recycle_cost_per_h": "recycle_cost",
          "model_cost_per_h": "model_cost", "optimum_cost_per_h": "optimum_cost",
          "co2_t_h": "co2_t", "model_co2_t_h": "model_co2_t", "optimum_co2_t_h": "optimum_co2_t"}
_FLAGS = ["left_of_surge_without_recycle", "head_off_map", "outside_tested_map",
          "ran_while_unavailable"]


def _month(times: pd.Series) -> pd.Series:
    return pd.Series(pd.DatetimeIndex(times).strftime("%Y-%m"), index=times.index)


def _sums(frame: pd.DataFrame, keys: list[str], hours: float) -> pd.DataFrame:
    g = frame.groupby(keys, sort=True)
    out = pd.DataFrame({"hours_running": g["running"].sum() * hours})
    for column, name in _ENERGY.items():
        out[name] = g[column].sum(min_count=1) * hours / 1e3
    for column, name in _MONEY.items():
        out[name] = g[column].sum() * hours
    out["avoidable_MWh"] = out["shaft_MWh"] - out["optimum_shaft_MWh"]
    out["avoidable_driver_input_MWh"] = out["driver_input_MWh"] - out["optimum_driver_input_MWh"]
    out["avoidable_cost"] = out["model_cost"] - out["optimum_cost"]
    out["avoidable_co2_t"] = out["model_co2_t"] - out["optimum_co2_t"]
    out["flagged_hours"] = g["flagged"].sum() * hours
    return out.reset_index()


def audit_tables(result) -> dict[str, pd.DataFrame]:
    """The audit's tables by name.

    Parameters
    ----------
    result : trainopt.studies.audit.AuditResult

    Returns
    -------
    dict of str to pandas.DataFrame
        ``totals`` (one row), ``monthly`` (station), ``monthly_by_unit``, ``by_unit``,
        ``flags`` (counts per unit), ``skipped`` (rows by reason), ``bins``, ``hours``
        and ``unit_hours`` (row by row).

    Notes
    -----
    Energies are sums of power over the audited rows times each row's interval. Cost and
    CO2 take the metered driver input where a meter is mapped, else the model's;
    avoidable cost and CO2 are model against model.
    """
    hours = result.interval / 3600.0
    u = result.unit_hours[result.unit_hours["status"] == "audited"].copy()
    u["flagged"] = u[_FLAGS].any(axis=1) | (u["limits_broken"] != "")
    u["month"] = _month(u["time"])
    fuel = {t.name for t in result.case.trains if "motor" not in t.driver.kind}
    u["fuel_kW"] = np.where(u["unit"].isin(fuel), u["driver_input_kW"], 0.0)
    monthly_unit = _sums(u, ["month", "unit"], hours)
    monthly_unit["fuel_GJ"] = (u.groupby(["month", "unit"])["fuel_kW"].sum().to_numpy()
                               * hours * 3.6e-3)
    by_unit = _sums(u, ["unit"], hours)
    station = monthly_unit.drop(columns="unit").groupby("month").sum(min_count=1)
    h = result.audited
    delivered = (h["delivered_MMSCMD"] * hours / 24.0).groupby(_month(h.index.to_series()))
    station.insert(0, "delivered_MMSCM", delivered.sum())
    station.insert(0, "rows_audited", delivered.size())
    station = station.drop(columns=["hours_running", "flagged_hours"]).reset_index()
    flags = result.unit_hours.groupby("unit")[_FLAGS].sum()
    flags["limits_broken"] = (result.unit_hours["limits_broken"] != "").groupby(
        result.unit_hours["unit"]).sum()
    totals = pd.DataFrame([result.totals()])
    skipped = pd.DataFrame(sorted(result.skipped.items(), key=lambda kv: -kv[1]),
                           columns=["reason", "rows"])
    return {"totals": totals, "monthly": station, "monthly_by_unit": monthly_unit,
            "by_unit": by_unit, "flags": flags.reset_index(), "skipped": skipped,
            "bins": result.bins, "hours": result.hours.reset_index(),
            "unit_hours": result.unit_hours}


ROW_TABLES = ("hours", "unit_hours")
"""Row-by-row tables: always CSV (a year of rows is slow to write to Excel)."""


def table_paths(names, out_dir: str | Path, excel: bool = False) -> dict[str, Path]:
    """Where :func:`write_tables` puts tables of these names (``workbook`` for Excel)."""
    out = Path(out_dir)
    paths = {"workbook": out / "tables.xlsx"} if excel else {}
    paths.update({name: out / f"{name}.csv" for name in names
                  if not excel or name in ROW_TABLES})
    return paths


def check_free(paths, overwrite: bool) -> None:
    """Refuse to write over existing files unless ``overwrite``.

    Raises
    ------
    InputError
        Naming the first existing file and the fix.
    """
    if overwrite:
        return
    for path in paths:
        if Path(path).exists():
            raise InputError(str(path), "exists already", "pass --force (overwrite=True) to "
                             "replace it or choose another folder")


def _for_file(frame: pd.DataFrame) -> pd.DataFrame:
    """Time-zone-aware columns as text with the zone in the column name."""
    frame = frame.copy()
    for column in list(frame.columns):
        if isinstance(frame[column].dtype, pd.DatetimeTZDtype):
            zone = str(frame[column].dt.tz)
            frame[column] = frame[column].dt.strftime("%Y-%m-%d %H:%M:%S")
            frame = frame.rename(columns={column: f"{column}_{zone}"})
    return frame


def write_tables(tables: dict[str, pd.DataFrame], out_dir: str | Path, *, excel: bool = False,
                 overwrite: bool = False) -> dict[str, Path]:
    """Write tables as CSV files (one per table) or one Excel workbook (one sheet each).

    Parameters
    ----------
    tables : dict of str to pandas.DataFrame
    out_dir : str or Path
        Folder; created if missing.
    excel : bool
        One ``tables.xlsx`` instead of CSV files (row-by-row tables stay CSV).
    overwrite : bool
        Replace existing files of the same names.

    Returns
    -------
    dict of str to Path
    """
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InputError(str(out), "is a file, not a folder", "give a folder (--out)")
    paths = table_paths(tables, out, excel)
    check_free(paths.values(), overwrite)
    out.mkdir(parents=True, exist_ok=True)
    if excel:
        with pd.ExcelWriter(paths["workbook"], engine="openpyxl") as writer:
            pd.DataFrame({"caution": [CAUTION]}).to_excel(writer, sheet_name="caution",
                                                          index=False)
            for name, frame in tables.items():
                if name not in paths:
                    _for_file(frame).to_excel(writer, sheet_name=name[:31], index=False)
    for name, frame in tables.items():
        if name in paths:
            write_csv(_for_file(frame), paths[name])
    return paths
