"""The ``trainopt optimize`` and ``trainopt evaluate`` commands, one API call each."""

from __future__ import annotations

import sys
from pathlib import Path

import typer

from trainopt.caution import CAUTION
from trainopt.cli.failure import friendly
from trainopt.cli.options import unit_names

_FORCE = "Replace existing files of the same names in --out."
_VERBOSE = "Also show the solver's details (piecewise objective, formulation, solve time)."
_EXPLAIN = "Define every column of the table under it."


def optimize_command(
    case_file: Path = typer.Argument(..., help="Station case (YAML)."),
    demand: str | None = typer.Option(None, "--demand", help="Throughput, e.g. '300 MMSCFD'."),
    offline: list[str] = typer.Option([], "--offline", help="Unit(s) to take offline, "
                                      "comma-separated, e.g. 'A,C' (repeat)."),
    objective: str | None = typer.Option(None, "--objective",
                                         help="shaft_power, energy_input or cost."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
    out: Path | None = typer.Option(None, "--out", help="Folder for JSON, CSV and map pictures."),
    force: bool = typer.Option(False, "--force", help=_FORCE),
    verbose: bool = typer.Option(False, "--verbose", help=_VERBOSE),
    explain: bool = typer.Option(False, "--explain", help=_EXPLAIN),
    trip_reserve: str | None = typer.Option(None, "--trip-reserve", help="With any one running "
                                            "unit tripped, the others can carry this share of "
                                            "demand, e.g. '90 %' (steady state only)."),
) -> None:
    """Find the least-power split of the demand across the station's units."""
    import trainopt

    case = trainopt.load_case(case_file)
    folder = _check_out(case, out, force)
    result = trainopt.optimize(case, demand=demand, offline=unit_names(offline, "--offline"),
                               objective=objective,
                               **({"trip_reserve": trip_reserve} if trip_reserve else {}))
    security = (result.solver or {}).get("trip_reserve")
    if security and not as_json:
        def shown(x):  # the objective in W, or currency/s for cost
            if result.objective == "cost":
                return f"{x * 3600:,.2f} {case.economics.currency}/h"
            return f"{x / 1e3:,.0f} kW"

        sys.stdout.write(f"trip reserve {security['share']:.0%}: {result.objective} "
                         f"{shown(security['piecewise_objective_with'])} with it, "
                         f"{shown(security['piecewise_objective_without'])} without (on the "
                         "piecewise curves; steady state, the trip transient is not "
                         "modelled)\n")
    _show(result, as_json, folder, demand, verbose=verbose, explain=explain)


def evaluate_command(
    case_file: Path = typer.Argument(..., help="Station case (YAML)."),
    split: list[str] = typer.Option(..., "--split", help="NAME=QTY, e.g. A=25kg/s (repeat)."),
    demand: str | None = typer.Option(None, "--demand", help="Throughput the split must add up "
                                      "to; by default the split's sum is the demand."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
    out: Path | None = typer.Option(None, "--out", help="Folder for JSON, CSV and map pictures."),
    force: bool = typer.Option(False, "--force", help=_FORCE),
    verbose: bool = typer.Option(False, "--verbose", help=_VERBOSE),
    explain: bool = typer.Option(False, "--explain", help=_EXPLAIN),
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
    folder = _check_out(case, out, force)
    _show(trainopt.evaluate(case, shares, demand=demand), as_json, folder, demand,
          verbose=verbose, explain=explain)


def _check_out(case, out: Path | None, force: bool):
    """The output folder, checked before any solve (None without --out)."""
    if out is None:
        return None
    from trainopt.report.files import check_result_folder

    return check_result_folder(case, out, overwrite=force)


def _show(result, as_json: bool, folder, demand: str | None, *, verbose: bool = False,
          explain: bool = False) -> None:
    """Print the result first, then write its files: a write failure loses no answer."""
    from trainopt.report.result_json import result_json
    from trainopt.report.terminal import format_result

    if as_json:
        sys.stdout.write(result_json(result))
    else:
        sys.stdout.write(format_result(result, demand_text=demand, verbose=verbose,
                                       explain=explain) + "\n")
    sys.stdout.flush()
    if folder is not None:
        from trainopt.report.files import write_result_files

        written = write_result_files(result, folder)
        if not as_json:
            sys.stdout.write("".join(f"{kind}: {path}\n" for kind, path in written.items()))
    if result.status == "infeasible":
        raise typer.Exit(1)


def register(app: typer.Typer) -> None:
    """Add the ``optimize``, ``evaluate`` commands to the ``trainopt`` app."""
    app.command("optimize", epilog=CAUTION)(friendly(optimize_command))
    app.command("evaluate", epilog=CAUTION)(friendly(evaluate_command))
