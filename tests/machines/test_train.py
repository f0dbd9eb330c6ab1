"""Tests of trainopt.machines.train: trains, sections, coolers and the API 617 speed limits."""

from pathlib import Path

import pytest
from numpy.testing import assert_allclose

from trainopt.errors import InputError
from trainopt.machines.drivers import driver_from_dict
from trainopt.machines.maps import load_map
from trainopt.machines.train import (
    Cooler,
    Section,
    Train,
    speed_limits_from_rated,
)

DEMO_MAP = Path(__file__).parents[2] / "cases" / "demo" / "maps" / "motor_unit.yaml"


@pytest.fixture(scope="module")
def demo_map():
    return load_map(DEMO_MAP)


@pytest.fixture(scope="module")
def motor():
    return driver_from_dict({"kind": "variable_speed_motor", "rated_power": "10 MW",
                             "driver_speed_min": "7500 rpm", "driver_speed_max": "11000 rpm"},
                            "units.A.driver")


def test_api617_maximum_continuous_and_trip_speed():
    # API 617 (8th ed., 2014) definitions as commonly quoted (common practice): maximum
    # continuous speed = 105 % of rated speed; trip speed = 110 % of maximum continuous speed.
    mcs, trip = speed_limits_from_rated(10_000 / 60)
    assert mcs * 60 == pytest.approx(10_500, rel=1e-12)
    assert trip * 60 == pytest.approx(11_550, rel=1e-12)


def test_default_surge_control_offset_is_ten_percent_of_surge_flow(demo_map):
    # 10 % of surge flow at the same head: common practice for the control line offset. A
    # section given no offset must draw its control line there.
    section = Section("A", demo_map)
    speed = 0.5 * (demo_map.speed_min + demo_map.speed_max)
    head = demo_map.head(demo_map.surge_flow_at_speed(speed), speed)
    surge = float(demo_map.surge_flow_at_head(head))
    assert surge > 0.0  # a real point on the tested map (NaN would fail here)
    assert_allclose(demo_map.control_line_flow_at_head(head, section.surge_control_offset),
                    1.10 * surge, rtol=1e-12)


def test_single_section_train_is_a_plain_unit(demo_map, motor):
    train = Train("A", (Section("A", demo_map),), motor, 125.0, 175.0)
    assert train.is_single_section
    assert train.sections[0].surge_control_offset == 0.10


def test_train_with_no_sections_is_refused(motor):
    with pytest.raises(InputError, match="units.T.sections: a train needs at least one section"):
        Train("T", (), motor, 125.0, 175.0)


def test_speed_ratio_of_zero_is_refused(demo_map):
    with pytest.raises(InputError, match="speed_ratio: 0 is not a positive ratio"):
        Section("LP", demo_map, speed_ratio=0.0)


def test_minimum_speed_above_maximum_is_refused(demo_map, motor):
    with pytest.raises(InputError, match="minimum speed 10800 rpm is not below maximum 9000"):
        Train("A", (Section("A", demo_map),), motor, 180.0, 150.0)


def test_cooler_with_negative_pressure_drop_is_refused():
    with pytest.raises(InputError, match="cooler.pressure_drop"):
        Cooler(outlet_temperature=313.15, pressure_drop=-1e4)


def test_repeated_section_names_are_refused(demo_map, motor):
    with pytest.raises(InputError, match="section names repeat"):
        Train("T", (Section("S", demo_map), Section("S", demo_map)), motor, 125.0, 175.0)
