"""Exceptions that trainopt raises, each naming what is wrong and how to fix it.

Every error a user can cause is an :class:`InputError` (bad field in a case, map or
data file, bad CLI option) or a :class:`PhysicsError` (a state the models cannot
represent, such as a gas inside its two-phase region). The command-line interface
prints ``str(error)`` as one line and exits with status 2; it never shows a traceback
for these.
"""

from __future__ import annotations


class TrainoptError(Exception):
    """Base class of every error trainopt raises on purpose."""


class InputError(TrainoptError, ValueError):
    """A value given by the user is missing, malformed or out of range.

    Parameters
    ----------
    field : str
        Where the value came from: a case-file key path (``units.A.driver.rated_power``),
        a file with line and column (``maps/a.csv:7:head``) or a CLI option.
    problem : str
        What is wrong with it.
    fix : str, optional
        What the user should give instead.
    """

    def __init__(self, field: str, problem: str, fix: str | None = None):
        self.field = field
        self.problem = problem
        self.fix = fix
        text = f"{field}: {problem}"
        if fix:
            text += f"; {fix}"
        super().__init__(text)


class PhysicsError(TrainoptError, ValueError):
    """A requested state lies outside what the physical models represent."""


class TwoPhaseError(PhysicsError):
    """A gas state lies inside, or too near, the two-phase region."""


class InfeasibleError(TrainoptError):
    """No operating point meets every limit; the message says which limit binds."""


class TrainoptWarning(UserWarning):
    """Base class of the warnings trainopt gives on purpose; the CLI shows each as one line."""
