"""The ``trainopt calibrate`` command: one call of the calibration API and its report.

``trainopt.cli.app`` adds it with ``register(app)``.
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated

import typer

from trainopt.caution import CAUTION
from trainopt.cli.failure import friendly


def calibrate_command(
    case_file: Annotated[Path, typer.Argument(help="Station case (YAML), maps as new.")],
    history: Annotated[Path, typer.Argument(help="Operating history (.csv or .parquet).")],
    columns: Annotated[Path, typer.Option(
        "--columns", help="Column mapping (YAML); each unit needs speed and "
        "discharge_temperature (docs/calibration.md).")],
    out: Annotated[Path, typer.Option("--out", help="Folder for case.yaml, the report and "
                                      "tables.")] = Path("calibration"),
    since: Annotated[str | None, typer.Option("--since", help="First date used, e.g. "
                                              "2023-01-01.")] = None,
    until: Annotated[str | None, typer.Option("--until", help="Last date used.")] = None,
    flow_factor: Annotated[bool, typer.Option(
        "--flow-factor", help="Fit a flow (capacity) factor too.")] = False,
    steady_hours: Annotated[str, typer.Option(
        "--steady-hours", help="Length of a steady window, e.g. '3 h'.")] = "3 h",
    speed_band: Annotated[str, typer.Option(
        "--speed-band", help="Largest speed spread in a steady window.")] = "1 %",
    flow_band: Annotated[str, typer.Option(
        "--flow-band", help="Largest flow spread in a steady window.")] = "2 %",
    pressure_band: Annotated[str, typer.Option(
        "--pressure-band", help="Largest pressure spread in a steady window.")] = "2 %",
    temperature_band: Annotated[str, typer.Option(
        "--temperature-band", help="Largest temperature spread in a steady window.")] = "2 K",
    wash_cost: Annotated[str | None, typer.Option(
        "--wash-cost", help="Cost of a wash restoring the as-new map, in the case's "
        "currency, e.g. 40000 or '40000 USD'.")] = None,
    overhaul_cost: Annotated[str | None, typer.Option(
        "--overhaul-cost", help="Cost of an overhaul restoring the as-new map, in the "
        "case's currency, e.g. 250000 or '250000 USD'.")] = None,
    force: Annotated[bool, typer.Option("--force", help="Replace existing output files.")
                     ] = False,
) -> None:
    """Calibrate each unit's map to its history: degradation factors and a calibrated case."""
    from trainopt.case.loading import load_case
    from trainopt.physics.units import Kind, parse_quantity
    from trainopt.report.calibration_report import output_folder, write_calibration
    from trainopt.studies.calibration import calibrate
    from trainopt.studies.steady_windows import SteadyBands

    case = load_case(case_file, calibrated=False)
    currency = case.economics.currency
    wash = _cost(wash_cost, "--wash-cost", currency, "40000")
    overhaul = _cost(overhaul_cost, "--overhaul-cost", currency, "250000")
    bands = SteadyBands(
        duration=_duration(steady_hours),
        speed=parse_quantity(speed_band, Kind.DIMENSIONLESS, "--speed-band"),
        flow=parse_quantity(flow_band, Kind.DIMENSIONLESS, "--flow-band"),
        pressure=parse_quantity(pressure_band, Kind.DIMENSIONLESS, "--pressure-band"),
        temperature=parse_quantity(temperature_band, Kind.TEMPERATURE_DIFFERENCE,
                                   "--temperature-band"))
    output_folder(out, case_file, overwrite=force)  # refuse now, before the work
    result = calibrate(case, history, columns, since=since, until=until, bands=bands,
                       fit_flow=flow_factor)
    written = write_calibration(result, out, wash_cost=wash, overhaul_cost=overhaul,
                                overwrite=force)
    sys.stdout.write(result.summary() + "\n\n")
    for kind, path in written.items():
        if kind in ("case", "html", "factors"):
            sys.stdout.write(f"{kind}: {path}\n")
    sys.stdout.write(f"tables: {Path(out) / '*.csv'}\n{CAUTION}\n")


def _cost(text: str | None, option: str, currency: str, example: str) -> float | None:
    """A cost given as '40000' or '40000 USD' in the case's currency [currency]."""
    from trainopt.errors import InputError

    if text is None:
        return None
    fix = f"give e.g. {example} or '{example} {currency}' (the case's currency)"
    value, _, label = text.strip().partition(" ")
    try:
        number = float(value.replace(",", ""))
    except ValueError:
        raise InputError(option, f"cannot read {text!r} as a cost", fix) from None
    if label.strip() and label.strip().upper() != currency.upper():
        raise InputError(option, f"{text!r} is not a cost in {currency}, the case's currency "
                         "(economics.currency)", fix)
    if not number > 0:
        raise InputError(option, f"{number:g} is not a positive cost", fix)
    return number


def _duration(text: str) -> float:
    """'3 h', '90 min' or '600 s' in seconds."""
    from trainopt.errors import InputError

    parts = text.replace(" ", "")
    for suffix, seconds in (("min", 60.0), ("h", 3600.0), ("s", 1.0)):
        if parts.endswith(suffix):
            try:
                value = float(parts[: -len(suffix)])
            except ValueError:
                break
            if value > 0:
                return value * seconds
            break
    raise InputError("--steady-hours", f"cannot read the duration {text!r}",
                     "write e.g. '3 h', '90 min' or '600 s'")


def register(app: typer.Typer) -> None:
    """Add the ``calibrate`` command to the ``trainopt`` app."""
    app.command("calibrate")(friendly(calibrate_command))
