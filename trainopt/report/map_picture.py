"""Pictures of a compressor map and the fit report written for the command line.

Figures are drawn on matplotlib's Agg canvas directly (``matplotlib.figure.Figure``), so
importing this module never changes the caller's pyplot backend.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import LinearSegmentedColormap
from matplotlib.figure import Figure

from trainopt.caution import CAUTION
from trainopt.machines.maps.compressor_map import DEFAULT_CONTROL_LINE_OFFSET, CompressorMap
from trainopt.machines.maps.fit import MapFit, fan_law_departure, fit_map
from trainopt.machines.maps.least_flow import LeastFlowRule, parse_least_flow_rule
from trainopt.machines.maps.table import read_map_source
from trainopt.report.output_folder import OutputFolder, safe_name, write_csv

_INK = "#1d2b3a"
_SURGE = "#b3261e"
_CONTROL = "#e8871e"
_STONEWALL = "#4a6178"
_ISLANDS = LinearSegmentedColormap.from_list(
    "trainopt_islands", ["#f7f3ea", "#e4eedb", "#c3e0cc", "#94c9b8", "#67b0a4"]
)


def plot_map(
    compressor_map: CompressorMap,
    *,
    points: pd.DataFrame | None = None,
    control_line_offset: float = DEFAULT_CONTROL_LINE_OFFSET,
    speeds=None,
    least_flow_rule=None,
) -> Figure:
    """Draw a map: speed lines, efficiency islands, surge, control and stonewall lines.

    Parameters
    ----------
    compressor_map : CompressorMap
        The map.
    points : pandas.DataFrame, optional
        Measured points to mark (columns ``speed`` [1/s], ``flow`` [m³/s], ``head``
        [J/kg], ``kind``), e.g. :attr:`MapFit.points`; their speeds are drawn as lines.
    control_line_offset : float
        Surge control line offset, fraction of the surge flow at the same head [-].
    speeds : array_like, optional
        Speeds of the lines to draw [1/s]; by default the measured speeds, else five
        across the tested range.
    least_flow_rule : LeastFlowRule or str, optional
        The unit's least-flow rule; the control line is drawn at ``1 + offset`` times the
        least flow under it (default the surge line). The peak of the speed lines is drawn
        where it lies right of the surge line.

    Returns
    -------
    matplotlib.figure.Figure
        The figure, on an Agg canvas (save it with ``fig.savefig``).
    """
    m = compressor_map
    fig = Figure(figsize=(11.0, 6.2), layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    if speeds is None:
        speeds = (
            np.unique(points.speed)
            if points is not None
            else np.linspace(m.speed_min, m.speed_max, 5)
        )
    speeds = np.atleast_1d(np.asarray(speeds, dtype=float))
    if m.speed_max > m.speed_min:
        flow, speed = m.tested_grid(80, 120)
        head = m.head(flow, speed, warn=False)
        efficiency = m.efficiency(flow, speed, warn=False)
        levels = _efficiency_levels(efficiency)
        ax.contourf(flow, head / 1e3, efficiency, levels=levels, cmap=_ISLANDS, extend="both")
        lines = ax.contour(
            flow, head / 1e3, efficiency, levels=levels, colors="#5b7f7a", linewidths=0.6
        )
        ax.clabel(lines, fmt=lambda v: f"{v:.2f}", fontsize=7, colors=_INK)
        surge_flow, stonewall_flow = flow[:, 0], flow[:, -1]
        surge_head, stonewall_head = head[:, 0] / 1e3, head[:, -1] / 1e3
        ax.plot(surge_flow, surge_head, color=_SURGE, lw=2.2, label="surge line")
        peak_flow = m.peak_flow_at_speed(speed[:, 0])
        peak_head = m.head(peak_flow, speed[:, 0], warn=False) / 1e3
        if np.any(peak_flow > surge_flow * 1.005):
            ax.plot(peak_flow, peak_head, color=_SURGE, lw=1.0, ls=":", label="speed-line peak")
        rule = LeastFlowRule.SURGE_LINE if least_flow_rule is None else least_flow_rule
        rule = parse_least_flow_rule(rule)
        if rule is LeastFlowRule.SURGE_LINE:
            control_flow, control_head = (1 + control_line_offset) * surge_flow, surge_head
        else:
            control_head = np.linspace(
                min(surge_head.min(), peak_head.min()), max(surge_head.max(), peak_head.max()), 80
            )
            control_flow = m.control_line_flow_at_head(
                1e3 * control_head, control_line_offset, rule
            )
        where = {
            LeastFlowRule.SURGE_LINE: "surge flow",
            LeastFlowRule.SPEED_LINE_PEAK: "the speed-line peak flow",
            LeastFlowRule.LARGER: "the larger of surge and peak flow",
        }[rule]
        ax.plot(
            control_flow,
            control_head,
            color=_CONTROL,
            lw=1.6,
            ls=(0, (6, 3)),
            label=f"surge control line ({100 * control_line_offset:.0f} % of {where})",
        )
        ax.plot(
            stonewall_flow,
            stonewall_head,
            color=_STONEWALL,
            lw=1.8,
            ls=(0, (8, 3, 2, 3)),
            label="stonewall line",
        )
    flow, speed = m.tested_grid(speeds, 120)
    head = m.head(flow, speed, warn=False)
    for n, q, h in zip(speeds, flow, head, strict=True):
        ax.plot(q, h / 1e3, color=_INK, lw=1.3)
        ax.annotate(
            f"{60 * n:.0f} rpm",
            (q[-1], h[-1] / 1e3),
            xytext=(4, 0),
            textcoords="offset points",
            fontsize=8,
            color=_INK,
            va="center",
        )
    if points is not None:
        for kind, marker, colour, label in (
            ("line", "o", _INK, "measured"),
            ("surge", "s", _SURGE, "measured surge"),
            ("stonewall", "D", _STONEWALL, "measured stonewall"),
        ):
            chosen = points[points.kind == kind]
            if len(chosen):
                ax.scatter(
                    chosen.flow,
                    chosen["head"] / 1e3,
                    s=16,
                    marker=marker,
                    facecolor="white",
                    edgecolor=colour,
                    zorder=3,
                    label=label,
                )
    ax.set_xlabel("actual inlet volume flow [m³/s]")
    ax.set_ylabel(f"{m.basis.value} head [kJ/kg]")
    ax.set_title(
        f"{m.name}\nefficiency ({m.basis.value}) shaded", fontsize=11, loc="left", color=_INK
    )
    ax.grid(color="#d0d4d8", lw=0.5)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.use_sticky_edges = False
    ax.margins(x=0.06, y=0.04)
    fig.legend(loc="outside right upper", fontsize=8, frameon=False)
    fig.text(
        0.995,
        0.01,
        textwrap.fill(CAUTION, 36, break_on_hyphens=False),
        fontsize=7,
        color="#6b7480",
        ha="right",
        va="bottom",
    )
    return fig


def _efficiency_levels(efficiency: np.ndarray) -> np.ndarray:
    """Contour levels at round steps (0.01, 0.02 or 0.05) with the peak island inside."""
    low, high = float(np.min(efficiency)), float(np.max(efficiency))
    step = next(s for s in (0.01, 0.02, 0.05, 0.1) if (high - low) / s <= 12)
    return np.arange(np.floor(low / step) * step, high, step).round(6)


def write_fit_report(map_path: str | Path, out_dir: str | Path, *,
                     overwrite: bool = False) -> dict[str, Path]:
    """Fit a map file and write its fit report and picture.

    Parameters
    ----------
    map_path : str or Path
        A map file (YAML metadata, or CSV table with its YAML beside it); a map given as
        published coefficients is reported and drawn without residuals.
    out_dir : str or Path
        Folder for the output (created if missing), written as every command writes
        (:mod:`trainopt.report.output_folder`): checked before the fit, complete or not at all.
    overwrite : bool
        Replace files of the same names (``--force``); otherwise they are refused.

    Returns
    -------
    dict of str to Path
        ``report`` (text summary), ``picture`` (PNG) and, for fitted maps, ``points``
        (residuals per point, CSV) and ``lines`` (residuals per speed line, CSV), and for a
        curve of pressure ``conversion`` (heads converted per point, CSV).
    """
    map_path = Path(map_path)
    stem = safe_name(map_path.stem)
    names = {"report": f"{stem}_fit.txt", "picture": f"{stem}_map.png",
             "points": f"{stem}_fit_points.csv", "lines": f"{stem}_fit_lines.csv",
             "conversion": f"{stem}_head_conversion.csv"}
    folder = OutputFolder(out_dir, overwrite=overwrite, option="--out")
    folder.check(names.values())
    source = read_map_source(map_path)
    fit = None if isinstance(source, CompressorMap) else fit_map(source)
    with folder.writing():
        kinds = _write_fit_files(map_path, source, fit, folder, names)
    return {kind: folder.written[names[kind]] for kind in kinds}


def _write_fit_files(map_path: Path, source, fit: MapFit | None, folder: OutputFolder,
                     names: dict[str, str]) -> list[str]:
    """Write the fit report's files into the folder's temporary place; the kinds written."""
    m = source if fit is None else fit.map
    paths = {kind: folder.path(names[kind]) for kind in ("report", "picture")}
    text = [
        f"Map: {m.name}",
        f"File: {map_path}",
        f"Basis: {m.basis.value} head and efficiency",
        f"Tested speeds: {60 * m.speed_min:.0f}-{60 * m.speed_max:.0f} rpm",
    ]
    if fit is None:
        text.append("Published coefficients: nothing fitted, no residuals.")
    else:
        paths["points"] = folder.path(names["points"])
        paths["lines"] = folder.path(names["lines"])
        write_csv(_display(fit.points), paths["points"], float_format="%.6g")
        write_csv(_display(fit.lines), paths["lines"], float_format="%.6g")
        text += _fit_text(fit)
        if fit.conversion is not None:
            paths["conversion"] = folder.path(names["conversion"])
            write_csv(_display(fit.conversion), paths["conversion"], float_format="%.8g")
            text += ["", fit.conversion_note + f"; per point in {names['conversion']}"]
    departure = _display(fan_law_departure(m)).astype({"speed [rpm]": int})
    text += [
        "",
        f"Departure from the fan laws, against the {60 * m.speed_max:.0f} rpm line "
        "(head and flows relative, efficiency absolute):",
        _display(departure).to_string(index=False, float_format=lambda v: f"{v:.4f}"),
        "",
        f"Surge control line drawn at {100 * DEFAULT_CONTROL_LINE_OFFSET:.0f} % of "
        "surge flow (common practice; each unit may set its own).",
        CAUTION,
    ]
    paths["report"].write_text("\n".join(text) + "\n", encoding="utf-8")
    fig = plot_map(m, points=None if fit is None else fit.points)
    fig.savefig(paths["picture"], dpi=130)
    return list(paths)


def _fit_text(fit: MapFit) -> list[str]:
    s = fit.summary()
    lines = fit.lines.copy()
    table = pd.DataFrame(
        {
            "speed [rpm]": (60 * lines.speed).round().astype(int),
            "points": lines.points,
            "head RMS [%]": 100 * lines.head_rms,
            "head max [%]": 100 * lines.head_max,
            "eff. RMS [-]": lines.efficiency_rms,
            "eff. max [-]": lines.efficiency_max,
            "surge flow [%]": 100 * lines.surge_error,
            "stonewall flow [%]": 100 * lines.stonewall_error,
        }
    )
    return [
        f"Fit: {fit.speed_dependence.value} speed dependence; head of degree {fit.head_degree} "
        f"and efficiency of degree {fit.efficiency_degree} in the flow coefficient",
        f"Points: {len(fit.points)} on {len(fit.lines)} speed lines",
        "",
        "Residuals (fitted against measured):",
        f"  head            RMS {100 * s['head_rms']:.3g} %   max {100 * s['head_max']:.3g} %",
        f"  efficiency      RMS {s['efficiency_rms']:.3g}     "
        f"max {s['efficiency_max']:.3g} (absolute)",
        f"  surge flow      RMS {100 * s['surge_flow_rms']:.3g} %   "
        f"max {100 * s['surge_flow_max']:.3g} %",
        f"  stonewall flow  RMS {100 * s['stonewall_flow_rms']:.3g} %   "
        f"max {100 * s['stonewall_flow_max']:.3g} %",
        "",
        "Per speed line:",
        table.to_string(index=False, float_format=lambda v: f"{v:.4f}"),
    ]


def _display(frame: pd.DataFrame) -> pd.DataFrame:
    """Columns in the units engineers read: speed in rpm, head in kJ/kg, flows in m³/s."""
    out = frame.copy()
    renames = {}
    for column in out.columns:
        if column == "speed":
            out[column], renames[column] = 60 * out[column], "speed [rpm]"
        elif column in ("head", "head_fit"):
            out[column], renames[column] = out[column] / 1e3, f"{column} [kJ/kg]"
        elif column.endswith(("flow", "flow_fit")):
            renames[column] = f"{column} [m3/s]"
        elif column == "discharge_pressure":
            out[column], renames[column] = out[column] / 1e5, "discharge_pressure [bar]"
        elif column == "pressure_ratio":
            renames[column] = "pressure_ratio [-]"
    return out.rename(columns=renames)
