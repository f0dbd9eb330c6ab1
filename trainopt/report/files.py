"""Writing a station result to files: JSON, CSV and a map picture per running unit."""

from __future__ import annotations

import json
from pathlib import Path

from trainopt.errors import InputError
from trainopt.station.result import StationResult


def write_result_files(result: StationResult, out_dir: str | Path) -> dict[str, Path]:
    """Write ``result.json``, ``units.csv`` and ``map_<unit>.png`` into a folder.

    Parameters
    ----------
    result : StationResult
    out_dir : str or Path
        Folder; created if missing. Files of the same names in it are replaced, nothing
        else is touched.

    Returns
    -------
    dict of str to Path
        What was written.
    """
    from trainopt.report.map_picture import plot_map

    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InputError("--out", f"{out} is a file, not a folder", "give a folder path")
    out.mkdir(parents=True, exist_ok=True)
    written = {"json": out / "result.json", "csv": out / "units.csv"}
    written["json"].write_text(json.dumps(result.to_dict(), indent=2, default=str) + "\n",
                               encoding="utf-8")
    result.units.to_csv(written["csv"], index=False)
    if result.status == "infeasible":
        return written
    for row in result.units.to_dict("records"):
        if not row.get("running"):
            continue
        train = result.case.train(row["name"])
        # A series train has one row per section (docs/series.md): plot that section.
        name = row.get("section") if isinstance(row.get("section"), str) else None
        section = next((s for s in train.sections if s.name == name), train.sections[0])
        tag = f"{row['name']}_{name}" if name else row["name"]
        fig = plot_map(section.compressor_map, control_line_offset=section.surge_control_offset)
        ax = fig.axes[0]
        head = row["polytropic_head_kJ_kg"] if row["map_basis"] == "polytropic" else \
            row["isentropic_head_kJ_kg"]
        ax.plot([row["inlet_volume_flow_m3_h"] / 3600.0], [head], marker="D", markersize=11,
                color="#d62f8a", markeredgecolor="black", zorder=10, label="operating point")
        ax.annotate(f"{tag}: {row['speed_rpm']:.0f} rpm\n"
                    f"control line +{row['control_line_margin_pct']:.1f} %\n"
                    f"surge +{row['surge_margin_pct']:.1f} %\n"
                    f"power margin {row['driver_power_margin_pct']:.1f} %",
                    (row["inlet_volume_flow_m3_h"] / 3600.0, head), xytext=(14, 14),
                    textcoords="offset points", fontsize=9,
                    bbox={"boxstyle": "round", "fc": "white", "alpha": 0.85})
        path = out / f"map_{tag}.png"
        fig.savefig(path, dpi=110)
        written[f"map_{tag}"] = path
    return written
