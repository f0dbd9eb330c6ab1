"""The ``trainopt optimize`` and ``trainopt evaluate`` commands, one API call each."""

from __future__ import annotations

import sys
from pathlib import Path

import typer

from trainopt.cli.failure import friendly


def optimize_command(
    case_file: Path = typer.Argument(..., help="Station case (YAML)."),
    demand: str | None = typer.Option(None, "--demand", help="Throughput, e.g. '300 MMSCFD'."),
    offline: list[str] = typer.Option([], "--offline", help="Unit to take offline (repeat)."),
    objective: str | None = typer.Option(None, "--objective",
                                         help="shaft_power, energy_input or cost."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
    out: Path | None = typer.Option(None, "--out", help="Folder for JSON, CSV and map pictures."),
) -> None:
    """Find the least-power split of the demand across the station's units."""
    import trainopt

    case = trainopt.load_case(case_file)
    result = trainopt.optimize(case, demand=demand, offline=offline, objective=objective)
    _show(result, as_json, out)


def evaluate_command(
    case_file: Path = typer.Argument(..., help="Station case (YAML)."),
    split: list[str] = typer.Option(..., "--split", help="NAME=QTY, e.g. A=25kg/s (repeat)."),
    demand: str | None = typer.Option(None, "--demand", help="Throughput the split must add up "
                                      "to; the case's demand by default."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
    out: Path | None = typer.Option(None, "--out", help="Folder for JSON, CSV and map pictures."),
) -> None:
    """Report a given split (net flow per running unit) on the true model."""
    import trainopt
    from trainopt.errors import InputError

    shares = {}
    for item in split:
        name, sep, qty = item.partition("=")
        if not sep or not name.strip() or not qty.strip():
            raise InputError("--split", f"cannot read '{item}'", "write NAME=QTY, e.g. A='25 kg/s'")
        if name.strip() in shares:
            raise InputError("--split", f"unit '{name.strip()}' is given twice")
        shares[name.strip()] = qty.strip()
    case = trainopt.load_case(case_file)
    target = demand if demand is not None else case.demand_mass_flow()
    _show(trainopt.evaluate(case, shares, demand=target), as_json, out)


def _show(result, as_json: bool, out: Path | None) -> None:
    from trainopt.report.result_json import result_json
    from trainopt.report.terminal import format_result

    if out is not None:
        from trainopt.report.files import write_result_files

        write_result_files(result, out)
    if as_json:
        sys.stdout.write(result_json(result))
    else:
        sys.stdout.write(format_result(result) + "\n")
    if result.status == "infeasible":
        raise typer.Exit(1)


def register(app: typer.Typer) -> None:
    """Add the ``optimize``, ``evaluate`` commands to the ``trainopt`` app."""
    app.command("optimize")(friendly(optimize_command))
    app.command("evaluate")(friendly(evaluate_command))
