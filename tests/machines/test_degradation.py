"""Degraded maps: the definition of the factors (trainopt.machines.degradation notes).

Check values are the definition itself, ``H_worn(f_Q Q, N) = f_H H_new(Q, N)``, applied to the
invented demo map and to the published GasLib-135 fit (head-curve boundaries, CC BY 3.0,
tests/data/gaslib/README.md).
"""

from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from trainopt.errors import InputError
from trainopt.machines.degradation import Degradation, degraded_map
from trainopt.machines.maps import load_map
from trainopt.machines.maps.shape import check_map_shape

ROOT = Path(__file__).resolve().parents[2]
WEAR = Degradation(head_factor=0.95, efficiency_factor=0.97, flow_factor=1.03)


@pytest.fixture(scope="module", params=["cases/demo/maps/motor_unit.yaml",
                                        "tests/data/gaslib/gaslib135_coefficients.yaml"])
def as_new(request):
    return load_map(ROOT / request.param)


def test_worn_head_efficiency_and_boundaries_follow_the_definition(as_new):
    worn = degraded_map(as_new, WEAR)
    flows, speed = as_new.tested_grid(7, 9)
    # the definition; only rounding separates the two sides (1e-12 relative)
    assert_allclose(worn.head(1.03 * flows, speed, warn=False),
                    0.95 * as_new.head(flows, speed, warn=False), rtol=1e-12)
    assert_allclose(worn.efficiency(1.03 * flows, speed, warn=False),
                    0.97 * as_new.efficiency(flows, speed, warn=False), rtol=1e-12)
    speeds = speed[:, 0]
    for name in ("surge_flow_at_speed", "stonewall_flow_at_speed"):
        assert_allclose(getattr(worn, name)(speeds, warn=False),
                        1.03 * getattr(as_new, name)(speeds, warn=False), rtol=1e-9)
    assert worn.speed_range == as_new.speed_range
    check_map_shape(worn, "worn map")  # positive factors keep the map's shape


def test_as_new_factors_return_the_map_itself(as_new):
    assert degraded_map(as_new, Degradation()) is as_new


def test_factor_not_positive_is_refused():
    with pytest.raises(InputError, match="head_factor"):
        Degradation(head_factor=0.0)


def test_plausible_range_names_the_odd_factor():
    assert Degradation(0.65, 0.95).outside_plausible() == ["head_factor 0.650"]
    assert np.isclose(Degradation(0.9, 0.9).head_factor, 0.9)
    assert Degradation(0.9, 0.9).outside_plausible() == []
