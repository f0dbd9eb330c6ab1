"""What every command of the command line shares: our errors as one line, exit status 2.

Warnings (map range, map units, gas normalisation) are shown as one line each; trainopt's
own warnings (:class:`~trainopt.errors.TrainoptWarning`) are shown, never raised.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from functools import wraps

import typer

from trainopt.errors import TrainoptError, TrainoptWarning


def friendly(func: Callable) -> Callable:
    """Turn trainopt's own errors into one line on stderr and exit status 2."""

    @wraps(func)
    def wrapper(*args, **kwargs):
        try:
            with warnings.catch_warnings():
                warnings.filterwarnings("default", category=TrainoptWarning)
                warnings.showwarning = _one_line_warning
                return func(*args, **kwargs)
        except TrainoptError as exc:
            typer.echo(f"error: {exc}", err=True)
            raise typer.Exit(2) from None

    return wrapper


def _one_line_warning(message, category, filename, lineno, file=None, line=None) -> None:
    """Show a warning as ``warning: <message>`` on stderr (no file, line or source)."""
    typer.echo(f"warning: {message}", err=True)
