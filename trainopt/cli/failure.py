"""What every command of the command line shares: our errors as one line, exit status 2.

trainopt's own warnings (:class:`~trainopt.errors.TrainoptWarning`: a map evaluated outside
its tested range, a map in a likely wrong unit) are shown as one line each,
``warning: <message>``, and never raised; other warnings go on to Python's usual handling.
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
        others: list[tuple] = []

        def show(message, category, filename, lineno, file=None, line=None):
            if issubclass(category, TrainoptWarning):
                typer.echo(f"warning: {message}", err=True)
            else:
                others.append((message, category, filename, lineno))

        try:
            with warnings.catch_warnings():
                warnings.filterwarnings("default", category=TrainoptWarning)
                warnings.showwarning = show
                return func(*args, **kwargs)
        except TrainoptError as exc:
            typer.echo(f"error: {exc}", err=True)
            raise typer.Exit(2) from None
        finally:
            for message, category, filename, lineno in others:
                warnings.warn_explicit(message, category, filename, lineno)

    return wrapper
