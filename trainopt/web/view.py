"""What the page shows, from station results: rows of display text, totals and ranges.

No number is computed here that the result does not hold, except unit conversions and the
choice of the limit to name for each unit: the one that binds (the unit recycles, or sits
within :data:`BINDING_MARGIN` of a limit) or else the nearest one.
"""

from __future__ import annotations

import math

from trainopt.station.result import StationResult
from trainopt.web.form import per_unit

BINDING_MARGIN = 0.5
"""A margin under this is shown as the limit that binds [%]."""

MARGINS = {"control_line_margin_pct": "surge control line", "stonewall_margin_pct": "stonewall",
           "speed_min_margin_pct": "minimum speed", "speed_max_margin_pct": "maximum speed",
           "driver_power_margin_pct": "driver power"}


def _fmt(value, digits: int = 1) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "–"
    return f"{value:,.{digits}f}"


def limit_text(row: dict) -> str:
    """The limit that binds a running unit, or the nearest one with its margin."""
    if (row.get("recycle_kg_s") or 0.0) > 1e-9:
        return f"recycling: {row.get('least_flow_limit') or 'least flow'} binds"
    if isinstance(row.get("limiting_constraint"), str):
        name, margin = row["limiting_constraint"], row.get("limiting_margin_pct")
    else:
        margins = {label: row.get(key) for key, label in MARGINS.items()}
        margins = {k: v for k, v in margins.items() if v is not None and math.isfinite(v)}
        if not margins:
            return "–"
        name = min(margins, key=margins.get)
        margin = margins[name]
    if margin is None or not math.isfinite(margin):
        return name
    if margin < BINDING_MARGIN:
        return f"{name} binds"
    return f"nearest: {name} ({margin:.1f} %)"


def unit_table(case, result: StationResult, flow_unit: str) -> list[dict]:
    """One display row per unit (per section of a series train), stopped units included."""
    rows = []
    for row in result.units.to_dict("records"):
        label = row["name"] + (f" {row['section']}" if isinstance(row.get("section"), str)
                               else "")
        if not row.get("running"):
            rows.append({"unit": label, "running": False,
                         "status": (row.get("status") or "").replace("_", " ")})
            continue
        rows.append({
            "unit": label, "running": True,
            "status": row.get("status", "").replace("_", " "),
            "net_flow": _fmt(per_unit(case, row["net_mass_flow_kg_s"], flow_unit), 2),
            "net_kg_s": _fmt(row["net_mass_flow_kg_s"], 1),
            "recycle": _fmt(row["recycle_kg_s"], 1),
            "speed": _fmt(row["speed_rpm"], 0),
            "shaft_power": _fmt(row["shaft_power_kW"], 0),
            "driver_input": _fmt(row["driver_input_kW"], 0),
            "control_line": _fmt(row["control_line_margin_pct"]),
            "stonewall": _fmt(row["stonewall_margin_pct"]),
            "speed_room": _fmt(row["speed_max_margin_pct"]),
            "power_room": _fmt(row["driver_power_margin_pct"]),
            "discharge_temperature": _fmt(row["discharge_temperature_C"]),
            "limit": limit_text(row),
        })
    return rows


def totals(case, result: StationResult, flow_unit: str) -> dict[str, str]:
    """Station totals as display text."""
    return {
        "demand": _fmt(per_unit(case, result.demand_kg_s, flow_unit), 2),
        "demand_kg_s": _fmt(result.demand_kg_s, 1),
        "shaft_power": _fmt(result.total("shaft_power_kW"), 0),
        "driver_input": _fmt(result.total("driver_input_kW"), 0),
        "recycle": _fmt(result.total("recycle_kg_s"), 1),
        "co2": _fmt(result.total("co2_t_h"), 2),
        "cost": _fmt(result.total("cost_per_h"), 0),
        "currency": case.economics.currency,
    }


RULE_WORDS = {"equal_flow": "same flow on every running unit",
              "equal_speed": "same fraction of maximum speed",
              "equal_margin": "same distance from the surge control line"}


def savings(result: StationResult) -> list[dict]:
    """The optimum against each load-sharing rule, as display text.

    Each rule twice: on the optimum's running set (``baselines``) and on every available
    unit (``baselines_all_units``, when the result has it).
    """
    out = []
    wide = getattr(result, "baselines_all_units", {}) or {}
    for rule, entry in result.baselines.items():
        row = {"rule": RULE_WORDS.get(rule, rule)}
        for prefix, item in (("same", entry), ("all", wide.get(rule))):
            feasible = item is not None and item.get("status") == "feasible"
            row[f"{prefix}_feasible"] = feasible
            row[f"{prefix}_given"] = item is not None
            row[f"{prefix}_reason"] = (item or {}).get("reason", "")
            row[f"{prefix}_power"] = _fmt(item.get("total_shaft_power_kW"), 0) if feasible else "–"
            row[f"{prefix}_saving"] = _fmt(item.get("saving_kW"), 0) if feasible else "–"
            row[f"{prefix}_pct"] = _fmt(item.get("saving_pct"), 1) if feasible else "–"
        out.append(row)
    return out


def running_names(result: StationResult) -> list[str]:
    """The running units (a series train once), case order."""
    if result.status == "infeasible":
        return []
    return list(dict.fromkeys(r["name"] for r in result.units.to_dict("records")
                              if r.get("running")))


def running_range(case, station, running: list[str], flow_unit: str) -> dict | None:
    """The throughput range of one running set without recycle, as display text."""
    from trainopt.studies.envelope import running_set_table

    if station is None or not running:
        return None
    if any(not station.curves[n].feasible for n in running):
        return None
    row = running_set_table(station, [tuple(running)]).iloc[0]
    return {"running": " + ".join(running),
            "least": _fmt(per_unit(case, row["least_without_recycle_kg_s"], flow_unit), 2),
            "least_by": row["least_set_by"],
            "largest": _fmt(per_unit(case, row["largest_kg_s"], flow_unit), 2),
            "largest_by": row["largest_set_by"]}


def comparison(now: list[dict], optimum: list[dict]) -> list[dict]:
    """Rows of the split run now beside the recommendation, by unit (section) label."""
    labels = list(dict.fromkeys([r["unit"] for r in now] + [r["unit"] for r in optimum]))
    by_now = {r["unit"]: r for r in now}
    by_opt = {r["unit"]: r for r in optimum}

    def get(rows, label, key):
        row = rows.get(label)
        return row[key] if row and row.get("running") else None

    return [{"unit": label,
             "now_flow": get(by_now, label, "net_flow") or "stopped",
             "best_flow": get(by_opt, label, "net_flow") or "stopped",
             "now_power": get(by_now, label, "shaft_power") or "–",
             "best_power": get(by_opt, label, "shaft_power") or "–",
             "now_limit": get(by_now, label, "limit") or ""} for label in labels]
