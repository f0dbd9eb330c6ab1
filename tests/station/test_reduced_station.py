"""One reduction, many answers: ReducedStation gives trainopt.optimize's answers.

The reference is :func:`trainopt.optimize` itself, which reduces and builds its model
afresh for every question; the check is that keeping the reduction and a persistent HiGHS
model changes no answer. The demo station is the invented demo case (demo data).
"""

from __future__ import annotations

import numpy as np
import pytest

import trainopt
from trainopt.errors import InputError
from trainopt.station.reduced_station import ReducedStation

QUESTIONS = [  # (demand, offline, objective)
    ("30 MMSCMD", (), None),
    ("44 MMSCMD", (), None),
    (None, ("B",), None),
    ("38 MMSCMD", ("A", "D"), None),
    ("44 MMSCMD", ("C",), "energy_input"),
    ("12 MMSCMD", (), "cost"),
    ("44 MMSCMD", (), None),  # asked again after the others: the persistent model re-solved
]


@pytest.fixture(scope="module")
def reduced(demo_case):
    return ReducedStation(demo_case)


def _same(a, b):
    assert a.status == b.status
    if a.status != "optimal":
        assert a.reason == b.reason
        return
    ta, tb = a.units.set_index("name"), b.units.set_index("name")
    assert list(ta.index) == list(tb.index)
    assert list(ta["running"]) == list(tb["running"])
    # the same split up to the refinement's tolerance, the same objective to 1e-6
    np.testing.assert_allclose(ta["through_mass_flow_kg_s"], tb["through_mass_flow_kg_s"],
                               rtol=1e-4, atol=1e-4)
    assert a.objective_value() == pytest.approx(b.objective_value(), rel=1e-6)
    assert a.baselines.keys() == b.baselines.keys()


@pytest.mark.parametrize(("demand", "offline", "objective"), QUESTIONS)
def test_answers_equal_trainopt_optimize(demo_case, reduced, demand, offline, objective):
    ours = reduced.optimize(demand, offline=offline, objective=objective)
    reference = trainopt.optimize(demo_case, demand=demand, offline=offline, objective=objective)
    _same(ours, reference)


def test_units_are_reduced_once_across_offline_sets_and_objectives(demo_case):
    station = ReducedStation(demo_case)
    full = station.station()
    spare = station.station(offline=["B"], objective="cost")
    assert "B" not in spare.curves
    assert all(spare.curves[n] is full.curves[n] for n in spare.curves)
    assert station.dispatcher() is station.dispatcher(offline=[])
    assert station.dispatcher(offline=["B"]) is not station.dispatcher()


def test_unknown_unit_or_objective_is_refused_by_name(reduced):
    with pytest.raises(InputError, match="offline|Z"):
        reduced.optimize(offline=["Z"])
    with pytest.raises(InputError, match="objective"):
        reduced.optimize(objective="speed")


def test_units_kept_running_equal_a_case_that_marks_them_so(demo_case, reduced):
    # reference: trainopt.optimize on the case with D's status set to must_run
    from dataclasses import replace

    from trainopt.machines.train import UnitStatus

    marked = replace(demo_case, trains=tuple(
        replace(t, status=UnitStatus.MUST_RUN) if t.name == "D" else t
        for t in demo_case.trains))
    ours = reduced.optimize("30 MMSCMD", must_run=["D"])
    reference = trainopt.optimize(marked, demand="30 MMSCMD")
    _same(ours, reference)
    assert ours.units.set_index("name").loc["D", "running"]
    assert ours.units.set_index("name").loc["D", "status"] == "must_run"
    assert reduced.dispatcher(must_run=["D"]) is not reduced.dispatcher()
    with pytest.raises(InputError, match="must_run"):
        reduced.optimize(offline=["D"], must_run=["D"])
