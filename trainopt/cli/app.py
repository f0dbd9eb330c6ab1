"""The ``trainopt`` command: a thin layer over the Python API, one call per command."""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import typer

from trainopt.cli.failure import friendly
from trainopt.physics.compression import HeadBasis, PolytropicMethod
from trainopt.physics.gas import EquationOfState
from trainopt.physics.units import Kind, parse_quantity

app = typer.Typer(add_completion=False, no_args_is_help=True,
                  help="Least-power load sharing and margins for centrifugal compressor stations. "
                       "Advisory only: it never replaces the anti-surge controller, the vendor's "
                       "data or an engineer's judgement.")


@app.callback()
def _root() -> None:
    """Least-power load sharing and margins for centrifugal compressor stations."""


def _table(rows: dict, title: str) -> str:
    width = max(len(k) for k in rows)
    lines = [title, "-" * len(title)]
    for key, value in rows.items():
        text = f"{value:.6g}" if isinstance(value, float) else str(value)
        lines.append(f"{key:<{width}}  {text}")
    return "\n".join(lines)


def _emit(data: dict, as_json: bool, title: str) -> None:
    if as_json:
        # NaN (no dew point above the cricondenbar) is not JSON; write null instead.
        data = {k: None if isinstance(v, float) and math.isnan(v) else v for k, v in data.items()}
        sys.stdout.write(json.dumps(data, indent=2, allow_nan=False) + "\n")
    else:
        sys.stdout.write(_table(data, title) + "\n")


@app.command("optimize")
@friendly
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


@app.command("evaluate")
@friendly
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
    from trainopt.report.terminal import format_result

    if out is not None:
        from trainopt.report.files import write_result_files

        write_result_files(result, out)
    if as_json:
        sys.stdout.write(json.dumps(result.to_dict(), indent=2, default=str) + "\n")
    else:
        sys.stdout.write(format_result(result) + "\n")
    if result.status == "infeasible":
        raise typer.Exit(1)


@app.command("fit-map")
@friendly
def fit_map_command(
    map_file: Path = typer.Argument(..., help="Map file (CSV with units in the header, or YAML)."),
    out: Path = typer.Option(Path("map_fit"), "--out", help="Folder for the report and picture."),
) -> None:
    """Fit a compressor map; write the fit report (residuals) and a picture of the map."""
    from trainopt.report.map_picture import write_fit_report

    written = write_fit_report(map_file, out)
    for kind, path in written.items():
        sys.stdout.write(f"{kind}: {path}\n")


@app.command("gas")
@friendly
def gas_command(
    gas_file: Path = typer.Argument(..., help="YAML file with a 'composition' (or a case file)."),
    pressure: str = typer.Option(..., "--pressure", "-p", help="Absolute pressure, e.g. '45 bar'."),
    temperature: str = typer.Option(..., "--temperature", "-t", help="E.g. '25 degC'."),
    to: str | None = typer.Option(None, "--to", help="Discharge pressure, e.g. '75 bar'."),
    efficiency: str = typer.Option("0.80", "--efficiency", help="Efficiency on --basis [-]."),
    basis: HeadBasis = typer.Option(HeadBasis.POLYTROPIC, "--basis"),
    method: PolytropicMethod = typer.Option(PolytropicMethod.SCHULTZ, "--method"),
    eos: str = typer.Option("gerg", "--eos", help="'gerg' (GERG-2008 parameters) or 'pr'."),
    atmospheric: str = typer.Option("101.325 kPa", "--atmospheric",
                                    help="Atmospheric pressure for gauge units."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
) -> None:
    """Print a gas's properties at a state and what compressing it to --to takes."""
    from trainopt.case.gas_file import load_gas
    from trainopt.report.gas_properties import gas_summary

    models = {"gerg": EquationOfState.GERG2008, "pr": EquationOfState.PENG_ROBINSON}
    if eos not in models:
        from trainopt.errors import InputError

        raise InputError("--eos", f"unknown equation of state '{eos}'", "use 'gerg' or 'pr'")
    atm = parse_quantity(atmospheric, Kind.PRESSURE, "--atmospheric")
    p1 = parse_quantity(pressure, Kind.PRESSURE, "--pressure", atmospheric=atm)
    t1 = parse_quantity(temperature, Kind.TEMPERATURE, "--temperature")
    p2 = parse_quantity(to, Kind.PRESSURE, "--to", atmospheric=atm) if to else None
    eta = parse_quantity(efficiency, Kind.DIMENSIONLESS, "--efficiency")
    gas = load_gas(gas_file, models[eos])
    data = gas_summary(gas, p1, t1, p2, eta, basis, method)
    _emit(data, as_json, f"Gas from {gas_file}")


def _register_studies() -> None:
    from trainopt.cli.studies import register

    register(app)


_register_studies()
