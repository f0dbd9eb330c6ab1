"""Field-test reduction: head and efficiency from measured end states.

References: an independent Schultz computation straight on CoolProp's AbstractState (Schultz
1962; ASME PTC 10-1997 appendix G, equations written out again here); and, for a perfect
gas, the closed form ``eta_p = ((k - 1)/k) ln(p2/p1) / ln(T2/T1)`` (common practice, e.g.
Saravanamuttoo et al., Gas Turbine Theory, polytropic efficiency of compression, from memory)
on argon at low pressure, where k = 5/3. No published field-test worked example with its
inputs was found to check against.
"""

import math

import CoolProp.CoolProp as CP
import numpy as np
import pytest
from numpy.testing import assert_allclose

from trainopt.physics.compression import HeadBasis
from trainopt.physics.field_test import measured_compression, measured_compression_state
from trainopt.physics.gas import Gas
from trainopt.physics.gas_table import GasTable


def coolprop_schultz(names, fractions, p1, t1, p2, t2):
    """Schultz head and polytropic efficiency on CoolProp's own states (independent code)."""
    state = CP.AbstractState("HEOS", "&".join(names))
    state.set_mole_fractions(fractions)
    state.specify_phase(CP.iphase_gas)
    state.update(CP.PT_INPUTS, p1, t1)
    h1, s1, v1 = state.hmass(), state.smass(), 1 / state.rhomass()
    state.update(CP.PT_INPUTS, p2, t2)
    h2, v2 = state.hmass(), 1 / state.rhomass()
    # isentropic discharge: bisection on T at p2 for s = s1
    lo, hi = t1, t2 + 50
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        state.update(CP.PT_INPUTS, p2, mid)
        lo, hi = (mid, hi) if state.smass() < s1 else (lo, mid)
    state.update(CP.PT_INPUTS, p2, 0.5 * (lo + hi))
    h2s, v2s = state.hmass(), 1 / state.rhomass()
    ns = math.log(p2 / p1) / math.log(v1 / v2s)
    f = (h2s - h1) / (ns / (ns - 1) * (p2 * v2s - p1 * v1))
    n = math.log(p2 / p1) / math.log(v1 / v2)
    head = f * n / (n - 1) * (p2 * v2 - p1 * v1)
    return head, head / (h2 - h1)


@pytest.fixture(scope="module")
def lean_gas():
    # AGA Report No. 8 (1994) Gulf Coast gas, mole per cent (tests/conftest.py), trimmed to
    # its four largest components and renormalised to keep the independent code simple
    comp = {"methane": 96.5222, "ethane": 1.8186, "carbon dioxide": 0.5956, "propane": 0.4596}
    total = sum(comp.values())
    return {k: v / total for k, v in comp.items()}


def test_pipeline_point_matches_independent_coolprop(lean_gas):
    gas = Gas.from_composition(lean_gas)
    p1, t1, p2, t2 = 44e5, 295.15, 66e5, 333.0
    coolprop_names = {"methane": "Methane", "ethane": "Ethane", "carbon dioxide": "CO2",
                      "propane": "n-Propane"}
    expected = coolprop_schultz([coolprop_names[n] for n in lean_gas],
                                list(lean_gas.values()), p1, t1, p2, t2)
    head, eta = measured_compression_state(gas, p1, t1, p2, t2, HeadBasis.POLYTROPIC)
    # same equations on the same equation of state: agreement to the isentropic solve, 1e-7
    assert_allclose([head, eta], expected, rtol=1e-7)
    table = GasTable(gas, (40e5, 70e5), (285.0, 345.0))
    m = measured_compression(table, p1, t1, p2, t2, HeadBasis.POLYTROPIC)
    # the table's own accuracy is a few parts per million (trainopt.physics.gas_table notes)
    assert_allclose([float(m.head), float(m.efficiency)], expected, rtol=2e-5)
    assert 0.75 < eta < 0.85  # a plausible pipeline compressor point


def test_argon_matches_perfect_gas_closed_form():
    argon = Gas.from_composition({"argon": 1.0})
    p1, t1, p2, t2 = 1e5, 300.0, 3e5, 480.0
    k = 5.0 / 3.0
    closed = (k - 1) / k * math.log(p2 / p1) / math.log(t2 / t1)
    _, eta = measured_compression_state(argon, p1, t1, p2, t2, HeadBasis.POLYTROPIC)
    # argon at 1-3 bar departs from a perfect gas by about 1e-3 in Z: tolerance 3e-3
    assert_allclose(eta, closed, rtol=3e-3)


def test_no_temperature_rise_gives_nan(lean_gas):
    gas = Gas.from_composition(lean_gas)
    table = GasTable(gas, (40e5, 70e5), (285.0, 345.0))
    m = measured_compression(table, np.array([44e5, 44e5]), 295.0, 66e5,
                             np.array([290.0, 333.0]), HeadBasis.ISENTROPIC)
    assert np.isnan(m.efficiency[0])
    assert 0.7 < m.efficiency[1] < 0.85
