"""The ``trainopt fit-map`` command: fit a map file, write its report and picture."""

from __future__ import annotations

import sys
from pathlib import Path

import typer

from trainopt.caution import CAUTION
from trainopt.cli.failure import friendly


def fit_map_command(
    map_file: Path = typer.Argument(..., help="Map file (CSV with units in the header, or YAML)."),
    out: Path = typer.Option(Path("map_fit"), "--out", help="Folder for the report and picture."),
    force: bool = typer.Option(False, "--force", help="Replace existing files of the same "
                               "names in --out."),
) -> None:
    """Fit a compressor map; write the fit report (residuals) and a picture of the map."""
    from trainopt.report.map_picture import write_fit_report

    written = write_fit_report(map_file, out, overwrite=force)
    for kind, path in written.items():
        sys.stdout.write(f"{kind}: {path}\n")
    sys.stdout.write(CAUTION + "\n")


def register(app: typer.Typer) -> None:
    """Add the ``fit-map`` command to the ``trainopt`` app."""
    app.command("fit-map", epilog=CAUTION)(friendly(fit_map_command))
