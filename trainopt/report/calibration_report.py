"""The calibration's outputs: the calibrated case, a self-contained HTML report and CSV tables.

:func:`write_calibration` writes, into one folder, ``case.yaml`` (the original case with a
``calibration`` key under each unit; the maps are not copied or changed),
``calibration.html`` (measured points on each map, residuals before and after, the factors
with their standard errors, the monthly trend, the rows left out, the cost of wear) and the
tables as CSV, by the writing rule of :mod:`trainopt.report.output_folder` (checked before
the work, staged, moved into place when complete; existing files refused unless
``overwrite``).
"""

from __future__ import annotations

import html
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from trainopt.caution import CAUTION
from trainopt.report.html import _PALETTE, _STYLE, _figure, _image, _table
from trainopt.report.output_folder import OutputFolder, write_csv
from trainopt.report.tables import _for_file

TABLES = ("factors", "trend", "excluded", "points", "wear_monthly", "wear_payback")
FILES = ("case.yaml", "calibration.html", *(f"{name}.csv" for name in TABLES))


def calibration_tables(result, monthly: pd.DataFrame, payback: pd.DataFrame
                       ) -> dict[str, pd.DataFrame]:
    """The calibration's tables by name, with units in the column names."""
    points = result.points.copy()
    scale = {"suction_pressure": ("suction_pressure_bar", 1e-5),
             "discharge_pressure": ("discharge_pressure_bar", 1e-5),
             "suction_temperature": ("suction_temperature_K", 1.0),
             "discharge_temperature": ("discharge_temperature_K", 1.0),
             "mass_flow": ("mass_flow_kg_s", 1.0), "volume_flow": ("volume_flow_m3_s", 1.0),
             "speed": ("speed_rpm", 60.0), "head": ("head_kJ_kg", 1e-3),
             "map_head": ("map_head_kJ_kg", 1e-3), "fitted_head": ("fitted_head_kJ_kg", 1e-3),
             "gas_power": ("gas_power_kW", 1e-3), "measured_power": ("measured_power_kW", 1e-3)}
    for column, (name, factor) in scale.items():
        points[name] = points.pop(column) * factor
    return {"factors": result.factors, "trend": result.trend, "excluded": result.excluded,
            "points": points, "wear_monthly": monthly, "wear_payback": payback}


def _map_figure(result, unit: str, max_points: int = 2000):
    from trainopt.report.map_picture import plot_map

    section = result.as_new_case.train(unit).sections[0]
    fig = plot_map(section.compressor_map, control_line_offset=section.surge_control_offset)
    ax = fig.axes[0]
    pts = result.points[result.points["unit"] == unit]
    shown = pts.sample(max_points, random_state=0) if len(pts) > max_points else pts
    ax.scatter(shown["volume_flow"], shown["head"] / 1e3, s=8, color=_PALETTE[1], alpha=0.5,
               lw=0, zorder=5, label="measured (steady), service conditions")
    ax.legend(loc="lower left", fontsize=8)
    ax.set_title(f"Unit {unit}: {len(pts)} steady measured points on the as-new map",
                 loc="left", fontsize=10)
    return fig


def _residual_figure(result, unit: str):
    pts = result.points[result.points["unit"] == unit]
    fig = Figure(figsize=(10.0, 3.6), layout="constrained")
    FigureCanvasAgg(fig)
    ax, right = fig.subplots(1, 2)
    for axis, measured, before, after, label in (
            (ax, pts["head"], pts["map_head"], pts["fitted_head"], "head miss [%]"),
            (right, pts["efficiency"], pts["map_efficiency"], pts["fitted_efficiency"],
             "efficiency miss [% points]")):
        b = 100 * (measured / before - 1) if axis is ax else 100 * (measured - before)
        a = 100 * (measured / after - 1) if axis is ax else 100 * (measured - after)
        bins = np.linspace(min(b.min(), a.min()), max(b.max(), a.max()), 40)
        axis.hist(b, bins=bins, color=_PALETTE[1], alpha=0.6, label="as-new map")
        axis.hist(a, bins=bins, color=_PALETTE[0], alpha=0.6, label="calibrated")
        axis.set_xlabel(f"measured minus model: {label}")
        axis.legend(fontsize=8, frameon=False)
    ax.set_title(f"Unit {unit}: residuals before and after calibration", loc="left",
                 fontsize=10)
    return fig


def _trend_figure(result):
    trend = result.trend
    if trend.empty:
        return None
    fig, ax = _figure(10.0, 4.2)
    for i, (unit, group) in enumerate(trend.groupby("unit", sort=False)):
        x = pd.to_datetime(group["month"] + "-15")
        colour = _PALETTE[i % len(_PALETTE)]
        ax.errorbar(x, group["head_factor"], yerr=2 * group["head_factor_se"], color=colour,
                    marker="o", ms=4, capsize=2, label=f"{unit} head")
        ax.errorbar(x, group["efficiency_factor"], yerr=2 * group["efficiency_factor_se"],
                    color=colour, marker="s", ms=4, capsize=2, ls="--",
                    label=f"{unit} efficiency")
    ax.set_ylabel("factor [-] (bars: 2 standard errors)")
    ax.set_title("Degradation factors by month", loc="left", fontsize=10)
    # below the axes: inside, it hides the points of one unit or another
    ax.legend(fontsize=7, ncol=4, frameon=False, loc="upper center",
              bbox_to_anchor=(0.5, -0.12))
    return fig


def calibration_html(result, tables: dict[str, pd.DataFrame]) -> str:
    """The report as one HTML text (figures embedded)."""
    case = result.as_new_case
    notes = "".join(f"<li>{html.escape(u)}: {html.escape('; '.join(n))}</li>"
                    for u, n in result.notes.items())
    body = [f"<h1>{html.escape(case.name)}: calibration to operating history</h1>",
            f'<div class="caution">{html.escape(CAUTION)}</div>',
            "<h2>Factors</h2>", f"<pre>{html.escape(result.summary())}</pre>",
            '<p class="note">head_factor: head at a given speed and flow over the as-new '
            "map's; efficiency_factor: efficiency over the as-new map's; flow_factor: "
            "capacity shift. Standard errors assume independent points and correct sensors "
            "(docs/calibration.md).</p>",
            _table(tables["factors"]), f"<ul class=\"note\">{notes}</ul>",
            "<h2>Trend by month</h2>", _image(_trend_figure(result), "trend"),
            _table(tables["trend"]),
            "<h2>What wear costs</h2>",
            '<p class="note">Extra power of the worn unit over its as-new map at the same '
            "flow and head, times the unit's running hours each month.</p>",
            _table(tables["wear_payback"]), _table(tables["wear_monthly"]),
            "<h2>Rows left out, by reason</h2>", _table(tables["excluded"], 200)]
    for train in case.trains:
        if (result.points["unit"] == train.name).any():
            body += [f"<h2>Unit {html.escape(train.name)}</h2>",
                     _image(_map_figure(result, train.name), f"map of {train.name}"),
                     _image(_residual_figure(result, train.name),
                            f"residuals of {train.name}")]
    body.append(f'<div class="caution">{html.escape(CAUTION)}</div>')
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>{html.escape(case.name)}: calibration</title><style>{_STYLE}</style>"
            "</head><body>\n" + "\n".join(body) + "\n</body></html>\n")


def output_folder(out_dir: str | Path, case_path: str | Path, *, overwrite: bool = False
                  ) -> OutputFolder:
    """The checked output folder of a calibration (call it before the work).

    Raises
    ------
    InputError
        The folder is a file or not writable, a file of the same name exists (without
        ``overwrite``), or ``case.yaml`` there would be the original case file itself.
    """
    from trainopt.errors import InputError

    if (Path(out_dir) / "case.yaml").resolve() == Path(case_path).resolve():
        raise InputError("--out", "would replace the original case file",
                         "give another folder")
    folder = OutputFolder(out_dir, overwrite=overwrite, option="--out")
    folder.check(FILES)
    return folder


def write_calibration(result, out_dir: str | Path, *, wash_cost: float | None = None,
                      overhaul_cost: float | None = None, overwrite: bool = False
                      ) -> dict[str, Path]:
    """Write the calibrated case, the HTML report and the CSV tables into ``out_dir``.

    Follows the writing rule of :mod:`trainopt.report.output_folder`: checked first, written
    into a temporary folder, moved into place when complete; each CSV ends with the caution
    as a ``#`` comment line.

    Parameters
    ----------
    result : CalibrationResult
    out_dir : str or Path
        Folder; created if missing.
    wash_cost, overhaul_cost : float, optional
        [currency], for the payback months (see :func:`~trainopt.studies.wear_cost.wear_cost`).
    overwrite : bool
        Replace existing files of the same names.

    Returns
    -------
    dict of str to Path
        ``case``, ``html`` and one entry per table.
    """
    from trainopt.studies.calibration import calibrated_case_text
    from trainopt.studies.wear_cost import wear_cost

    folder = output_folder(out_dir, result.as_new_case.path, overwrite=overwrite)
    monthly, payback = wear_cost(result, wash_cost=wash_cost, overhaul_cost=overhaul_cost)
    tables = calibration_tables(result, monthly, payback)
    with folder.writing():
        folder.path("case.yaml").write_text(calibrated_case_text(result, out_dir),
                                            encoding="utf-8")
        folder.path("calibration.html").write_text(calibration_html(result, tables),
                                                   encoding="utf-8")
        for name in TABLES:
            write_csv(_for_file(tables[name]), folder.path(f"{name}.csv"))
    written = folder.written
    return {"case": written["case.yaml"], "html": written["calibration.html"],
            **{name: written[f"{name}.csv"] for name in TABLES}}
