"""Vendor curves given as pressure ratio or discharge pressure against flow, turned into head.

Many vendor sheets plot discharge pressure (or pressure ratio) against inlet flow at a stated
test gas and inlet state, not head. Head is what the fan laws and Mach similarity carry to
other conditions, so each point is converted, at the test conditions, with the gas model of
:mod:`trainopt.physics.compression`: the isentropic head ``h(p2, s1) - h1`` (no efficiency
needed), or the polytropic head by Schultz's method at the point's polytropic efficiency
(Schultz, J. M. (1962), J. Eng. Power 84(1):69-82; as in ASME PTC 10-1997). The conversion
is kept per point and shown in the fit report.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from trainopt.errors import InputError
from trainopt.physics.compression import HeadBasis, compress

PRESSURE_COLUMNS = ("pressure_ratio", "discharge_pressure")
"""Table columns that may stand in for ``head`` [-], [Pa absolute]."""


def heads_from_pressures(
    points: pd.DataFrame, column: str, conditions, basis: HeadBasis, path: str, header_line: int
) -> tuple[np.ndarray, pd.DataFrame, str]:
    """Convert each point's pressure ratio or discharge pressure to head on ``basis``.

    Parameters
    ----------
    points : pandas.DataFrame
        Points with ``column`` (pressure ratio [-] or absolute discharge pressure [Pa]),
        ``efficiency`` [-] (NaN where not given) and ``line`` (CSV line number).
    column : str
        ``"pressure_ratio"`` or ``"discharge_pressure"``.
    conditions : TestConditions
        The test gas (composition as mole fractions) and inlet state.
    basis : HeadBasis
        Basis of the map's head and efficiency.
    path : str
        The CSV file, for messages.
    header_line : int
        Line of the header, for messages.

    Returns
    -------
    head : numpy.ndarray
        Head [J/kg] per point.
    conversion : pandas.DataFrame
        Per point: ``line``, ``speed`` [1/s], ``flow`` [m³/s], ``pressure_ratio`` [-],
        ``discharge_pressure`` [Pa], ``head`` [J/kg].
    note : str
        One line saying what was converted, at which conditions and how.

    Raises
    ------
    InputError
        If the test gas composition or inlet state is missing, a ratio is not above 1,
        or a polytropic map lacks a point's efficiency.
    """
    from trainopt.physics.gas import Gas

    where = f"{path}:{header_line}:{column}"
    fix = (
        "give test_conditions in the map's YAML: gas (mole fractions), suction_pressure and "
        "suction_temperature of the test"
    )
    if conditions.suction_pressure is None or conditions.suction_temperature is None:
        raise InputError(
            where,
            f"a curve of {column.replace('_', ' ')} needs the test's inlet "
            "state to be turned into head",
            fix,
        )
    if not isinstance(conditions.gas, dict):
        raise InputError(
            where,
            f"a curve of {column.replace('_', ' ')} needs the test gas "
            "composition to be turned into head",
            fix,
        )
    gas = Gas.from_composition(conditions.gas, field_name=f"{path}: test_conditions.gas")
    p1, t1 = conditions.suction_pressure, conditions.suction_temperature
    given = points[column].to_numpy(dtype=float)
    p2 = given * p1 if column == "pressure_ratio" else given
    heads = np.empty(len(points))
    for i, (_, row) in enumerate(points.iterrows()):
        if not p2[i] > p1:
            raise InputError(
                f"{path}:{int(row.line)}:{column}",
                f"discharge pressure {p2[i] / 1e5:.4g} bar is not above the test's suction "
                f"pressure {p1 / 1e5:.4g} bar",
                "check the column's unit (absolute pressure) and the test conditions",
            )
        eta = row.efficiency
        if basis is HeadBasis.POLYTROPIC and not np.isfinite(eta):
            raise InputError(
                f"{path}:{int(row.line)}:efficiency",
                "a polytropic head from a pressure needs the point's efficiency",
                "give the efficiency on every point, or use an isentropic map",
            )
        c = compress(gas, p1, t1, float(p2[i]), float(eta) if np.isfinite(eta) else 0.8, basis)
        heads[i] = c.polytropic_head if basis is HeadBasis.POLYTROPIC else c.isentropic_head
    conversion = pd.DataFrame(
        {
            "line": points.line.to_numpy(),
            "speed": points.speed.to_numpy(),
            "flow": points.flow.to_numpy(),
            "pressure_ratio": p2 / p1,
            "discharge_pressure": p2,
            "head": heads,
        }
    )
    method = (
        "isentropic head h(p2, s1) - h1"
        if basis is HeadBasis.ISENTROPIC
        else "polytropic head by Schultz's method at each point's efficiency"
    )
    note = (
        f"Heads converted from {column.replace('_', ' ')} at the test conditions "
        f"(suction {p1 / 1e5:.4g} bar, {t1 - 273.15:.4g} degC, gas of molar mass "
        f"{1e3 * gas.molar_mass:.4g} g/mol, {gas.equation_of_state.name} (CoolProp)): {method}"
    )
    return heads, conversion, note
