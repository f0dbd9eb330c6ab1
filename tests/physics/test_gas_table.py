"""The gas table: compression on tabulated states against CoolProp states, point by point.

Reference: :func:`trainopt.physics.compression.compress` and ``compress_to_head``, which evaluate
CoolProp (GERG-2008 parameters) directly at every state; the table must reproduce them,
so the figures below are the interpolation error of the table: regression values (own output).
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from trainopt.errors import InputError
from trainopt.physics.compression import HeadBasis, compress, compress_to_head
from trainopt.physics.gas import Gas
from trainopt.physics.gas_table import GasTable


@pytest.fixture(scope="module")
def pipeline_table(aga8_gulf_coast_gas):
    """AGA 8 Gulf Coast gas from 20 to 150 bar, -5 to 230 degC (default grid)."""
    return GasTable(aga8_gulf_coast_gas, (20e5, 150e5), (268.0, 503.0))


@pytest.fixture(scope="module")
def random_duties():
    rng = np.random.default_rng(20240611)
    n = 14
    p1 = rng.uniform(25e5, 60e5, n)
    return p1, rng.uniform(280.0, 320.0, n), p1 * rng.uniform(1.15, 2.0, n), rng.uniform(
        0.6, 0.9, n)


@pytest.mark.parametrize("basis", list(HeadBasis))
def test_compress_matches_coolprop_states(pipeline_table, aga8_gulf_coast_gas, random_duties,
                                          basis):
    p1, t1, p2, eta = random_duties
    table = pipeline_table.compress(p1, t1, p2, eta, basis)
    for i in range(p1.size):
        exact = compress(aga8_gulf_coast_gas, p1[i], t1[i], p2[i], eta[i], basis)
        head = exact.polytropic_head if basis is HeadBasis.POLYTROPIC else exact.isentropic_head
        # 1e-5: the table error here (regression value, own output) is 3.3e-6 (bicubic in ln p and
        # T, 16 points over 20-150 bar and 10 K steps), three times below.
        assert_allclose(table.head[i], head, rtol=1e-5)
        assert_allclose(table.specific_work[i], exact.specific_work, rtol=1e-5)
        # 2 mK: the error is 0.3 mK (regression value, own output).
        assert_allclose(table.discharge_temperature[i], exact.discharge.temperature, atol=2e-3)
        # Density at suction: 2.5e-6 relative (regression value, own output).
        assert_allclose(table.suction_density[i], exact.suction.density, rtol=1e-5)


@pytest.mark.parametrize("basis", list(HeadBasis))
def test_compress_to_head_inverts_compress(pipeline_table, random_duties, basis):
    p1, t1, p2, eta = random_duties
    forward = pipeline_table.compress(p1, t1, p2, eta, basis)
    back = pipeline_table.compress_to_head(p1, t1, forward.head, eta, basis)
    # Both sides use the same table: the inverse solves to 1e-10 in ln p2.
    assert_allclose(back.discharge_pressure, p2, rtol=1e-9)
    assert_allclose(back.discharge_temperature, forward.discharge_temperature, atol=1e-6)


def test_compress_to_head_matches_coolprop_inverse(pipeline_table, aga8_gulf_coast_gas):
    # trainopt.physics.compression.compress_to_head solves on CoolProp states (about 25 ms a call).
    exact = compress_to_head(aga8_gulf_coast_gas, 40e5, 295.0, 60e3, 0.8)
    table = pipeline_table.compress_to_head(40e5, 295.0, 60e3, 0.8, HeadBasis.POLYTROPIC)
    # 1e-5 relative: a head error of 2e-6 moves ln p2 by about 2e-6 / (n/(n-1)) at most.
    assert_allclose(table.discharge_pressure, exact.discharge.pressure, rtol=1e-5)
    assert_allclose(table.discharge_temperature, exact.discharge.temperature, atol=2e-3)


def test_outside_the_table_is_nan_or_above(pipeline_table):
    c = pipeline_table.compress(10e5, 300.0, 30e5, 0.8, HeadBasis.POLYTROPIC)
    assert np.isnan(c.head)
    up = pipeline_table.compress_to_head(100e5, 300.0, [400e3, 20e3, -1.0], 0.8,
                                         HeadBasis.POLYTROPIC)
    assert np.isposinf(up.discharge_pressure[0])  # beyond 150 bar
    assert 100e5 < up.discharge_pressure[1] < 150e5
    assert up.discharge_pressure[2] == 100e5  # no head, no pressure rise
    assert np.isnan(pipeline_table.density(30e5, 600.0))


def test_nitrogen_head_near_ideal_gas_formula():
    # Ideal gas, constant k: H_p = n/(n-1) R T1 (r^((n-1)/n) - 1), (n-1)/n = (k-1)/(k eta)
    # (polytropic head of a perfect gas; e.g. ASME PTC 10-1997 section 5, common practice).
    # Nitrogen at 1-3 bar is ideal to 0.1 %: R = 296.80 J/(kg K) (8.314462618/0.0280134),
    # k = 1.40 near 300 K (from memory; CoolProp gives 1.401).
    table = GasTable(Gas.from_composition({"nitrogen": 1.0}), (0.5e5, 10e5), (250.0, 600.0))
    sigma = 0.40 / (1.40 * 0.80)
    ideal = 296.80 * 300.0 / sigma * (3.0**sigma - 1.0)
    head = table.compress(1e5, 300.0, 3e5, 0.80, HeadBasis.POLYTROPIC).head
    # 0.5 %: cp of nitrogen rises by about 1 % between 300 and 440 K.
    assert_allclose(head, ideal, rtol=5e-3)


def test_empty_ranges_are_refused(aga8_gulf_coast_gas):
    with pytest.raises(InputError, match="pressure range"):
        GasTable(aga8_gulf_coast_gas, (50e5, 20e5), (280.0, 400.0))
    with pytest.raises(InputError, match="temperature range"):
        GasTable(aga8_gulf_coast_gas, (20e5, 50e5), (400.0, 280.0))
