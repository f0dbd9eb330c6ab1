"""Option checks the commands share: lists of unit names, and sets that contradict."""

from __future__ import annotations

from collections.abc import Iterable

from trainopt.errors import InputError


def unit_names(values: Iterable[str] | None, option: str) -> list[str]:
    """Unit names from a repeatable option whose values may hold commas (``A,B``).

    Parameters
    ----------
    values : iterable of str, optional
        The option's values as typed, e.g. ``["A,B", "D"]``.
    option : str
        The option's name, for the message.

    Returns
    -------
    list of str
        Each name once, in the order given.

    Raises
    ------
    InputError
        A value names no unit (``","``, ``""``).
    """
    names: list[str] = []
    for text in values or []:
        parts = [u.strip() for u in str(text).split(",") if u.strip()]
        if not parts:
            raise InputError(option, f"'{text}' names no unit", "write e.g. 'A,C'")
        names += [u for u in parts if u not in names]
    return names


def refuse_overlap(offline: Iterable[str], groups: Iterable[Iterable[str]]) -> None:
    """Refuse a unit both taken offline and named in a service set.

    Raises
    ------
    InputError
        Naming the unit and both options.
    """
    off = set(offline)
    for group in groups:
        both = [u for u in group if u in off]
        if both:
            raise InputError("--service", f"'{','.join(group)}' includes {', '.join(both)}, "
                             "which --offline takes out of service",
                             "drop it from --offline or from --service")
