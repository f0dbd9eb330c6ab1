"""The schedule's outputs: terminal summary, tables, picture, JSON and the HTML report.

:func:`schedule_report` runs :func:`trainopt.studies.schedule.schedule` and writes its
files into a fresh temporary folder beside the output folder, then moves them into place
only when every file is complete: an interrupted run leaves nothing half-written. Existing
files are never replaced unless ``overwrite=True`` (``--force``), checked before any work.
"""

from __future__ import annotations

import html
import json
import shutil
import tempfile
from pathlib import Path

import numpy as np

from trainopt.report.html import _STYLE, _table, png
from trainopt.report.schedule_picture import schedule_figure
from trainopt.report.tables import check_free
from trainopt.station.result import CAUTION

__all__ = ["FILES", "schedule_html", "schedule_report", "summary_text", "write_schedule"]

FILES = ("schedule.csv", "starts.csv", "comparison.csv", "trip_check.csv", "schedule.json",
         "schedule.png", "schedule.html")


def summary_text(result) -> str:
    """A few lines for the terminal: costs, starts, the comparison, the solver."""
    c, cur = result.costs, result.currency
    lines = [f"{result.case_name}: {result.solver['periods']} periods of "
             f"{result.period / 3600:g} h, {result.solver['units']} units, "
             f"{result.solver['condition_bins']} condition bins",
             f"schedule: energy {c['energy']:,.0f} {cur} + starts {c['starts']:,.0f} {cur} "
             f"({c['start_count']}) + stops {c['stops']:,.0f} {cur} = {c['total']:,.0f} {cur}"]
    if result.trip_share is not None:
        lines.append(f"trip reserve: with any one running unit tripped, the others can carry "
                     f"{result.trip_share:.0%} of demand (steady state)")
    lines.append("")
    for _, row in result.comparison.iterrows():
        lines.append(f"  {row['way']:<32} {row[f'total_cost_{cur}']:>14,.0f} {cur}  starts "
                     f"{row['start_count']:>3}  schedule saves "
                     f"{row[f'schedule_saving_{cur}']:>12,.0f} {cur}"
                     + (f"  ({row['note']})" if row["note"] else ""))
    s = result.solver
    lines += ["", f"solver: {s['status']}, gap {s['mip_gap']:.2%}, build "
              f"{s['build_seconds']:.1f} s, solve {s['solve_seconds']:.1f} s"]
    lines += result.notes + [result.scope, CAUTION]
    return "\n".join(lines)


def schedule_html(result) -> str:
    """The self-contained HTML report (figure embedded, no scripts, no links)."""
    name = html.escape(result.case_name)
    trip = result.trip_check
    parts = [f"<h1>{name}: commitment schedule</h1>",
             f'<div class="caution">{html.escape(CAUTION)}</div>',
             f'<p class="note">{html.escape(result.scope)}</p>',
             f"<pre>{html.escape(summary_text(result))}</pre>",
             "<h2>Running periods and flow share</h2>",
             f'<img alt="schedule" src="{png(schedule_figure(result))}">',
             f"<h2>Against other ways of running [{html.escape(result.currency)}]</h2>",
             _table(result.comparison),
             f"<h2>Starts and stops [{html.escape(result.currency)}]</h2>",
             _table(result.starts, 200)]
    if trip is not None:
        ok = int(trip["feasible"].sum())
        parts += ["<h2>Trip reserve on the true model</h2>",
                  f"<p>{ok} of {len(trip)} (period, tripped unit) cases: the other running "
                  f"units carry {result.trip_share:.0%} of demand within their limits.</p>",
                  _table(trip[~trip["feasible"]] if ok < len(trip) else trip.head(24))]
    shown = result.periods[result.periods["running"]]
    parts += ["<h2>Per period and running unit</h2>", _table(shown, 200),
              f'<div class="caution">{html.escape(CAUTION)}</div>']
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>{name}: commitment schedule</title><style>{_STYLE}</style></head>"
            "<body>\n" + "\n".join(parts) + "\n</body></html>\n")


def write_schedule(result, out_dir, *, overwrite: bool = False) -> dict[str, Path]:
    """Write the schedule's files, all complete before any is moved into ``out_dir``.

    Returns
    -------
    dict of str to Path
        Kind of file to its final path.
    """
    out = Path(out_dir)
    check_free([out / f for f in FILES], overwrite)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=".schedule-", dir=out.parent))
    try:
        times = result.periods.copy()
        times.to_csv(tmp / "schedule.csv", index=False)
        result.starts.to_csv(tmp / "starts.csv", index=False)
        result.comparison.to_csv(tmp / "comparison.csv", index=False)
        if result.trip_check is not None:
            result.trip_check.to_csv(tmp / "trip_check.csv", index=False)
        (tmp / "schedule.json").write_text(json.dumps(result.to_dict(), indent=1,
                                                      default=_json_default), encoding="utf-8")
        schedule_figure(result).savefig(tmp / "schedule.png", dpi=110)
        (tmp / "schedule.html").write_text(schedule_html(result), encoding="utf-8")
        out.mkdir(parents=True, exist_ok=True)
        written = {}
        for f in FILES:
            if (tmp / f).exists():
                (tmp / f).replace(out / f)
                written[f.replace(".", " ")] = out / f
        return written
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def _json_default(value):
    if isinstance(value, np.generic):
        return value.item()
    if hasattr(value, "isoformat"):
        return value.isoformat()
    raise TypeError(f"{type(value).__name__} is not JSON")


def schedule_report(case_file, forecast_file, out_dir=None, *, overwrite: bool = False,
                    **options):
    """Run the schedule and, with ``out_dir``, write its files.

    Parameters
    ----------
    case_file, forecast_file : str or Path
        Station case (YAML) and forecast (CSV or Parquet).
    out_dir : str or Path, optional
        Output folder; nothing is written without it.
    overwrite : bool
        Replace existing files.
    **options
        For :func:`trainopt.studies.schedule.schedule` (``columns``, ``trip_reserve``,
        ``hours``...).

    Returns
    -------
    (ScheduleResult, dict of str to Path)
    """
    from trainopt.studies.schedule import schedule

    if out_dir is not None:
        check_free([Path(out_dir) / f for f in FILES], overwrite)
    result = schedule(case_file, forecast_file, **options)
    written = {} if out_dir is None else write_schedule(result, out_dir, overwrite=overwrite)
    return result, written
