"""The ``trainopt`` application: the typer app and its command groups.

Each group lives in its own module with a ``register(app)`` function: :mod:`~trainopt.cli.station`
(``optimize``, ``evaluate``), :mod:`~trainopt.cli.gas`, :mod:`~trainopt.cli.maps` (``fit-map``)
and :mod:`~trainopt.cli.studies` (``envelope``, ``audit``); :mod:`~trainopt.cli.schedule`
(``schedule``).
"""

from __future__ import annotations

import typer

from trainopt.caution import CAUTION
from trainopt.cli import calibrate, gas, maps, schedule, serve, station, studies

app = typer.Typer(add_completion=False, no_args_is_help=True,
                  help="Least-power load sharing and margins for centrifugal compressor stations.",
                  epilog=CAUTION)


@app.callback()
def _root() -> None:
    """Least-power load sharing and margins for centrifugal compressor stations."""


for group in (station, maps, gas, studies, calibrate, schedule, serve):
    group.register(app)
