"""Station results: the per-unit table, station totals, and their JSON form.

Column names carry their unit (``shaft_power_kW``); ``docs/results.md`` defines each.
Margins are fractions expressed in per cent; a positive margin is room left.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from trainopt.caution import CAUTION  # the shared wording, kept where it always was
from trainopt.machines.maps import stonewall_margin
from trainopt.physics.compression import compress
from trainopt.physics.duty import PointCompression

PER_TRAIN_COLUMNS = ("net_mass_flow_kg_s", "through_mass_flow_kg_s", "recycle_kg_s",
                     "net_standard_flow_MMSCMD", "train_shaft_power_kW",
                     "train_driver_input_kW")
"""Columns that repeat a train's value on each of its section rows (counted once in sums)."""

__all__ = ["CAUTION", "PER_TRAIN_COLUMNS", "StationResult", "unit_rows"]


def _pct(x: float) -> float:
    return float(100.0 * x) if math.isfinite(x) else math.nan


def _compression(case, duty, discharge_pressure: float, efficiency: float) -> PointCompression:
    """A unit's heads, efficiencies and discharge temperature at its operating point.

    From the duty's table (:meth:`trainopt.physics.duty.Duty.compression`, the numbers the
    reduction used, within 1e-6 of a direct computation) when the unit discharges into the
    header; computed afresh when a throttle holds it above the header's pressure.
    """
    if discharge_pressure == duty.discharge_pressure:
        return duty.compression(efficiency)
    c = compress(case.gas, case.suction_pressure, case.suction_temperature, discharge_pressure,
                 efficiency, duty.basis)
    return PointCompression(c.polytropic_head, c.polytropic_efficiency, c.isentropic_head,
                            c.isentropic_efficiency, c.discharge.temperature)


def unit_rows(station, through: dict[str, float], recycle: dict[str, float]) -> list[dict]:
    """One row per unit on the true model at the given through-flows and recycles.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
    through : dict of str to float
        Through-flow per unit [kg/s]; 0 for a stopped unit.
    recycle : dict of str to float
        Recycle per unit [kg/s].

    Returns
    -------
    list of dict
    """
    from trainopt.dispatch.reduction import LIMIT_NAMES, operate

    case = station.case
    rho_std = case.gas.standard_density("iso")
    rows = []
    for train in case.trains:
        name = train.name
        m = through.get(name, 0.0)
        row = {"name": name, "status": station.status[name].value, "running": m > 0.0}
        if m <= 0.0:
            rows.append(row)
            continue
        if not train.is_single_section:
            from trainopt.dispatch.series_reduction import section_rows

            rows.extend(section_rows(station, train, m, recycle.get(name, 0.0), row))
            continue
        duty = station.duty(train)
        op = operate(train, duty, m, case.ambient_temperature, station.throttle)
        section = train.sections[0]
        eta = float(op.efficiency[0])
        basis = duty.basis
        p_unit = float(op.discharge_pressure[0])  # above the header's when throttled
        c = _compression(case, duty, p_unit, eta)
        shaft = float(op.shaft_power[0])
        available = float(op.available_power[0])
        energy = float(op.energy_input[0])
        price, co2 = station.price(train)
        q, n = float(op.volume_flow[0]), float(op.speed[0])
        # margins on the unit's least-flow rule; below (or above) the tested surge heads on
        # the fan-law extension of the lines, flagged (docs/maps.md)
        line = section.control_line(op.head[0], extend=True)
        surge, scl = float(line.surge_flow), float(line.flow)
        net = m - recycle.get(name, 0.0)
        curve = station.curves.get(name)
        row.update({
            "net_mass_flow_kg_s": net,
            "through_mass_flow_kg_s": m,
            "recycle_kg_s": recycle.get(name, 0.0),
            "net_standard_flow_MMSCMD": net / rho_std * 86_400 / 1e6,
            "inlet_volume_flow_m3_h": q * 3600.0,
            "speed_rpm": n * 60.0,
            "map_basis": basis.value,
            "polytropic_head_kJ_kg": c.polytropic_head / 1e3,
            "polytropic_efficiency": c.polytropic_efficiency,
            "isentropic_head_kJ_kg": c.isentropic_head / 1e3,
            "isentropic_efficiency": c.isentropic_efficiency,
            "gas_power_kW": float(op.gas_power[0]) / 1e3,
            "shaft_power_kW": shaft / 1e3,
            "available_power_kW": available / 1e3,
            "driver_input_kW": energy / 1e3,
            "driver_kind": train.driver.kind,
            "co2_t_h": energy * co2 * 3.6,
            "cost_per_h": energy * price * 3600.0,
            "discharge_temperature_C": c.discharge_temperature - 273.15,
            "surge_margin_pct": _pct((q - surge) / surge),
            "control_line_margin_pct": _pct((q - scl) / scl),
            "surge_margin_extrapolated": bool(line.surge_extrapolated | line.extrapolated),
            "least_flow_rule": section.least_flow_rule.value,
            "least_flow_binds": str(line.binds),
            "stonewall_margin_pct": _pct(float(stonewall_margin(
                section.compressor_map, q, n * section.speed_ratio, warn=False))),
            "speed_min_margin_pct": _pct((n - train.speed_min) / train.speed_min),
            "speed_max_margin_pct": _pct((train.speed_max - n) / train.speed_max),
            "driver_power_margin_pct": _pct((available - shaft) / available),
            "discharge_temperature_margin_K": (
                section.max_discharge_temperature - c.discharge_temperature
                if section.max_discharge_temperature is not None else math.nan),
            "throttle_pressure_drop_kPa": float(op.throttle_pressure_drop[0]) / 1e3,
            "throttle_lost_power_kW": float(op.lost_power[0]) / 1e3,
            "least_flow_limit": LIMIT_NAMES.get(curve.low_limit, "") if curve else "",
            "largest_flow_limit": LIMIT_NAMES.get(curve.high_limit, "") if curve else "",
        })
        rows.append(row)
    return rows


@dataclass
class StationResult:
    """The answer for a station: status, per-unit table, totals, baselines.

    Attributes
    ----------
    status : str
        ``"optimal"`` (or ``"evaluated"`` for a given split), or ``"infeasible"``.
    reason : str
        Why infeasible, in words; empty otherwise.
    units : pandas.DataFrame
        One row per unit, or per section of a series train (see ``docs/results.md``
        and ``docs/series.md``).
    header : dict
        For a station with a shared interstage header: its pressure and the search.
    baselines, baselines_all_units : dict
        The load-sharing rules on the optimum's running set, and on every available unit
        (:mod:`trainopt.station.baselines`).
    """

    case: object
    status: str
    reason: str
    demand_kg_s: float
    objective: str
    units: pd.DataFrame
    solver: dict = field(default_factory=dict)
    baselines: dict = field(default_factory=dict)
    header: dict = field(default_factory=dict)
    baselines_all_units: dict = field(default_factory=dict)

    @classmethod
    def from_rows(cls, case, demand: float, rows: list[dict], objective: str) -> StationResult:
        """A feasible result from per-unit rows."""
        return cls(case, "optimal", "", demand, objective, pd.DataFrame(rows))

    @classmethod
    def infeasible(cls, case, demand: float, reason: str, objective: str) -> StationResult:
        """An infeasible result carrying its reason."""
        rows = [{"name": t.name, "running": False} for t in case.trains]
        return cls(case, "infeasible", reason, demand, objective, pd.DataFrame(rows))

    def _sum(self, column: str) -> float:
        """Station total of a column, counting a train's per-train columns once."""
        if column not in self.units:
            return 0.0
        table = self.units
        if column in PER_TRAIN_COLUMNS and "section" in table:
            table = table.drop_duplicates("name")
        return float(np.nansum(table[column].to_numpy(dtype=float)))

    def total(self, column: str) -> float:
        """Station total of a unit column, a series train's per-train columns counted once.

        Parameters
        ----------
        column : str
            A key of the unit rows, e.g. ``"recycle_kg_s"`` (same unit as the column).
        """
        return self._sum(column)

    @property
    def total_shaft_power(self) -> float:
        """Station shaft power [W]."""
        return self._sum("shaft_power_kW") * 1e3

    def objective_value(self) -> float:
        """The objective's total: W for power and energy, currency/s for cost."""
        key = {"shaft_power": "shaft_power_kW", "energy_input": "driver_input_kW",
               "cost": "cost_per_h"}[self.objective]
        scale = 1e3 if key.endswith("kW") else 1 / 3600.0
        return self._sum(key) * scale

    def to_dict(self) -> dict:
        """JSON-ready dictionary (see ``docs/results.md`` for every key)."""
        c = self.case
        units = []
        for rec in self.units.to_dict(orient="records"):
            units.append({k: (None if isinstance(v, float) and not math.isfinite(v) else
                              (v.item() if hasattr(v, "item") else v)) for k, v in rec.items()})
        out = {
            "status": self.status,
            "reason": self.reason,
            "case": c.name,
            "objective": self.objective,
            "demand_kg_s": self.demand_kg_s,
            "suction_pressure_kPa": c.suction_pressure / 1e3,
            "suction_temperature_C": c.suction_temperature - 273.15,
            "discharge_pressure_kPa": c.discharge_pressure / 1e3,
            "ambient_temperature_C": c.ambient_temperature - 273.15,
            "total_shaft_power_kW": self._sum("shaft_power_kW"),
            "total_driver_input_kW": self._sum("driver_input_kW"),
            "total_recycle_kg_s": self._sum("recycle_kg_s"),
            "total_throttle_lost_power_kW": self._sum("throttle_lost_power_kW"),
            "total_co2_t_h": self._sum("co2_t_h"),
            "total_cost_per_h": self._sum("cost_per_h"),
            "currency": c.economics.currency,
            "units": units,
            "caution": CAUTION,
        }
        if self.solver:
            out["solver"] = self.solver
        if self.baselines:
            out["baselines"] = self.baselines
        if self.baselines_all_units:
            out["baselines_all_units"] = self.baselines_all_units
        if self.header:
            out["interstage_header"] = self.header
        return out
