"""Plain-text tables of station results for the terminal."""

from __future__ import annotations

import math

from trainopt.result import CAUTION, StationResult

_COLUMNS = [
    ("name", "unit", "{}"),
    ("status", "status", "{}"),
    ("net_mass_flow_kg_s", "net kg/s", "{:.2f}"),
    ("recycle_kg_s", "recycle kg/s", "{:.2f}"),
    ("speed_rpm", "speed rpm", "{:.0f}"),
    ("inlet_volume_flow_m3_h", "inlet m3/h", "{:.0f}"),
    ("polytropic_head_kJ_kg", "Hp kJ/kg", "{:.1f}"),
    ("polytropic_efficiency", "eta_p", "{:.3f}"),
    ("shaft_power_kW", "shaft kW", "{:.0f}"),
    ("driver_input_kW", "input kW", "{:.0f}"),
    ("discharge_temperature_C", "T2 degC", "{:.1f}"),
    ("surge_margin_pct", "surge %", "{:.1f}"),
    ("control_line_margin_pct", "SCL %", "{:.1f}"),
    ("stonewall_margin_pct", "stonewall %", "{:.1f}"),
    ("speed_max_margin_pct", "to max speed %", "{:.1f}"),
    ("driver_power_margin_pct", "power %", "{:.1f}"),
]


def _cell(value, fmt: str) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    return fmt.format(value)


def format_result(result: StationResult) -> str:
    """The result as a text report: header, per-unit table, totals, baselines, caution.

    Parameters
    ----------
    result : StationResult

    Returns
    -------
    str
    """
    d = result.to_dict()
    lines = [f"Case: {d['case']}",
             f"Suction {d['suction_pressure_kPa']:.0f} kPa, {d['suction_temperature_C']:.1f} degC;"
             f" discharge {d['discharge_pressure_kPa']:.0f} kPa; demand {d['demand_kg_s']:.2f} "
             f"kg/s; objective {d['objective']}"]
    if d["status"] == "infeasible":
        lines += ["", f"INFEASIBLE: {d['reason']}", "", CAUTION]
        return "\n".join(lines)
    header = [title for _, title, _ in _COLUMNS]
    body = [[_cell(u.get(key), fmt) if u.get("running") or key in ("name", "status") else
             ("stopped" if key == "net_mass_flow_kg_s" else "")
             for key, _, fmt in _COLUMNS] for u in d["units"]]
    widths = [max(len(h), *(len(r[i]) for r in body)) for i, h in enumerate(header)]
    lines.append("")
    lines.append("  ".join(h.rjust(w) for h, w in zip(header, widths, strict=True)))
    for row in body:
        lines.append("  ".join(c.rjust(w) for c, w in zip(row, widths, strict=True)))
    lines += ["", f"Station shaft power {d['total_shaft_power_kW']:.0f} kW, driver input "
              f"{d['total_driver_input_kW']:.0f} kW, recycle {d['total_recycle_kg_s']:.2f} kg/s, "
              f"CO2 {d['total_co2_t_h']:.2f} t/h, cost {d['total_cost_per_h']:.0f} "
              f"{d['currency']}/h"]
    solver = d.get("solver")
    if solver:
        lines.append(f"Piecewise objective {solver['piecewise_objective']:.6g}; formulation "
                     f"{solver['formulation']}; solve {solver['solve_seconds'] * 1e3:.0f} ms")
    for rule, b in d.get("baselines", {}).items():
        if b["status"] == "feasible":
            lines.append(f"Against {rule.replace('_', ' ')}: {b['total_shaft_power_kW']:.0f} kW, "
                         f"saving {b['saving_kW']:.0f} kW ({b['saving_pct']:.2f} %)")
        else:
            lines.append(f"Against {rule.replace('_', ' ')}: infeasible ({b['reason']})")
    lines += ["", CAUTION]
    return "\n".join(lines)
