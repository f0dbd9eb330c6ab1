"""Start-stop rules of a case's units: units converted, bad values refused by name.

References: hours and minutes to seconds, GJ to J (SI definitions, common practice).
"""

import pytest

from trainopt.case.schema import CommitmentSchema
from trainopt.case.unit_rules import UnitRules, unit_rules
from trainopt.errors import InputError


def test_rules_convert_to_si():
    r = unit_rules(CommitmentSchema(start_cost="1500 USD", start_fuel="40 GJ",
                                    cold_start_cost=2500, cold_after="8 h", stop_cost=200,
                                    startup_time="30 min", min_up_time="6 h",
                                    min_down_time="4 h", max_starts_per_day=2,
                                    initial_state="stopped", hours_in_state="3 h"),
                   "units[0].commitment", "USD")
    assert r == UnitRules(start_cost=1500.0, start_fuel=40e9, cold_start_cost=2500.0,
                          cold_after=8 * 3600.0, stop_cost=200.0, startup_time=1800.0,
                          min_up_time=6 * 3600.0, min_down_time=4 * 3600.0,
                          max_starts_per_day=2, initial_running=False,
                          hours_in_state=3 * 3600.0)


def test_defaults_are_no_rule():
    r = unit_rules(CommitmentSchema(), "k", "USD")
    assert r.start_cost == 0.0
    assert r.min_up_time == 0.0
    assert r.max_starts_per_day is None
    assert r.initial_running is None


@pytest.mark.parametrize(("field", "value", "message"), [
    ("start_cost", "1500 EUR", "k.start_cost: '1500 EUR' is in EUR, the case's currency is USD"),
    ("min_up_time", "6", "k.min_up_time: cannot read '6'"),
    ("startup_time", 5, "k.startup_time: the bare number 5 has no unit"),
    ("stop_cost", -3, "k.stop_cost: -3 is negative"),
    ("max_starts_per_day", -1, "k.max_starts_per_day: -1 is negative"),
    ("cold_after", "8 h", "k.cold_start_cost: cold_start_cost and cold_after go together"),
])
def test_bad_rules_refused_by_name(field, value, message):
    with pytest.raises(InputError) as err:
        unit_rules(CommitmentSchema(**{field: value}), "k", "USD")
    assert str(err.value).startswith(message)
