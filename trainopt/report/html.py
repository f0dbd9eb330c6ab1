"""A self-contained HTML report of the studies: figures as embedded PNGs, tables inline.

One file, no scripts and no links to fetch: it opens offline in any browser and can be
mailed as is. Figures are drawn with matplotlib's Agg canvas (no display needed). Every
report states the caution of :data:`trainopt.station.result.CAUTION` at its top and bottom.
"""

from __future__ import annotations

import base64
import html
import io
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from trainopt.report.tables import check_free
from trainopt.station.result import CAUTION

_INK = "#1f2a33"
_PALETTE = ["#2a6f97", "#c8553d", "#588157", "#8f5fb0", "#d4a017", "#3d8c95", "#a23e48",
            "#6c757d"]
_STYLE = """
body{font-family:system-ui,Segoe UI,Helvetica,Arial,sans-serif;margin:2em auto;max-width:1150px;
color:#1f2a33;line-height:1.45;padding:0 1em}
h1{font-size:1.6em;margin-bottom:.2em}h2{border-bottom:2px solid #2a6f97;padding-bottom:.2em;
margin-top:2em}
.caution{background:#fff4e0;border-left:5px solid #d4a017;padding:.7em 1em;margin:1em 0}
table{border-collapse:collapse;font-size:.82em;margin:.6em 0 1.2em 0;display:block;
overflow-x:auto}
th,td{border:1px solid #c9d1d9;padding:.25em .5em;text-align:right;white-space:nowrap}
th{background:#eef3f7}td:first-child,th:first-child{text-align:left}
img{max-width:100%;height:auto;border:1px solid #e1e6eb;margin:.5em 0}
.note{color:#55606b;font-size:.9em}
"""


def _figure(width: float = 10.0, height: float = 5.2) -> tuple[Figure, object]:
    fig = Figure(figsize=(width, height), layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    ax.grid(color="#d9dee3", lw=0.6)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    return fig, ax


def png(fig: Figure, dpi: int = 96) -> str:
    """A figure as a base64 PNG data URI."""
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=dpi)
    return "data:image/png;base64," + base64.b64encode(buffer.getvalue()).decode("ascii")


def turndown_figure(study) -> Figure:
    """Recycle-free throughput ranges of each service set (bars) and the gaps between."""
    fig, ax = _figure(10.0, 0.6 + 0.55 * max(len(study.turndown), 1))
    labels = list(study.turndown["service_set"])
    for i, label in enumerate(labels):
        spans = study.ranges[study.ranges["service_set"] == label]
        top = float(spans["to_MMSCMD"].max()) if len(spans) else 0.0
        ax.barh(i, top, color="#f2d7d0", hatch="///", edgecolor="#c8553d", lw=0.0)
        for _, s in spans.iterrows():
            ax.barh(i, s.to_MMSCMD - s.from_MMSCMD, left=s.from_MMSCMD, color=_PALETTE[0])
    ax.set_yticks(range(len(labels)), labels)
    ax.invert_yaxis()
    ax.set_xlabel("station throughput [MMSCMD, 15 degC and 101.325 kPa]")
    ax.set_title("Throughput without recycle (solid) and where recycle is unavoidable "
                 "(hatched)", loc="left", fontsize=10)
    return fig


def envelope_figure(study) -> Figure | None:
    """Largest and least recycle-free throughput of each service set along the sweep."""
    c = study.conditions
    if c is None or "largest_MMSCMD" not in c:
        return None
    from trainopt.studies.envelope import SWEEP_VARIABLES

    variable = str(c["variable"].iloc[0])
    _, _, unit = SWEEP_VARIABLES[variable]
    y = c["value"] / 1e5 if unit == "bar" else c["value"] - 273.15
    fig, ax = _figure(10.0, 5.6)
    for i, label in enumerate(dict.fromkeys(c["service_set"])):
        rows = (c["service_set"] == label) & c["largest_MMSCMD"].notna()
        colour = _PALETTE[i % len(_PALETTE)]
        lo, hi, yy = c.loc[rows, "least_without_recycle_MMSCMD"], c.loc[rows, "largest_MMSCMD"], \
            y[rows]
        ax.fill_betweenx(yy, lo, hi, color=colour, alpha=0.10)
        ax.plot(hi, yy, color=colour, lw=2, label=f"{label}: largest")
        ax.plot(lo, yy, color=colour, lw=1.2, ls="--", label=f"{label}: least without recycle")
    ax.set_xlabel("station throughput [MMSCMD]")
    ax.set_ylabel(f"{variable.replace('_', ' ')} [{'bar abs' if unit == 'bar' else 'degC'}]")
    ax.set_title("Operating envelope", loc="left", fontsize=10)
    ax.legend(fontsize=7, ncol=2, frameon=False)
    return fig


def sweep_figure(study) -> Figure:
    """Least shaft power against throughput for each running set and the free optimum."""
    fig, ax = _figure(10.0, 5.6)
    s = study.sweep
    for i, label in enumerate(x for x in dict.fromkeys(s["running"]) if x != "best"):
        rows = s[s["running"] == label]
        ax.plot(rows["throughput_MMSCMD"], rows["shaft_power_kW"] / 1e3, lw=1.2,
                color=_PALETTE[i % len(_PALETTE)], ls="-" if i < len(_PALETTE) else "--",
                label=label)
    best = s[(s["running"] == "best") & (s["throughput_kg_s"] > 0)]
    if len(best):
        ax.plot(best["throughput_MMSCMD"], best["shaft_power_kW"] / 1e3, color=_INK, lw=2.6,
                ls=(0, (5, 2)), label="best (free choice)")
    for _, t in study.start_stop.iterrows():
        ax.axvline(t.throughput_MMSCMD, color="#8a949e", lw=0.8, ls=":")
        ax.annotate(f"{t.from_running} -> {t.to_running}", (t.throughput_MMSCMD, 0),
                    xycoords=("data", "axes fraction"), rotation=90, fontsize=7,
                    va="bottom", ha="right", color="#55606b")
    ax.set_xlabel("station throughput [MMSCMD]")
    ax.set_ylabel("station shaft power [MW]")
    ax.set_title("Least shaft power against throughput for each running set", loc="left",
                 fontsize=10)
    ax.legend(fontsize=7, ncol=3, frameon=False)
    return fig


def power_over_time_figure(audit) -> Figure:
    """Daily mean station shaft power: recorded split, its recycle part, and the optimum."""
    h = audit.audited
    daily = h[["shaft_power_kW", "optimum_shaft_power_kW", "recycle_power_kW"]].resample(
        "1D").mean() / 1e3
    fig, ax = _figure(10.0, 4.8)
    ax.plot(daily.index, daily["shaft_power_kW"], color=_PALETTE[1], lw=1.4,
            label="recorded split (model)")
    ax.plot(daily.index, daily["optimum_shaft_power_kW"], color=_PALETTE[0], lw=1.4,
            label="best split for the same flow")
    ax.fill_between(daily.index, 0, daily["recycle_power_kW"], color=_PALETTE[4], alpha=0.5,
                    lw=0, label="spent on recycle")
    ax.set_ylabel("station shaft power, daily mean [MW]")
    ax.set_title("Actual against best power over time", loc="left", fontsize=10)
    ax.legend(fontsize=8, frameon=False)
    return fig


def recycle_by_month_figure(monthly_by_unit: pd.DataFrame) -> Figure:
    """Recycle energy by unit and month (stacked bars) with the avoidable energy."""
    table = monthly_by_unit.pivot_table(index="month", columns="unit", values="recycle_MWh",
                                        aggfunc="sum").fillna(0.0)
    avoidable = monthly_by_unit.groupby("month")["avoidable_MWh"].sum()
    fig, ax = _figure(10.0, 4.8)
    x = np.arange(len(table))
    bottom = np.zeros(len(table))
    for i, unit in enumerate(table.columns):
        ax.bar(x, table[unit], bottom=bottom, color=_PALETTE[i % len(_PALETTE)],
               label=f"recycle, unit {unit}")
        bottom += table[unit].to_numpy()
    ax.plot(x, avoidable.reindex(table.index).to_numpy(), color=_INK, marker="o", lw=1.5,
            label="avoidable (all causes)")
    ax.set_xticks(x, table.index, rotation=45, ha="right")
    ax.set_ylabel("energy [MWh of shaft work]")
    ax.set_title("Recycle energy by unit and month", loc="left", fontsize=10)
    ax.legend(fontsize=8, frameon=False, ncol=3)
    return fig


def unit_map_figure(audit, unit: str, max_points: int = 3000) -> Figure:
    """A unit's map with the cloud of its recorded (and optimal) operating points."""
    from trainopt.report.map_picture import plot_map

    train = audit.case.train(unit)
    section = train.sections[0]
    fig = plot_map(section.compressor_map, control_line_offset=section.surge_control_offset,
                   least_flow_rule=section.least_flow_rule)
    ax = fig.axes[0]
    u = audit.unit_hours
    rows = u[(u["unit"] == unit) & u["running"] & (u["status"] == "audited")]
    count = len(rows)
    if count > max_points:
        rows = rows.sample(max_points, random_state=0)
    recycling = rows["recycle_kg_s"] > 0
    handles = []
    for mask, colour, label in ((~recycling, _PALETTE[0], "recorded, no recycle"),
                                (recycling, _PALETTE[1], "recorded, recycling")):
        handles.append(ax.scatter(rows.loc[mask, "inlet_volume_flow_m3_h"] / 3600.0,
                                  rows.loc[mask, "head_kJ_kg"], s=7, alpha=0.35, color=colour,
                                  lw=0, label=label, zorder=5))
    ax.legend(handles=handles, loc="lower left", fontsize=8, frameon=True, markerscale=2.5)
    shown = f" ({len(rows)} shown)" if count > len(rows) else ""
    ax.set_title(f"Unit {unit}: {count} recorded operating points{shown}\n"
                 f"{section.compressor_map.name}", loc="left", fontsize=10)
    return fig


def _table(frame: pd.DataFrame, max_rows: int = 60) -> str:
    shown = frame.head(max_rows)
    text = shown.to_html(index=False, na_rep="", border=0, escape=True,
                         float_format=lambda v: f"{v:,.4g}" if abs(v) < 1e4 else f"{v:,.0f}")
    if len(frame) > max_rows:
        text += f'<p class="note">First {max_rows} of {len(frame)} rows; all are in the CSV.</p>'
    return text


def _image(fig: Figure | None, alt: str) -> str:
    return "" if fig is None else f'<img alt="{html.escape(alt)}" src="{png(fig)}">'


def envelope_sections(study) -> list[str]:
    """HTML sections of an envelope study."""
    case = study.case
    parts = [
        "<h2>Turndown and unit-offline envelopes</h2>",
        f"<p>At suction {case.suction_pressure / 1e5:.2f} bar, "
        f"{case.suction_temperature - 273.15:.1f} degC, discharge "
        f"{case.discharge_pressure / 1e5:.2f} bar, ambient "
        f"{case.ambient_temperature - 273.15:.1f} degC (absolute pressures).</p>",
        _image(turndown_figure(study), "turndown"), _table(study.turndown),
        "<h2>Running sets</h2>", _table(study.running_sets),
        "<h2>Least power against throughput</h2>",
        _image(sweep_figure(study), "least power against throughput"),
        "<p>Where the best running set changes (start or stop a unit):</p>",
        _table(study.start_stop),
    ]
    if study.conditions is not None:
        parts += ["<h2>Operating envelope</h2>", _image(envelope_figure(study), "envelope"),
                  _table(study.conditions, 120)]
    return parts


def audit_sections(audit, tables: dict[str, pd.DataFrame]) -> list[str]:
    """HTML sections of a history audit."""
    b = audit.binning
    parts = [
        "<h2>History audit</h2>", f"<pre>{html.escape(audit.summary())}</pre>",
        f'<p class="note">Conditions quantised in bins of {b.pressure / 1e5:g} bar (suction '
        f"and discharge pressure) and {b.temperature:g} K (suction temperature), "
        f"{len(audit.bins)} bins; ambient handled per row (see docs/studies.md).</p>",
        _image(power_over_time_figure(audit), "power over time"),
        _image(recycle_by_month_figure(tables["monthly_by_unit"]), "recycle by month"),
        "<h3>By month</h3>", _table(tables["monthly"]),
        "<h3>By unit</h3>", _table(tables["by_unit"]),
        "<h3>Flags</h3>", _table(tables["flags"]),
        "<h3>Rows not audited</h3>", _table(tables["skipped"]),
        "<h2>Operating points on each unit's map</h2>",
    ]
    for train in audit.case.trains:
        parts.append(_image(unit_map_figure(audit, train.name), f"map of {train.name}"))
    return parts


def write_html(path: str | Path, *, case, envelope=None, audit=None, audit_tables=None,
               overwrite: bool = False) -> Path:
    """Write the self-contained HTML report of an envelope study, an audit, or both.

    Parameters
    ----------
    path : str or Path
        The ``.html`` file.
    case : Case
    envelope : EnvelopeStudy, optional
    audit : AuditResult, optional
    audit_tables : dict, optional
        From :func:`trainopt.report.tables.audit_tables` (computed if not given).
    overwrite : bool
        Replace an existing file.

    Returns
    -------
    Path
    """
    from trainopt.report.tables import audit_tables as make_tables

    path = Path(path)
    check_free([path], overwrite)
    body = [f"<h1>{html.escape(case.name)}: station studies</h1>",
            f'<div class="caution">{html.escape(CAUTION)}</div>']
    if envelope is not None:
        body += envelope_sections(envelope)
    if audit is not None:
        body += audit_sections(audit, audit_tables or make_tables(audit))
    body.append(f'<div class="caution">{html.escape(CAUTION)}</div>')
    text = ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>{html.escape(case.name)}: station studies</title>"
            f"<style>{_STYLE}</style></head><body>\n" + "\n".join(body) + "\n</body></html>\n")
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path
