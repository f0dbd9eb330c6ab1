"""What a web request may ask: today's conditions and unit statuses, read and checked.

Every value arrives as text with its unit (``"44 bar"``, ``"22 degC"``), is bounded in
length, and is converted once to SI here with the same parsers as case files; unit names
must be the case's. Nothing in a request names a file, a path or code.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, replace

from trainopt.case.loading import Case
from trainopt.errors import InputError
from trainopt.machines.train import UnitStatus
from trainopt.physics.units import Kind, parse_quantity
from trainopt.station.reduced import chosen_objective

MAX_TEXT = 40
"""Longest value text a request may send, such as ``"44 bar"`` [characters]."""

MAX_UNITS = 64
"""Most unit names one request may list [-]."""


@dataclass(frozen=True)
class Conditions:
    """The conditions and statuses a station is reduced at; hashable, so a cache key.

    Attributes
    ----------
    suction_pressure, discharge_pressure : float
        Header pressures [Pa].
    suction_temperature, ambient_temperature : float
        [K].
    statuses : tuple of (str, str)
        Unit name and status value (``available``, ``offline``, ``must_run``), case order.
    objective : str
    """

    suction_pressure: float
    discharge_pressure: float
    suction_temperature: float
    ambient_temperature: float
    statuses: tuple[tuple[str, str], ...]
    objective: str

    def offline(self) -> list[str]:
        """The units out of service."""
        return [n for n, s in self.statuses if s == UnitStatus.OFFLINE.value]


def bounded_text(value: str | None, field: str) -> str | None:
    """A request's text value, refused when longer than :data:`MAX_TEXT`."""
    if value is None:
        return None
    if len(value) > MAX_TEXT:
        raise InputError(field, f"is {len(value)} characters long",
                         f"give at most {MAX_TEXT}, e.g. '44 bar'")
    return value.strip()


def _names(case: Case, names: Iterable[str], field: str) -> list[str]:
    names = list(names)
    if len(names) > MAX_UNITS:
        raise InputError(field, f"lists {len(names)} units", f"list at most {MAX_UNITS}")
    for name in names:
        case.train(name)  # refuses an unknown name as the command line does
    return names


def read_conditions(case: Case, *, suction_pressure: str | None = None,
                    discharge_pressure: str | None = None,
                    suction_temperature: str | None = None,
                    ambient_temperature: str | None = None, offline: Iterable[str] = (),
                    must_run: Iterable[str] = (), available: Iterable[str] = (),
                    objective: str | None = None) -> Conditions:
    """Read a request's conditions; the case's value stands for each one not given.

    Parameters
    ----------
    case : Case
    suction_pressure, discharge_pressure : str, optional
        With a unit (``"44 bar"``, ``"600 psig"``); gauge pressures use the case's site.
    suction_temperature, ambient_temperature : str, optional
        With a unit (``"22 degC"``).
    offline, must_run, available : iterable of str
        Unit names given that status; others keep the case's.
    objective : str, optional
        ``shaft_power``, ``energy_input`` or ``cost``.

    Returns
    -------
    Conditions
    """
    atm = case.atmospheric_pressure

    def pressure(text, field, default):
        text = bounded_text(text, field)
        return default if not text else parse_quantity(text, Kind.PRESSURE, field,
                                                        atmospheric=atm)

    def temperature(text, field, default):
        text = bounded_text(text, field)
        return default if not text else parse_quantity(text, Kind.TEMPERATURE, field)

    p1 = pressure(suction_pressure, "suction_pressure", case.suction_pressure)
    p2 = pressure(discharge_pressure, "discharge_pressure", case.discharge_pressure)
    if not p2 > p1:
        raise InputError("discharge_pressure", f"{p2 / 1e3:.0f} kPa is not above the suction "
                         f"pressure {p1 / 1e3:.0f} kPa", "give a discharge pressure above suction")
    t1 = temperature(suction_temperature, "suction_temperature", case.suction_temperature)
    t_amb = temperature(ambient_temperature, "ambient_temperature", case.ambient_temperature)
    chosen = {}
    for status, names in ((UnitStatus.OFFLINE, offline), (UnitStatus.MUST_RUN, must_run),
                          (UnitStatus.AVAILABLE, available)):
        for name in _names(case, names, status.value):
            if name in chosen and chosen[name] is not status:
                raise InputError(status.value, f"unit '{name}' is also given as "
                                 f"{chosen[name].value}", "give each unit one status")
            chosen[name] = status
    statuses = tuple((t.name, chosen.get(t.name, t.status).value) for t in case.trains)
    objective = chosen_objective(case, bounded_text(objective, "objective") or None)
    return Conditions(p1, p2, t1, t_amb, statuses, objective)


def case_at(case: Case, conditions: Conditions) -> Case:
    """The case with the request's conditions and unit statuses in place of its own."""
    status = dict(conditions.statuses)
    trains = tuple(t if t.status.value == status[t.name] else
                   replace(t, status=UnitStatus(status[t.name])) for t in case.trains)
    return replace(case, suction_pressure=conditions.suction_pressure,
                   discharge_pressure=conditions.discharge_pressure,
                   suction_temperature=conditions.suction_temperature,
                   ambient_temperature=conditions.ambient_temperature, trains=trains)
