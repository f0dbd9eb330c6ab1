"""Each running unit's map with its operating point, as a PNG for the page.

The map itself is :func:`trainopt.report.map_picture.plot_map` (speed lines, efficiency
islands, surge, surge control and stonewall lines); here the optimum's point is marked,
and the point of the split being run now when one is given.
"""

from __future__ import annotations

import io
import threading

from trainopt.errors import InputError

_DRAWING = threading.Lock()  # matplotlib's shared state (fonts, caches) is not thread-safe

_OPTIMUM = "#1d3fb8"
_CURRENT = "#c0267a"


def picture_rows(result) -> dict[str, dict]:
    """Rows of the running units (one per section of a series train), by picture name."""
    out = {}
    if result is None or result.status == "infeasible":
        return out
    for row in result.units.to_dict("records"):
        if not row.get("running"):
            continue
        section = row.get("section") if isinstance(row.get("section"), str) else None
        out[f"{row['name']}-{section}" if section else row["name"]] = row
    return out


def _point(row: dict) -> tuple[float, float]:
    """Inlet volume flow [m3/s] and head on the map's basis [kJ/kg] of a result row."""
    head = (row["polytropic_head_kJ_kg"] if row["map_basis"] == "polytropic"
            else row["isentropic_head_kJ_kg"])
    return row["inlet_volume_flow_m3_h"] / 3600.0, head


def map_png(case, name: str, optimum: dict, current: dict | None = None) -> bytes:
    """A PNG of one unit's (or section's) map with the optimum's operating point.

    Parameters
    ----------
    case : Case
    name : str
        A key of :func:`picture_rows` (``"A"``, or ``"T1-LP"`` for a section).
    optimum : dict
        The unit's row in the optimum.
    current : dict, optional
        The unit's row in the evaluated split being run now.

    Returns
    -------
    bytes
        PNG image.
    """
    with _DRAWING:
        return _draw(case, name, optimum, current)


def _draw(case, name: str, optimum: dict, current: dict | None) -> bytes:
    from trainopt.report.map_picture import plot_map

    train = case.train(optimum["name"])
    section_name = optimum.get("section") if isinstance(optimum.get("section"), str) else None
    section = next((s for s in train.sections if s.name == section_name), train.sections[0])
    if section_name is not None and section.name != section_name:
        raise InputError("picture", f"no section '{section_name}' in {train.name}")
    fig = plot_map(section.compressor_map, control_line_offset=section.surge_control_offset)
    fig.set_size_inches(8.6, 4.8)
    ax = fig.axes[0]
    marks = [("recommended", optimum, _OPTIMUM, "o")]
    if current is not None:
        marks.append(("run now", current, _CURRENT, "s"))
    handles = []
    for label, row, colour, marker in marks:
        q, head = _point(row)
        handles += ax.plot([q], [head], marker=marker, markersize=10, color=colour,
                           markeredgecolor="white", linestyle="none", zorder=10,
                           label=f"{label}: {row['speed_rpm']:.0f} rpm")
    ax.set_title(f"{name}: {section.compressor_map.name}", fontsize=10, loc="left")
    ax.legend(handles=handles, loc="lower left", fontsize=8, frameon=True)
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=80)
    return buffer.getvalue()
