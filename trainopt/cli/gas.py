"""The ``trainopt gas`` command: gas properties at a state and what compressing it takes."""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import typer

from trainopt.caution import CAUTION
from trainopt.cli.failure import friendly
from trainopt.physics.choices import HeadBasis, PolytropicMethod


def _table(rows: dict, title: str) -> str:
    width = max(len(k) for k in rows)
    lines = [title, "-" * len(title)]
    for key, value in rows.items():
        text = f"{value:.6g}" if isinstance(value, float) else str(value)
        lines.append(f"{key:<{width}}  {text}")
    return "\n".join(lines)


def _emit(data: dict, as_json: bool, title: str) -> None:
    data = {**data, "caution": CAUTION}
    if as_json:
        # NaN (no dew point above the cricondenbar) is not JSON; write null instead.
        data = {k: None if isinstance(v, float) and math.isnan(v) else v for k, v in data.items()}
        sys.stdout.write(json.dumps(data, indent=2, allow_nan=False) + "\n")
    else:
        rows = {k: v for k, v in data.items() if k != "caution"}
        sys.stdout.write(_table(rows, title) + "\n\n" + CAUTION + "\n")


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
    from trainopt.physics.gas import EquationOfState
    from trainopt.physics.units import Kind, parse_quantity
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


def register(app: typer.Typer) -> None:
    """Add the ``gas`` command to the ``trainopt`` app."""
    app.command("gas", epilog=CAUTION)(friendly(gas_command))
