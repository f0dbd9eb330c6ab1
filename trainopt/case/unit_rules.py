"""A unit's start-stop rules in SI, read from the ``commitment`` key of a case's unit.

The schedule (:mod:`trainopt.studies.schedule`) reads these; single-moment commands ignore
them. Times are in seconds, energy in joules, costs in the case's currency.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import pint

from trainopt.case.schema import CommitmentSchema, Quantity
from trainopt.errors import InputError
from trainopt.physics.units import ureg

_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-z$€£]*)\s*$")


@dataclass(frozen=True)
class UnitRules:
    """Start-stop rules of one unit.

    Attributes
    ----------
    start_cost : float
        Cost of a (warm) start [currency].
    start_fuel : float
        Fuel energy of a start [J] (LHV), charged at the fuel price.
    cold_start_cost : float or None
        Cost of a cold start [currency]; None: the same as ``start_cost``.
    cold_after : float or None
        Stopped time after which a start is cold [s].
    stop_cost : float
        Cost of a stop [currency].
    startup_time : float
        Time from a start until the unit carries flow [s].
    min_up_time, min_down_time : float
        Least running and stopped times [s].
    max_starts_per_day : int or None
        Most starts in any 24 h window [-].
    initial_running : bool or None
        State when the schedule begins; None: running unless the unit is offline.
    hours_in_state : float
        Time in the initial state before the schedule begins [s].
    """

    start_cost: float = 0.0
    start_fuel: float = 0.0
    cold_start_cost: float | None = None
    cold_after: float | None = None
    stop_cost: float = 0.0
    startup_time: float = 0.0
    min_up_time: float = 0.0
    min_down_time: float = 0.0
    max_starts_per_day: int | None = None
    initial_running: bool | None = None
    hours_in_state: float = 1000 * 3600.0


def _time(text: Quantity, field: str) -> float:
    return _scalar(text, "s", field, "a time such as '4 h' or '30 min'")


def _scalar(text: Quantity, unit: str, field: str, example: str) -> float:
    if isinstance(text, bool):
        raise InputError(field, f"{text!r} is not {example}", f"give {example}")
    if isinstance(text, int | float):
        if text != 0:
            raise InputError(field, f"the bare number {text!r} has no unit", f"give {example}")
        return 0.0
    try:
        value = float(ureg.Quantity(str(text)).to(unit).magnitude)
    except (pint.errors.PintError, ValueError, TypeError, AttributeError):
        raise InputError(field, f"cannot read {text!r}", f"give {example}") from None
    if not math.isfinite(value) or value < 0:
        raise InputError(field, f"{text!r} is negative or not finite", f"give {example}")
    return value


def _money(text: Quantity, field: str, currency: str) -> float:
    if isinstance(text, bool):
        raise InputError(field, f"{text!r} is not a cost", f"give a number of {currency}")
    if isinstance(text, int | float):
        value, label = float(text), ""
    else:
        match = _NUMBER.match(str(text))
        if not match:
            raise InputError(field, f"cannot read {text!r} as a cost",
                             f"give a number of {currency}, e.g. '1500 {currency}'")
        value, label = float(match.group(1)), match.group(2)
    if label and label != currency:
        raise InputError(field, f"{text!r} is in {label}, the case's currency is {currency}",
                         f"give the cost in {currency}")
    if not math.isfinite(value) or value < 0:
        raise InputError(field, f"{text!r} is negative or not finite",
                         f"give a cost of zero or more in {currency}")
    return value


def unit_rules(schema: CommitmentSchema, key: str, currency: str) -> UnitRules:
    """Convert a unit's ``commitment`` entry to SI.

    Parameters
    ----------
    schema : CommitmentSchema
        The validated YAML entry.
    key : str
        Its key path, for messages (``case.yaml: units[2].commitment``).
    currency : str
        The case's currency label; a cost written with another label is refused.

    Returns
    -------
    UnitRules
    """
    s = schema
    starts = s.max_starts_per_day
    if starts is not None and starts < 0:
        raise InputError(f"{key}.max_starts_per_day", f"{starts} is negative",
                         "give a whole number of 0 or more, or leave it out for no limit")
    cold_cost = (None if s.cold_start_cost is None
                 else _money(s.cold_start_cost, f"{key}.cold_start_cost", currency))
    cold_after = None if s.cold_after is None else _time(s.cold_after, f"{key}.cold_after")
    if (cold_cost is None) != (cold_after is None):
        raise InputError(f"{key}.cold_start_cost", "cold_start_cost and cold_after go "
                         "together", "give both or neither")
    return UnitRules(
        start_cost=_money(s.start_cost, f"{key}.start_cost", currency),
        start_fuel=_scalar(s.start_fuel, "J", f"{key}.start_fuel", "an energy such as '40 GJ'"),
        cold_start_cost=cold_cost, cold_after=cold_after,
        stop_cost=_money(s.stop_cost, f"{key}.stop_cost", currency),
        startup_time=_time(s.startup_time, f"{key}.startup_time"),
        min_up_time=_time(s.min_up_time, f"{key}.min_up_time"),
        min_down_time=_time(s.min_down_time, f"{key}.min_down_time"),
        max_starts_per_day=starts,
        initial_running=None if s.initial_state is None else s.initial_state == "running",
        hours_in_state=_time(s.hours_in_state, f"{key}.hours_in_state"))
