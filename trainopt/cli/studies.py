"""The ``trainopt envelope`` and ``trainopt audit`` commands, one API call each.

``trainopt.cli.app`` adds them with ``register(app)``. Each command calls one function of
:mod:`trainopt.report`, prints a short summary and the files it wrote, and turns
trainopt's own errors into one line on stderr with exit status 2.
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated

import typer

from trainopt.caution import CAUTION
from trainopt.cli.failure import friendly
from trainopt.cli.options import refuse_overlap, unit_names


def _written(paths: dict) -> None:
    for kind, path in paths.items():
        sys.stdout.write(f"{kind}: {path}\n")


def envelope_command(
    case_file: Annotated[Path, typer.Argument(help="Station case (YAML).")],
    offline: Annotated[list[str] | None, typer.Option(
        "--offline", help="Unit(s) out of service in every study, comma-separated, e.g. "
        "'B,D' (repeat).")] = None,
    service: Annotated[list[str] | None, typer.Option(
        "--service", help="A further set of units in service, comma-separated, e.g. 'A,C' "
        "(repeat).")] = None,
    sweep: Annotated[str | None, typer.Option(
        "--sweep", help="Condition to sweep: NAME=START:STOP:STEP, e.g. "
        "'discharge_pressure=60 bar:75 bar:1 bar' (NAME: discharge_pressure, "
        "suction_pressure, suction_temperature, ambient_temperature).")] = None,
    points: Annotated[int, typer.Option("--points", help="Throughputs per running set.")] = 25,
    out: Annotated[Path, typer.Option("--out", help="Folder for the report and tables.")] = Path(
        "envelope"),
    excel: Annotated[bool, typer.Option("--excel", help="Tables in one Excel workbook.")] = False,
    force: Annotated[bool, typer.Option("--force", help="Replace existing output files.")] = False,
    workers: Annotated[int | None, typer.Option(
        "--workers", help="Local processes for the sweep (default: every core).")] = None,
    scheduler: Annotated[str | None, typer.Option(
        "--scheduler", help="Dask scheduler address, e.g. tcp://10.0.0.5:8786.")] = None,
    quiet: Annotated[bool, typer.Option("--quiet", help="No progress bar.")] = False,
) -> None:
    """Turndown, unit-offline envelopes and least power against throughput."""
    from trainopt.report.study_reports import envelope_report

    off = unit_names(offline, "--offline")
    named = [unit_names([text], "--service") for text in service or []]
    refuse_overlap(off, named)
    study, written = envelope_report(case_file, out, offline=off, named=named,
                                     sweep=sweep, points=points, excel=excel, overwrite=force,
                                     workers=workers, scheduler=scheduler, progress=not quiet)
    columns = ["service_set", "least_without_recycle_MMSCMD", "largest_MMSCMD",
               "largest_set_by"]
    table = study.turndown[[c for c in columns if c in study.turndown]]
    sys.stdout.write(table.to_string(index=False, float_format=lambda v: f"{v:.2f}") + "\n\n")
    _written(written)
    sys.stdout.write(CAUTION + "\n")


def audit_command(
    case_file: Annotated[Path, typer.Argument(help="Station case (YAML).")],
    history: Annotated[Path, typer.Argument(help="Operating history (.csv or .parquet).")],
    columns: Annotated[Path, typer.Option(
        "--columns", help="Column mapping (YAML), see docs/studies.md.")],
    out: Annotated[Path, typer.Option("--out", help="Folder for the report and tables.")] = Path(
        "audit"),
    objective: Annotated[str | None, typer.Option(
        "--objective", help="shaft_power, energy_input or cost (default: the case's).")] = None,
    pressure_bin: Annotated[str, typer.Option(
        "--pressure-bin", help="Width of the suction and discharge pressure bins.")] = "0.25 bar",
    temperature_bin: Annotated[str, typer.Option(
        "--temperature-bin", help="Width of the suction temperature bins.")] = "2 K",
    ambient_bin: Annotated[str, typer.Option(
        "--ambient-bin", help="Ambient spread allowed under a power-limited optimum.")] = "10 K",
    demand_step: Annotated[str, typer.Option(
        "--demand-step", help="Spacing of the solved demands, share of the case's demand.")
    ] = "2 %",
    sort: Annotated[bool, typer.Option(
        "--sort", help="Sort rows by time instead of refusing times that go backwards.")] = False,
    excel: Annotated[bool, typer.Option(
        "--excel", help="Tables in one Excel workbook (row-by-row tables stay CSV).")] = False,
    force: Annotated[bool, typer.Option("--force", help="Replace existing output files.")] = False,
    workers: Annotated[int | None, typer.Option(
        "--workers", help="Local processes (default: every core).")] = None,
    scheduler: Annotated[str | None, typer.Option(
        "--scheduler", help="Dask scheduler address, e.g. tcp://10.0.0.5:8786.")] = None,
    quiet: Annotated[bool, typer.Option("--quiet", help="No progress bar.")] = False,
) -> None:
    """Audit operating history: recycle energy and avoidable energy, by unit and month."""
    from trainopt.physics.units import Kind, parse_quantity
    from trainopt.report.study_reports import audit_report
    from trainopt.studies.audit import Binning

    binning = Binning(
        pressure=parse_quantity(pressure_bin, Kind.PRESSURE_DIFFERENCE, "--pressure-bin"),
        temperature=parse_quantity(temperature_bin, Kind.TEMPERATURE_DIFFERENCE,
                                   "--temperature-bin"),
        ambient=parse_quantity(ambient_bin, Kind.TEMPERATURE_DIFFERENCE, "--ambient-bin"),
        demand_step=parse_quantity(demand_step, Kind.DIMENSIONLESS, "--demand-step"))
    result, written = audit_report(case_file, history, columns, out, binning=binning,
                                   objective=objective, sort=sort, excel=excel,
                                   overwrite=force, workers=workers, scheduler=scheduler,
                                   progress=not quiet)
    sys.stdout.write(result.summary() + "\n\n")
    _written(written)
    if CAUTION not in result.summary():
        sys.stdout.write(CAUTION + "\n")


def register(app: typer.Typer) -> None:
    """Add the ``envelope`` and ``audit`` commands to the ``trainopt`` app."""
    app.command("envelope", epilog=CAUTION)(friendly(envelope_command))
    app.command("audit", epilog=CAUTION)(friendly(audit_command))
