"""Plain-text tables of station results for the terminal.

The header states the demand in the unit the user wrote beside kg/s and labels pressures
absolute; a legend under the table spells out the short column titles (``explain=True``
defines every column); solver details are shown only with ``verbose=True``.
"""

from __future__ import annotations

import math
import re

from trainopt.station.result import CAUTION, StationResult

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


_SERIES_PRESSURES = [
    ("suction_pressure_kPa", "p in kPa(a)", "{:.0f}"),
    ("discharge_pressure_kPa", "p out kPa(a)", "{:.0f}"),
]

LEGEND = ("Hp polytropic head; eta_p polytropic efficiency; T2 discharge temperature; "
          "SCL surge control line; kPa(a) absolute pressure.",
          "Margins are room left, in % of the flow (surge, SCL, stonewall), speed or driver "
          "power; --explain defines each column.")
"""The legend printed under every unit table, line by line."""

EXPLAIN = {
    "net kg/s": "net flow the unit delivers to the discharge header [kg/s]",
    "recycle kg/s": "flow sent back through the unit's recycle valve [kg/s]",
    "speed rpm": "compressor shaft speed [rpm]",
    "inlet m3/h": "actual volume flow at the compressor inlet [m3/h]",
    "Hp kJ/kg": "polytropic head the unit develops [kJ/kg]",
    "eta_p": "polytropic efficiency read from the fitted map [-]",
    "shaft kW": "power at the compressor shaft [kW]",
    "input kW": "driver input: electric power drawn, or fuel energy for a gas turbine [kW]",
    "T2 degC": "discharge temperature [degC]",
    "surge %": "inlet flow's distance right of the surge line, % of the surge flow",
    "SCL %": "inlet flow's distance right of the surge control line, % of that line's flow",
    "stonewall %": "room left before the stonewall (choke) flow, % of the flow",
    "to max speed %": "room left below the maximum speed, % of the maximum speed",
    "power %": "room left below the driver's available power, % of that power",
    "p in kPa(a)": "a series section's suction pressure, absolute [kPa]",
    "p out kPa(a)": "a series section's discharge pressure, absolute [kPa]",
    "cooler kW": "heat removed by the cooler after the section [kW]",
}
"""Each column title's definition, printed with ``--explain``."""

_SERIES_TAIL = [("cooler_duty_kW", "cooler kW", "{:.0f}")]


def _columns(units: list[dict]) -> list[tuple[str, str, str]]:
    """The table's columns: series trains add section, pressures and cooler duty."""
    columns = list(_COLUMNS)
    if any("stage" in u for u in units):
        columns.insert(1, ("stage", "stage", "{}"))
    if any(u.get("section") for u in units):
        columns.insert(2 if columns[1][0] == "stage" else 1, ("section", "section", "{}"))
        at = [key for key, _, _ in columns].index("speed_rpm") + 1
        columns[at:at] = _SERIES_PRESSURES
        columns += _SERIES_TAIL
    return columns


def _train_lines(units: list[dict]) -> list[str]:
    """One line per running series train: its totals and the limit nearest to binding."""
    lines, seen = [], set()
    for u in units:
        if not (u.get("running") and u.get("section")) or u["name"] in seen:
            continue
        seen.add(u["name"])
        lines.append(f"Train {u['name']}: shaft {u['train_shaft_power_kW']:.0f} kW, nearest limit "
                     f"{u['limiting_constraint']} of {u['limiting_section']} "
                     f"({u['limiting_margin_pct']:.1f} %); its flow range runs from the "
                     f"{u['least_flow_limit']} to the {u['largest_flow_limit']}")
    return lines


def _cell(value, fmt: str) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    return fmt.format(value)


def demand_words(result: StationResult, demand_text: str | None = None) -> str:
    """The demand in the unit the user wrote, with kg/s beside it: ``44 MMSCMD (383.96 kg/s)``.

    Parameters
    ----------
    result : StationResult
    demand_text : str, optional
        The demand as the user wrote it (``--demand``); the case file's by default.

    Returns
    -------
    str
        Just the kg/s when the user's unit is kg/s or cannot be read.
    """
    from trainopt.errors import InputError
    from trainopt.physics.units import parse_flow

    kg_s = f"{result.demand_kg_s:.2f} kg/s"
    case = result.case
    text = demand_text if demand_text is not None else case.extra.get("demand")
    match = re.fullmatch(r"\s*([-+]?[0-9.]+(?:[eE][-+]?[0-9]+)?)\s*(.+?)\s*", str(text or ""))
    if match is None:
        return kg_s
    number, unit = float(match[1]), match[2]
    if unit.replace(" ", "") == "kg/s":
        return kg_s
    try:
        mass = case.demand_mass_flow(parse_flow(text, "demand"))
    except (InputError, ValueError, ArithmeticError):
        return kg_s
    if not (mass > 0 and math.isfinite(mass)):
        return kg_s
    return f"{number * result.demand_kg_s / mass:.4g} {unit} ({kg_s})"


def format_result(result: StationResult, *, demand_text: str | None = None,
                  verbose: bool = False, explain: bool = False) -> str:
    """The result as a text report: header, per-unit table, legend, totals, baselines, caution.

    Parameters
    ----------
    result : StationResult
    demand_text : str, optional
        The demand as the user wrote it, shown beside kg/s (the case file's by default).
    verbose : bool
        Add the solver's details (piecewise objective, formulation, solve time).
    explain : bool
        Define every column of the table under it.

    Returns
    -------
    str
    """
    d = result.to_dict()
    lines = [f"Case: {d['case']}",
             f"Suction {d['suction_pressure_kPa']:.0f} kPa absolute, "
             f"{d['suction_temperature_C']:.1f} degC; discharge "
             f"{d['discharge_pressure_kPa']:.0f} kPa absolute; demand "
             f"{demand_words(result, demand_text)}; objective {d['objective']}"]
    if d["status"] == "infeasible":
        lines += ["", f"INFEASIBLE: {d['reason']}", "", CAUTION]
        return "\n".join(lines)
    columns = _columns(d["units"])
    header = [title for _, title, _ in columns]
    body = [[_cell(u.get(key), fmt) if u.get("running") or key in ("name", "status", "stage")
             else ("stopped" if key == "net_mass_flow_kg_s" else "")
             for key, _, fmt in columns] for u in d["units"]]
    widths = [max(len(h), *(len(r[i]) for r in body)) for i, h in enumerate(header)]
    lines.append("")
    lines.append("  ".join(h.rjust(w) for h, w in zip(header, widths, strict=True)))
    for row in body:
        lines.append("  ".join(c.rjust(w) for c, w in zip(row, widths, strict=True)))
    lines += LEGEND
    if explain:
        lines += [f"  {title}: {EXPLAIN[title]}" for title in header if title in EXPLAIN]
    lines += ["", *_train_lines(d["units"])] if _train_lines(d["units"]) else []
    if d.get("interstage_header"):
        h = d["interstage_header"]
        lines += ["", f"Interstage header {h['pressure_kPa']:.0f} kPa absolute (downstream "
                  f"suction {h['downstream_suction_pressure_kPa']:.0f} kPa absolute, "
                  f"{h['downstream_suction_temperature_C']:.1f} degC)"]
    lines += ["", f"Station shaft power {d['total_shaft_power_kW']:.0f} kW, driver input "
              f"{d['total_driver_input_kW']:.0f} kW, recycle {d['total_recycle_kg_s']:.2f} kg/s, "
              f"CO2 {d['total_co2_t_h']:.2f} t/h, cost {d['total_cost_per_h']:.0f} "
              f"{d['currency']}/h"]
    solver = d.get("solver")
    if verbose and solver and "piecewise_objective" in solver:
        lines.append(f"Piecewise objective {solver['piecewise_objective']:.6g}; formulation "
                     f"{solver['formulation']}; solve {solver['solve_seconds'] * 1e3:.0f} ms")
    lines += _baseline_lines(d)
    lines += ["", CAUTION]
    return "\n".join(lines)


_OBJECTIVE_WORDS = {"shaft_power": "shaft power", "energy_input": "driver input",
                    "cost": "cost"}


def _rule_line(rule: str, b: dict, objective: str) -> list[str]:
    """One rule against the optimum: in the objective's unit, shaft power beside it."""
    name = rule.replace("_", " ")
    if b["status"] != "feasible":
        return [f"Against {name}: infeasible ({b['reason']})"]
    if "objective_saving" not in b or objective == "shaft_power":
        line = (f"Against {name}: {b['total_shaft_power_kW']:.0f} kW, saving "
                f"{b['saving_kW']:.0f} kW ({b['saving_pct']:.2f} %)")
    else:
        unit = b["objective_unit"]
        line = (f"Against {name}: {_OBJECTIVE_WORDS[objective]} {b['total_objective']:.0f} "
                f"{unit}, saving {b['objective_saving']:.0f} {unit} "
                f"({b['objective_saving_pct']:.2f} %); shaft power "
                f"{b['total_shaft_power_kW']:.0f} kW, saving {b['saving_kW']:.0f} kW")
    return [line] + ([f"  ({b['note']})"] if b.get("note") else [])


def _baseline_lines(d: dict) -> list[str]:
    """The load-sharing rules on the running units, then on every available unit."""
    lines = []
    for key, words in (("baselines", "on the units the optimum runs"),
                       ("baselines_all_units", "on every available unit (a station running "
                        "all its machines on load-sharing control; the saving includes the "
                        "choice of which units run)")):
        rules = d.get(key) or {}
        if not rules:
            continue
        units = next(iter(rules.values())).get("running_units")
        lines.append(f"Load-sharing rules {words}"
                     + (f": {', '.join(units)}" if units else ""))
        for rule, b in rules.items():
            lines += _rule_line(rule, b, d["objective"])
    return lines
