"""The page's form: numbers and unit choices in, checked text with units out.

The page sends every field as a query parameter (``demand_value=40``,
``demand_unit=MMSCMD``, ``status_B=offline``, ``now_A=150``...). Only the names below are
read; a unit choice must be one the page offers; a number must be a finite number.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

from trainopt.case.loading import Case
from trainopt.errors import InputError
from trainopt.machines.train import UnitStatus
from trainopt.physics.units import parse_flow
from trainopt.station.reduced import OBJECTIVES
from trainopt.web.inputs import MAX_TEXT, Conditions, read_conditions

FLOW_UNITS = ("MMSCMD", "MMSCFD", "Sm3/h", "kg/s", "t/h")
PRESSURE_UNITS = ("bar", "barg", "kPa", "MPa", "psia", "psig")
TEMPERATURE_UNITS = ("degC", "degF", "K")
STATUSES = tuple(s.value for s in UnitStatus)
STATUS_WORDS = {"available": "free to start", "offline": "out of service",
                "must_run": "keep running"}
OBJECTIVE_WORDS = {"shaft_power": "least shaft power", "energy_input": "least fuel and power "
                   "drawn", "cost": "least cost"}
CONDITION_FIELDS = {"suction_pressure": PRESSURE_UNITS, "discharge_pressure": PRESSURE_UNITS,
                    "suction_temperature": TEMPERATURE_UNITS,
                    "ambient_temperature": TEMPERATURE_UNITS}


@dataclass
class PageForm:
    """What the page asked, as the user wrote it (to show again) and as checked text.

    Attributes
    ----------
    values : dict of str to str
        Every field as entered, for the form to show back.
    conditions : Conditions
    demand : str
        Throughput with its unit, e.g. ``"40 MMSCMD"``.
    flow_unit : str
        The unit the page shows flows in (the demand's).
    current : dict of str to str
        The split being run now (net flow with its unit per unit); empty if not given.
    """

    values: dict[str, str]
    conditions: Conditions
    demand: str
    flow_unit: str
    current: dict[str, str] = field(default_factory=dict)


def _number(text: str, name: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise InputError(name, f"'{text}' is not a number", "type digits, e.g. 40.5") from None
    if not math.isfinite(value):
        raise InputError(name, f"'{text}' is not a finite number", "type digits, e.g. 40.5")
    return value


def _choice(text: str, name: str, offered) -> str:
    if text not in offered:
        shown = text if len(text) <= MAX_TEXT else text[:MAX_TEXT] + "..."
        raise InputError(name, f"'{shown}' is not a unit offered here",
                         f"use one of {', '.join(offered)}")
    return text


def defaults(case: Case) -> dict[str, str]:
    """The form's fields filled with the case's own values (bar, degC, MMSCMD)."""
    values = {
        "demand_value": f"{per_unit(case, case.demand_mass_flow(), 'MMSCMD'):.3f}",
        "demand_unit": "MMSCMD",
        "suction_pressure_value": f"{case.suction_pressure / 1e5:.2f}",
        "suction_pressure_unit": "bar",
        "discharge_pressure_value": f"{case.discharge_pressure / 1e5:.2f}",
        "discharge_pressure_unit": "bar",
        "suction_temperature_value": f"{case.suction_temperature - 273.15:.1f}",
        "suction_temperature_unit": "degC",
        "ambient_temperature_value": f"{case.ambient_temperature - 273.15:.1f}",
        "ambient_temperature_unit": "degC",
        "objective": case.objective,
        "now_unit": "kg/s",
    }
    values.update({f"status_{t.name}": t.status.value for t in case.trains})
    return values


def per_unit(case: Case, mass_flow: float, unit: str) -> float:
    """A mass flow [kg/s] in a flow unit of :data:`FLOW_UNITS`, at the case's suction."""
    return mass_flow / case.demand_mass_flow(parse_flow(f"1 {unit}", "flow unit"))


def read_form(case: Case, query: Mapping[str, str]) -> PageForm:
    """Read the page's query parameters; a missing field keeps the case's value.

    Raises
    ------
    InputError
        Naming the field and the fix, for a bad number, an unoffered unit or an unknown
        status; the values read so far are kept on the error as ``values`` for the page.
    """
    values = defaults(case)
    names = set(values) | {f"now_{t.name}" for t in case.trains}
    values.update({k: v.strip() for k, v in query.items() if k in names})
    try:
        return _checked(case, values)
    except InputError as exc:
        exc.values = values
        raise


def _checked(case: Case, values: dict[str, str]) -> PageForm:
    for key, text in values.items():
        if len(text) > MAX_TEXT:
            raise InputError(key, f"is {len(text)} characters long", f"give at most {MAX_TEXT}")
    flow_unit = _choice(values["demand_unit"], "demand_unit", FLOW_UNITS)
    demand = _number(values["demand_value"], "demand_value")
    texts = {}
    for name, offered in CONDITION_FIELDS.items():
        number = _number(values[f"{name}_value"], f"{name}_value")
        texts[name] = f"{number!r} {_choice(values[f'{name}_unit'], f'{name}_unit', offered)}"
    lists: dict[str, list[str]] = {s: [] for s in STATUSES}
    for t in case.trains:
        status = values[f"status_{t.name}"]
        if status not in STATUSES:
            raise InputError(f"status_{t.name}", f"'{status[:MAX_TEXT]}' is not a status",
                             f"use one of {', '.join(STATUSES)}")
        lists[status].append(t.name)
    objective = values["objective"]
    if objective not in OBJECTIVES:
        raise InputError("objective", f"'{objective[:MAX_TEXT]}' is not an objective",
                         f"use one of {', '.join(OBJECTIVES)}")
    conditions = read_conditions(case, offline=lists["offline"], must_run=lists["must_run"],
                                 available=lists["available"], objective=objective, **texts)
    now_unit = _choice(values["now_unit"], "now_unit", FLOW_UNITS)
    current = {}
    for t in case.trains:
        text = values.get(f"now_{t.name}", "")
        number = _number(text, f"now_{t.name}") if text else 0.0
        if number != 0.0:  # blank or zero: the unit is stopped
            current[t.name] = f"{number!r} {now_unit}"
    return PageForm(values, conditions, f"{demand!r} {flow_unit}", flow_unit, current)
