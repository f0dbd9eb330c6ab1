"""What every command of the command line shares: our errors as one line, exit status 2."""

from __future__ import annotations

from collections.abc import Callable
from functools import wraps

import typer

from trainopt.errors import TrainoptError


def friendly(func: Callable) -> Callable:
    """Turn trainopt's own errors into one line on stderr and exit status 2."""

    @wraps(func)
    def wrapper(*args, **kwargs):
        try:
            return func(*args, **kwargs)
        except TrainoptError as exc:
            typer.echo(f"error: {exc}", err=True)
            raise typer.Exit(2) from None

    return wrapper
