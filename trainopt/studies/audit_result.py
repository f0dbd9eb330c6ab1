"""What the history audit found: per-row and per-unit tables, flags and period totals.

:func:`_assemble` gathers the bins' arrays into the tables of :class:`AuditResult` in the
history's row order, sums the station totals and counts each row's flags;
:meth:`AuditResult.totals` gives the period energies, cost and CO2.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from trainopt.station.result import CAUTION
from trainopt.studies.audit_binning import Binning

FLOW_BALANCE_TOLERANCE = 0.02
"""A row is flagged when the station meter and the units' net flows differ by more [-]."""


@dataclass
class AuditResult:
    """What the audit found, row by row, with the counts of what it could not audit.

    Attributes
    ----------
    case : Case
    hours : pandas.DataFrame
        One row per history row (index ``time``): ``status`` (``"audited"`` or why not),
        conditions, delivered flow, station power totals [kW] of the recorded split and of
        the optimum, recycle and avoidable power, cost and CO2 rates.
    unit_hours : pandas.DataFrame
        One row per history row and unit (columns ``time``, ``unit``, ...): operating
        point, margins, powers, flags, and the optimum's share.
    skipped : dict of str to int
        Rows not audited, by reason (reading and auditing).
    rows_read : int
        Data rows in the file.
    interval : float
        Duration each row stands for [s].
    bins : pandas.DataFrame
        The condition bins: gas label, mean conditions, warmest ambient, rows.
    seconds : float
        Wall time of the bin work [s].
    objective : str
        What the optimum minimised (``shaft_power``, ``energy_input``, ``cost``); the
        case's when not given.
    """

    case: object
    hours: pd.DataFrame
    unit_hours: pd.DataFrame
    skipped: dict
    rows_read: int
    interval: float
    bins: pd.DataFrame
    binning: Binning
    seconds: float = 0.0
    objective: str = ""

    @property
    def audited(self) -> pd.DataFrame:
        """The rows audited (status ``"audited"``)."""
        return self.hours[self.hours["status"] == "audited"]

    def totals(self) -> dict:
        """Period totals over the audited rows: energies [MWh], cost, CO2 [t], counts."""
        h = self.audited
        hours = self.interval / 3600.0

        def mwh(column):
            return float(h[column].sum()) * hours / 1e3

        return {
            "rows_read": self.rows_read,
            "rows_audited": len(h),
            "rows_skipped": int(sum(self.skipped.values())),
            "hours_audited": len(h) * hours,
            "shaft_energy_MWh": mwh("shaft_power_kW"),
            "recycle_energy_MWh": mwh("recycle_power_kW"),
            "optimum_shaft_energy_MWh": mwh("optimum_shaft_power_kW"),
            "avoidable_energy_MWh": mwh("avoidable_power_kW"),
            "driver_input_MWh": mwh("driver_input_kW"),
            "avoidable_driver_input_MWh": mwh("avoidable_driver_input_kW"),
            "fuel_GJ": float(h["fuel_kW"].sum()) * hours * 3.6e-3,
            "cost": float(h["cost_per_h"].sum()) * hours,
            "avoidable_cost": float((h["model_cost_per_h"] - h["optimum_cost_per_h"]).sum())
            * hours,
            "co2_t": float(h["co2_t_h"].sum()) * hours,
            "avoidable_co2_t": float((h["model_co2_t_h"] - h["optimum_co2_t_h"]).sum()) * hours,
            "currency": self.case.economics.currency,
            "rows_flagged": int((self.hours["flags"] > 0).sum()),
            "bins": len(self.bins),
            "seconds": self.seconds,
        } | self._objective_totals(h, hours)

    def _objective_totals(self, h: pd.DataFrame, hours: float) -> dict:
        """What the optimum saves in its own objective's unit, and why the signs differ."""
        from trainopt.station.baselines import contrast_in_words

        objective = self.objective or self.case.objective
        currency = self.case.economics.currency
        shaft = float(h["avoidable_power_kW"].sum()) * hours / 1e3
        driver = float(h["avoidable_driver_input_kW"].sum()) * hours / 1e3
        cost = float((h["model_cost_per_h"] - h["optimum_cost_per_h"]).sum()) * hours
        value, unit = {"shaft_power": (shaft, "MWh"), "energy_input": (driver, "MWh"),
                       "cost": (cost, currency)}[objective]
        note = contrast_in_words(objective, value, shaft, driver, cost, currency,
                                 "the recorded operation", energy_unit="MWh")
        return {"objective": objective, "avoidable_objective": value,
                "objective_unit": unit, "avoidable_note": note}

    def summary(self) -> str:
        """Totals and skip counts as text, ending with the caution."""
        from trainopt.studies.history_reader import describe_skips

        t = self.totals()
        lines = [
            f"Rows read {t['rows_read']}, audited {t['rows_audited']} "
            f"({t['hours_audited']:.0f} h), skipped {t['rows_skipped']}, flagged "
            f"{t['rows_flagged']}; {t['bins']} condition bins, {t['seconds']:.1f} s",
            f"Shaft energy {t['shaft_energy_MWh']:.0f} MWh, of which recycle "
            f"{t['recycle_energy_MWh']:.0f} MWh; optimum {t['optimum_shaft_energy_MWh']:.0f} "
            f"MWh; avoidable {t['avoidable_energy_MWh']:.0f} MWh",
            f"Driver input {t['driver_input_MWh']:.0f} MWh (fuel {t['fuel_GJ']:.0f} GJ); "
            f"avoidable {t['avoidable_driver_input_MWh']:.0f} MWh, {t['avoidable_cost']:.0f} "
            f"{t['currency']}, {t['avoidable_co2_t']:.0f} t CO2",
            f"The optimum minimises {_OBJECTIVE_WORDS[t['objective']]}: against the recorded "
            f"operation it saves {t['avoidable_objective']:.0f} {t['objective_unit']}"
            + (f" of {_OBJECTIVE_WORDS[t['objective']]}" if t["objective"] != "cost" else "")
            + "." + (f" {t['avoidable_note'][0].upper()}{t['avoidable_note'][1:]}."
                     if t["avoidable_note"] else ""),
            "Skipped rows:", describe_skips(self.skipped), "", CAUTION,
        ]
        return "\n".join(lines)


_OBJECTIVE_WORDS = {"shaft_power": "shaft energy", "energy_input": "driver input",
                    "cost": "cost"}

_UNIT_COLUMNS = {  # audit field -> (column, factor to the column's unit)
    "net": ("net_mass_flow_kg_s", 1.0), "through": ("through_mass_flow_kg_s", 1.0),
    "recycle": ("recycle_kg_s", 1.0), "speed": ("speed_rpm", 60.0),
    "recorded_speed": ("recorded_speed_rpm", 60.0),
    "volume_flow": ("inlet_volume_flow_m3_h", 3600.0), "head": ("head_kJ_kg", 1e-3),
    "efficiency": ("efficiency", 1.0), "shaft": ("shaft_power_kW", 1e-3),
    "useful_power": ("useful_power_kW", 1e-3), "recycle_power": ("recycle_power_kW", 1e-3),
    "input": ("driver_input_kW", 1e-3), "available_power": ("available_power_kW", 1e-3),
    "measured_power": ("measured_power_kW", 1e-3), "model_gap": ("model_gap_pct", 100.0),
    "surge_margin": ("surge_margin_pct", 100.0),
    "control_line_margin": ("control_line_margin_pct", 100.0),
    "head_deviation": ("head_deviation_pct", 100.0),
    "discharge_temperature": ("discharge_temperature_C", 1.0),
    "cost_rate": ("cost_per_h", 3600.0), "recycle_cost_rate": ("recycle_cost_per_h", 3600.0),
    "model_cost_rate": ("model_cost_per_h", 3600.0), "model_co2_rate": ("model_co2_t_h", 3.6),
    "co2_rate": ("co2_t_h", 3.6), "opt_net": ("optimum_net_mass_flow_kg_s", 1.0),
    "opt_through": ("optimum_through_mass_flow_kg_s", 1.0),
    "opt_recycle": ("optimum_recycle_kg_s", 1.0), "opt_shaft": ("optimum_shaft_power_kW", 1e-3),
    "opt_recycle_power": ("optimum_recycle_power_kW", 1e-3),
    "opt_input": ("optimum_driver_input_kW", 1e-3),
    "opt_cost_rate": ("optimum_cost_per_h", 3600.0), "opt_co2_rate": ("optimum_co2_t_h", 3.6),
}
_UNIT_FLAGS = ("running", "left_of_surge_without_recycle", "head_off_map", "outside_tested_map",
               "ran_while_unavailable")


def _assemble(case, history, recipes, groups, results, bins):
    """Per-row and per-unit tables from the bins' arrays, in the history's row order."""
    from trainopt.physics.gas import Gas

    frame = history.frame
    parts = []
    for number, ((_key, pos), res) in enumerate(zip(groups, results, strict=True)):
        stats = res.pop("stats", {})
        for key, value in stats.items():
            bins.loc[number, key] = value
        part = pd.DataFrame({k: v for k, v in res.items()}, index=pos)
        part["bin"] = number
        parts.append(part)
    r = pd.concat(parts).sort_index()
    names = [t.name for t in case.trains]
    for u in names:
        r[f"{u}.recorded_speed"] = frame[f"{u}.speed"].to_numpy() if f"{u}.speed" in frame \
            else np.nan
    status = r["skip"].to_numpy(dtype=object).copy()
    off_map = np.zeros(len(r), bool)
    for u in names:
        if f"{u}.running" in r:
            running = r[f"{u}.running"].fillna(False).to_numpy(bool)
            off_map |= running & ~np.isfinite(r[f"{u}.shaft"].to_numpy(float))
    open_rows = status == ""
    status[open_rows & off_map] = "recorded split off the map (no model power)"
    status[status == ""] = "audited"
    density = {label: Gas.from_composition(dict(c), e).standard_density("iso")
               for label, (c, e) in recipes.items()}
    rho_std = frame["gas"].map(density).to_numpy(float)
    hours = pd.DataFrame(index=frame.index)
    hours["status"] = status
    hours["bin"] = r["bin"].to_numpy()
    hours["gas"] = frame["gas"].to_numpy()
    hours["suction_pressure_bar"] = frame["suction_pressure"].to_numpy() / 1e5
    hours["discharge_pressure_bar"] = frame["discharge_pressure"].to_numpy() / 1e5
    hours["suction_temperature_C"] = frame["suction_temperature"].to_numpy() - 273.15
    hours["ambient_temperature_C"] = frame["ambient_temperature"].to_numpy() - 273.15
    demand = r["demand"].to_numpy(float) if "demand" in r else np.full(len(r), np.nan)
    hours["delivered_kg_s"] = demand
    hours["delivered_MMSCMD"] = demand / rho_std * 86_400 / 1e6
    meter = r["station_meter"].to_numpy(float) if "station_meter" in r else np.full(len(r), np.nan)
    hours["station_meter_kg_s"] = meter
    with np.errstate(invalid="ignore", divide="ignore"):
        hours["flow_balance_off"] = np.abs(meter - demand) > FLOW_BALANCE_TOLERANCE * meter
    for label, run_key in (("running", "running"), ("optimum_running", "opt_through")):
        cols = [r[f"{u}.{run_key}"].fillna(0).to_numpy() > 0 if f"{u}.{run_key}" in r else
                np.zeros(len(r), bool) for u in names]
        hours[label] = ["+".join(u for u, c in zip(names, row, strict=True) if c)
                        for row in zip(*cols, strict=True)]
    sums = {"shaft_power_kW": "shaft", "useful_power_kW": "useful_power",
            "recycle_power_kW": "recycle_power", "optimum_shaft_power_kW": "opt_shaft",
            "optimum_recycle_power_kW": "opt_recycle_power", "driver_input_kW": "input",
            "optimum_driver_input_kW": "opt_input", "cost_per_h": "cost_rate",
            "optimum_cost_per_h": "opt_cost_rate", "co2_t_h": "co2_rate",
            "optimum_co2_t_h": "opt_co2_rate"}
    for column, field in sums.items():
        _, factor = _UNIT_COLUMNS[field]
        hours[column] = sum(r[f"{u}.{field}"].to_numpy(float) if f"{u}.{field}" in r else 0.0
                            for u in names) * factor
    hours["avoidable_power_kW"] = hours["shaft_power_kW"] - hours["optimum_shaft_power_kW"]
    hours["avoidable_driver_input_kW"] = (hours["driver_input_kW"]
                                          - hours["optimum_driver_input_kW"])
    fuel = [t.name for t in case.trains if "motor" not in t.driver.kind]
    hours["fuel_kW"] = sum(r[f"{u}.input"].to_numpy(float) if f"{u}.input" in r else 0.0
                           for u in fuel) / 1e3
    for column, field in (("model_cost_per_h", "model_cost_rate"),
                          ("model_co2_t_h", "model_co2_rate")):
        _, factor = _UNIT_COLUMNS[field]
        hours[column] = sum(r[f"{u}.{field}"].to_numpy(float) if f"{u}.{field}" in r else 0.0
                            for u in names) * factor
    units = []
    for u in names:
        table = pd.DataFrame({"time": frame.index, "unit": u, "status": status})
        for field, (column, factor) in _UNIT_COLUMNS.items():
            key = f"{u}.{field}"
            table[column] = r[key].to_numpy(float) * factor if key in r else np.nan
        for flag in _UNIT_FLAGS:
            key = f"{u}.{flag}"
            table[flag] = r[key].fillna(False).to_numpy(bool) if key in r else False
        table["limits_broken"] = r[f"{u}.limits_broken"].fillna("").to_numpy() \
            if f"{u}.limits_broken" in r else ""
        table["discharge_temperature_C"] -= 273.15
        units.append(table)
    unit_hours = pd.concat(units, ignore_index=True)
    flag_cols = [f for f in _UNIT_FLAGS if f != "running"]
    per_row = unit_hours.groupby("time", sort=False)[flag_cols].sum().sum(axis=1)
    broken = (unit_hours["limits_broken"] != "").groupby(unit_hours["time"], sort=False).sum()
    hours["flags"] = (per_row.reindex(hours.index).to_numpy()
                      + broken.reindex(hours.index).to_numpy()
                      + hours["flow_balance_off"].to_numpy(int))
    return hours, unit_hours
