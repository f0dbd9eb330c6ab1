"""The duty's table against the direct computation, between its grid points.

The reference is :func:`trainopt.physics.compression.compress` on CoolProp states (HEOS,
GERG-2008 parameters) of the lean "Gulf Coast" gas of AGA Report No. 8 (1994); compress
itself is checked against published examples in ``test_compression.py``. The efficiencies
are chosen between the table's grid points (0.30 to 0.98 in steps of 0.04), where
interpolation errs most. The bounds are those stated in :mod:`trainopt.physics.duty`.
"""

from __future__ import annotations

import numpy as np
import pytest

from trainopt.physics.compression import HeadBasis, compress
from trainopt.physics.duty import Duty

CONDITIONS = [(5.0e6, 288.15, 6.8e6), (3.0e6, 300.0, 9.0e6), (5.0e6, 290.0, 5.3e6)]
"""Suction pressure [Pa], suction temperature [K], discharge pressure [Pa]: ratio 1.36, 3, 1.06."""

OFF_GRID = np.array([0.6137, 0.7071, 0.7793, 0.8519, 0.9013])


@pytest.mark.parametrize("basis", list(HeadBasis))
@pytest.mark.parametrize(("p1", "t1", "p2"), CONDITIONS)
def test_table_equals_direct_computation_between_grid_points(aga8_gulf_coast_gas, basis,
                                                              p1, t1, p2):
    duty = Duty.build(aga8_gulf_coast_gas, p1, t1, p2, basis)
    for eta in OFF_GRID:
        c = compress(aga8_gulf_coast_gas, p1, t1, p2, float(eta), basis)
        t = duty.compression(float(eta))
        assert t.polytropic_head == pytest.approx(c.polytropic_head, rel=2e-7)
        assert t.isentropic_head == pytest.approx(c.isentropic_head, rel=2e-7)
        assert t.polytropic_efficiency == pytest.approx(c.polytropic_efficiency, rel=2e-7)
        assert t.isentropic_efficiency == pytest.approx(c.isentropic_efficiency, rel=2e-7)
        assert t.discharge_temperature == pytest.approx(c.discharge.temperature, abs=5e-4)
        basis_head = c.polytropic_head if basis is HeadBasis.POLYTROPIC else c.isentropic_head
        assert duty.head(float(eta)) == pytest.approx(basis_head, rel=2e-7)
        assert duty.specific_work(float(eta)) == pytest.approx(c.specific_work, rel=2e-7)


def test_arrays_give_what_scalars_give(aga8_gulf_coast_gas):
    duty = Duty.build(aga8_gulf_coast_gas, 5.0e6, 288.15, 6.8e6, HeadBasis.POLYTROPIC)
    heads = duty.head(OFF_GRID)
    temps = duty.discharge_temperature(OFF_GRID)
    assert heads.shape == temps.shape == OFF_GRID.shape
    assert [duty.head(float(e)) for e in OFF_GRID] == heads.tolist()
    assert isinstance(duty.head(0.8), float)
