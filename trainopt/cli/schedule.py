"""The ``trainopt schedule`` command: a commitment schedule over a forecast, one API call.

``trainopt.cli.app`` adds it with ``register(app)``. It calls
:func:`trainopt.report.schedule_report.schedule_report`, prints a summary (or the JSON
result with ``--json``) and the files written, and turns trainopt's own errors into one
line on stderr with exit status 2.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Annotated

import typer

from trainopt.cli.failure import friendly


def schedule_command(
    case_file: Annotated[Path, typer.Argument(help="Station case (YAML) with each unit's "
                                                   "commitment rules.")],
    forecast: Annotated[Path, typer.Argument(help="Forecast (.csv or .parquet): time, "
                                                  "demand and conditions per period.")],
    columns: Annotated[Path | None, typer.Option(
        "--columns", help="Forecast column mapping (YAML), see docs/schedule.md; without "
        "it, headers carry units, e.g. 'demand [MMSCMD]'.")] = None,
    trip_reserve: Annotated[str | None, typer.Option(
        "--trip-reserve", help="With any one running unit tripped, the others can carry "
        "this share of demand, e.g. '90 %' (steady state only).")] = None,
    hours: Annotated[float | None, typer.Option(
        "--hours", help="Horizon [h] from the first period (default: the whole forecast).")
    ] = None,
    out: Annotated[Path | None, typer.Option(
        "--out", help="Folder for the tables, picture, JSON and HTML report.")] = None,
    as_json: Annotated[bool, typer.Option("--json", help="Print the result as JSON.")] = False,
    force: Annotated[bool, typer.Option("--force", help="Replace existing output files.")] = False,
) -> None:
    """Commitment schedule over a forecast: starts, stops, run-time rules, trip reserve."""
    from trainopt.report.schedule_report import schedule_report, summary_text

    result, written = schedule_report(case_file, forecast, out, overwrite=force,
                                      columns=columns, trip_reserve=trip_reserve, hours=hours)
    if as_json:
        sys.stdout.write(json.dumps(result.to_dict(), default=str) + "\n")
        return
    sys.stdout.write(summary_text(result) + "\n")
    for kind, path in written.items():
        sys.stdout.write(f"{kind}: {path}\n")


def register(app: typer.Typer) -> None:
    """Add the ``schedule`` command to the ``trainopt`` app."""
    app.command("schedule")(friendly(schedule_command))
