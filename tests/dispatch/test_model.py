"""Tests of trainopt.dispatch.model (curves, structure) and dispatch.piecewise (convexity).

The curves here are textbook functions (x², √x, cubics) whose convexity is known from
calculus; no invented station data is used.
"""

import numpy as np
import pyomo.environ as pyo
import pytest
from numpy.testing import assert_allclose

from trainopt.dispatch.model import (
    Formulation,
    UnitCurve,
    UnitStatus,
    build_model,
    check_curves,
    cost_scale_of,
)
from trainopt.dispatch.piecewise import convex_blocks, is_convex
from trainopt.errors import InputError

FLOW = np.linspace(10.0, 30.0, 11)


def square_curve(name="A", **kw):
    """x² is convex (second derivative 2 > 0, calculus)."""
    return UnitCurve(name, FLOW, 1e3 * FLOW**2, **kw)


def cubic_curve(name="B", **kw):
    """1e5 x + 50 (x - 20)³: concave below x = 20, convex above (second derivative 300 (x - 20))."""
    return UnitCurve(name, FLOW, 1e5 * FLOW + 50.0 * (FLOW - 20.0) ** 3, **kw)


# --- convexity -------------------------------------------------------------------------------

def test_is_convex_on_textbook_functions():
    x = np.linspace(1.0, 4.0, 13)
    assert is_convex(x, x**2) is True  # x²: convex (calculus)
    assert is_convex(x, np.exp(x)) is True  # eˣ: convex
    assert is_convex(x, np.sqrt(x)) is False  # √x: concave
    assert is_convex(x, 3.0 * x + 1.0) is True  # a line is convex (and concave)


def test_is_convex_tolerance_accepts_rounding_only():
    x = np.array([0.0, 1.0, 2.0])
    # slopes 1.0 then 1.0 - 1e-12: a fall of 1e-12 relative, inside the default 1e-9
    assert is_convex(x, np.array([0.0, 1.0, 2.0 - 1e-12])) is True
    # slopes 1.0 then 0.999: a fall of 1e-3 relative, a real concave kink
    assert is_convex(x, np.array([0.0, 1.0, 1.999])) is False
    assert is_convex(x, np.array([0.0, 1.0, 1.999]), rtol=1e-2) is True


def test_convex_blocks_split_at_concave_kinks():
    # slopes 1, 2 | 1, 2: one concave kink between segments 1 and 2
    assert convex_blocks([0.0, 1.0, 2.0, 3.0, 4.0], [0.0, 1.0, 3.0, 4.0, 6.0]) == [[0, 1], [2, 3]]
    # the cubic above: concave on [10, 20] (every kink there concave), convex on [20, 30]
    cubic = cubic_curve()
    blocks = convex_blocks(cubic.flow, cubic.cost)
    assert blocks == [[0], [1], [2], [3], [4, 5, 6, 7, 8, 9]]
    assert convex_blocks(FLOW, FLOW**2) == [list(range(10))]


# --- UnitCurve checks --------------------------------------------------------------------------

def test_unit_curve_converts_and_freezes():
    curve = UnitCurve("A", [1, 2, 3], [4, 5, 7], "must_run")
    assert curve.status is UnitStatus.MUST_RUN
    assert curve.flow.dtype == float
    assert (curve.flow_min, curve.flow_max) == (1.0, 3.0)
    assert curve.cost_at(2.5) == 6.0  # halfway between 5 and 7
    with pytest.raises(ValueError, match="read-only"):
        curve.flow[0] = 0.0


@pytest.mark.parametrize(("kwargs", "message"), [
    ({"flow": [1.0], "cost": [1.0]}, r"units\.U\.flow: has 1 breakpoint"),
    ({"flow": [1.0, 2.0], "cost": [1.0]}, r"units\.U\.cost: has 1 values for 2 flows"),
    ({"flow": [2.0, 1.0], "cost": [1.0, 2.0]}, "not strictly increasing at breakpoint 1"),
    ({"flow": [1.0, 1.0], "cost": [1.0, 2.0]}, "not strictly increasing"),
    ({"flow": [-1.0, 1.0], "cost": [1.0, 2.0]}, "starts at -1 kg/s"),
    ({"flow": [1.0, np.nan], "cost": [1.0, 2.0]}, "missing or infinite"),
    ({"flow": [1.0, 2.0], "cost": [1.0, np.inf]}, "missing or infinite"),
    ({"flow": "abc", "cost": [1.0, 2.0]}, "not a list of numbers"),
    ({"flow": [[1.0, 2.0]], "cost": [1.0, 2.0]}, r"has shape \(1, 2\)"),
    ({"flow": [1.0, 2.0], "cost": [1.0, 2.0], "largest_flow_limit": 3},
     r"units\.U\.largest_flow_limit: 3 is not a text"),
    ({"flow": [1.0, 2.0], "cost": [1.0, 2.0], "status": "spare"},
     "'spare' is not a status; use one of available, offline, must_run"),
])
def test_unit_curve_rejects_bad_fields(kwargs, message):
    with pytest.raises(InputError, match=message):
        UnitCurve("U", **kwargs)


def test_station_checks():
    with pytest.raises(InputError, match="no unit curve was given"):
        check_curves([])
    with pytest.raises(InputError, match="unit name.s. A repeat"):
        check_curves([square_curve("A"), square_curve("A")])
    with pytest.raises(InputError, match="group 'pair' but its curve or status differs"):
        check_curves([square_curve("A", group="pair"), cubic_curve("B", group="pair")])
    with pytest.raises(InputError, match="curve or status differs"):
        check_curves([square_curve("A", group="pair"),
                      square_curve("B", group="pair", status="must_run")])


# --- model structure ---------------------------------------------------------------------------

def test_model_components_have_predictable_names():
    m = build_model([square_curve("A"), cubic_curve("B")], 35.0, formulation="hybrid")
    for name in ("demand_balance", "net_flow_definition", "unit_flow_lower", "unit_flow_upper",
                 "recycle_upper", "hull_weight_sum", "hull_flow", "hull_cost", "segment_flow",
                 "segment_cost", "segment_fill_run", "segment_fill_order", "block_full_upper"):
        assert isinstance(getattr(m, name), pyo.Constraint), name
    assert set(m.unit_flow_upper.keys()) == {"A", "B"}
    assert list(m.HULL_UNITS) == ["A"]  # x² is convex: convex combination
    assert list(m.SEGMENT_UNITS) == ["B"]  # the cubic is not
    assert len(m.block_full) == 4  # its five blocks need four binaries
    assert m.demand.mutable
    assert pyo.value(m.demand) == 35.0
    assert isinstance(m.total_cost, pyo.Objective)


@pytest.mark.parametrize(("formulation", "binaries"), [
    (Formulation.AUTO, 4), (Formulation.HYBRID, 4), (Formulation.INCREMENTAL, 18),
])
def test_binary_counts_per_formulation(formulation, binaries):
    # textbook incremental: one binary per inner breakpoint, 9 per 11-point curve
    m = build_model([square_curve("A"), cubic_curve("B")], 35.0, formulation=formulation)
    assert len(m.block_full) == binaries


def test_auto_writes_every_curve_incrementally_by_blocks():
    m = build_model([square_curve("A"), cubic_curve("B")], 35.0)
    assert list(m.SEGMENT_UNITS) == ["A", "B"]
    assert list(m.HULL_UNITS) == []
    assert [k for k in m.block_full if k[0] == "A"] == []  # convex: one block, no binary


def test_convex_combination_refused_for_non_convex_curve():
    with pytest.raises(InputError, match="curve of B is not convex"):
        build_model([square_curve("A"), cubic_curve("B")], 35.0,
                    formulation=Formulation.CONVEX_COMBINATION)
    with pytest.raises(InputError, match="'fancy' is not a formulation"):
        build_model([square_curve("A")], 1.0, formulation="fancy")


def test_statuses_fix_the_run_binary():
    m = build_model([square_curve("A", status="offline"), square_curve("B", status="must_run"),
                     square_curve("C")], 20.0)
    assert m.run["A"].fixed
    assert m.run["A"].value == 0
    assert m.run["B"].fixed
    assert m.run["B"].value == 1
    assert not m.run["C"].fixed


def test_identical_units_are_ordered():
    m = build_model([square_curve(n, group="pair") for n in "ABC"], 20.0)
    assert list(m.GROUP_PAIRS) == [("A", "B"), ("B", "C")]
    assert set(m.group_run_order.keys()) == {("A", "B"), ("B", "C")}
    assert set(m.group_flow_order.keys()) == {("A", "B"), ("B", "C")}


@pytest.mark.parametrize(("demand", "message"), [
    (-1.0, "demand: -1 kg/s is negative"), (float("nan"), "demand: nan is not finite"),
    ("lots", "demand: 'lots' is not a number"),
])
def test_bad_demand(demand, message):
    with pytest.raises(InputError, match=message):
        build_model([square_curve()], demand)


def test_costs_are_scaled_to_order_one():
    curve = square_curve()  # costs up to 9e5
    assert cost_scale_of([curve]) == 1e6
    m = build_model([curve], 20.0)
    assert m.cost_scale == 1e6
    # last segment of 1e3 x² from 28 to 30: (9e5 - 7.84e5) / 1e6, exact to rounding
    assert_allclose(m.segment_rise["A", 9], 0.116, rtol=1e-12, err_msg="rounding only")
