"""Writing a station result to files: JSON, CSV and a map picture per running unit.

The files are written the one way every command writes (:mod:`trainopt.report.output_folder`):
the folder is checked before the solve (:func:`check_result_folder`), files go to a temporary
folder and are moved into place complete, unit names become safe file names, and existing
files are replaced only with ``overwrite=True`` (``--force``).
"""

from __future__ import annotations

from pathlib import Path

from trainopt.report.output_folder import OutputFolder, safe_name, write_csv

__all__ = ["check_result_folder", "picture_names", "result_file_names", "write_result_files"]


def picture_names(case) -> dict[tuple[str, str | None], str]:
    """The map picture's file name of each unit (and section of a series train).

    Names are made file-safe (:func:`~trainopt.report.output_folder.safe_name`); two units
    whose safe names coincide (``A/B`` and ``A_B``) get ``-2``, ``-3`` ... so that neither
    picture replaces the other.

    Parameters
    ----------
    case : Case

    Returns
    -------
    dict of (unit, section or None) to str
    """
    keys = []
    for train in case.trains:
        if train.is_single_section:
            keys.append((train.name, None))
        else:
            keys += [(train.name, s.name) for s in train.sections]
    names, taken = {}, set()
    for unit, section in keys:
        stem = f"map_{safe_name(f'{unit}_{section}' if section else unit)}"
        name, n = f"{stem}.png", 1
        while name.lower() in taken:  # case-insensitive file systems too
            n += 1
            name = f"{stem}-{n}.png"
        taken.add(name.lower())
        names[(unit, section)] = name
    return names


def result_file_names(case) -> list[str]:
    """Every file name :func:`write_result_files` may write for a case's units.

    Parameters
    ----------
    case : Case

    Returns
    -------
    list of str
    """
    return ["result.json", "units.csv", *picture_names(case).values()]


def check_result_folder(case, out_dir: str | Path, *, overwrite: bool = False) -> OutputFolder:
    """Check an output folder before solving; returns it for :func:`write_result_files`.

    Raises
    ------
    InputError
        ``--out`` is a file, cannot be written, or holds a file of the same name (without
        ``overwrite``).
    """
    folder = OutputFolder(out_dir, overwrite=overwrite, option="--out")
    folder.check(result_file_names(case))
    return folder


def write_result_files(result, out_dir: str | Path | OutputFolder, *,
                       overwrite: bool = False) -> dict[str, Path]:
    """Write ``result.json``, ``units.csv`` and ``map_<unit>.png`` into a folder.

    Parameters
    ----------
    result : StationResult
    out_dir : str, Path or OutputFolder
        Folder (created if missing), or the folder :func:`check_result_folder` returned.
    overwrite : bool
        Replace files of the same names; otherwise an existing one is refused (before any
        file is written). Other files in the folder are never touched.

    Returns
    -------
    dict of str to Path
        What was written: ``json``, ``csv`` and ``map_<unit>`` (``map_<unit>_<section>``).
    """
    from trainopt.report.result_json import result_json

    folder = out_dir if isinstance(out_dir, OutputFolder) else \
        check_result_folder(result.case, out_dir, overwrite=overwrite)
    kinds = {"json": "result.json", "csv": "units.csv"}
    with folder.writing():
        folder.path("result.json").write_text(result_json(result), encoding="utf-8")
        write_csv(result.units, folder.path("units.csv"))
        if result.status != "infeasible":
            kinds.update(_pictures(result, folder))
    return {kind: folder.written[name] for kind, name in kinds.items()}


def _pictures(result, folder: OutputFolder) -> dict[str, str]:
    """A map picture per running unit (per section of a series train): kind -> file name."""
    from trainopt.report.map_picture import plot_map

    kinds, files = {}, picture_names(result.case)
    for row in result.units.to_dict("records"):
        if not row.get("running"):
            continue
        train = result.case.train(row["name"])
        # A series train has one row per section (docs/series.md): plot that section.
        name = row.get("section") if isinstance(row.get("section"), str) else None
        section = next((s for s in train.sections if s.name == name), train.sections[0])
        label = f"{row['name']}_{name}" if name else row["name"]
        fig = plot_map(section.compressor_map, control_line_offset=section.surge_control_offset)
        ax = fig.axes[0]
        head = row["polytropic_head_kJ_kg"] if row["map_basis"] == "polytropic" else \
            row["isentropic_head_kJ_kg"]
        ax.plot([row["inlet_volume_flow_m3_h"] / 3600.0], [head], marker="D", markersize=11,
                color="#d62f8a", markeredgecolor="black", zorder=10, label="operating point")
        ax.annotate(f"{label}: {row['speed_rpm']:.0f} rpm\n"
                    f"control line +{row['control_line_margin_pct']:.1f} %\n"
                    f"surge +{row['surge_margin_pct']:.1f} %\n"
                    f"power margin {row['driver_power_margin_pct']:.1f} %",
                    (row["inlet_volume_flow_m3_h"] / 3600.0, head), xytext=(14, 14),
                    textcoords="offset points", fontsize=9,
                    bbox={"boxstyle": "round", "fc": "white", "alpha": 0.85})
        file = files[(row["name"], name if not train.is_single_section else None)]
        fig.savefig(folder.path(file), dpi=110)
        kinds[f"map_{label}"] = file
    return kinds
