"""Measured performance points of each unit from its history, field-test style.

For each unit and history row: the through-flow, the measured head and efficiency from the
suction and discharge pressures and temperatures on the real gas
(:func:`~trainopt.physics.field_test.measured_compression`, ASME PTC 10 approach: efficiency
from the temperature rise, not from power), and the as-new map's head and efficiency at the
same speed and flow, corrected to the row's gas and inlet state by Mach-number similarity
(:meth:`~trainopt.machines.maps.CompressorMap.mach_similar`, evaluated row by row as
``H = H_test(s Q, s N) / s²``, ``eta = eta_test(s Q, s N)``, ``s = a_test / a``).

Only steady rows are kept (:mod:`~trainopt.studies.steady_windows`); every row left out is
counted under its first reason, per unit.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
from scipy.interpolate import RegularGridInterpolator

from trainopt.errors import InputError
from trainopt.physics.field_test import measured_compression
from trainopt.physics.gas_table import GasTable
from trainopt.studies.history_reader import History, mass_flow
from trainopt.studies.steady_windows import SteadyBands, unsteady_reasons

EFFICIENCY_PLAUSIBLE = (0.3, 1.0)
"""Measured efficiencies outside this range [-] come from a sensor, not the machine."""

SPEED_SLACK = 0.02
"""Rows beyond the map's tested speeds by more than this fraction are left out [-]
(extrapolation refused); those within it are kept and flagged."""


@dataclass
class FieldPoints:
    """Measured points of every unit and the rows left out.

    Attributes
    ----------
    points : pandas.DataFrame
        One row per unit and steady history row: ``unit``, ``time``, ``suction_pressure``,
        ``discharge_pressure`` [Pa], ``suction_temperature``, ``discharge_temperature`` [K],
        ``mass_flow`` [kg/s], ``volume_flow`` [m³/s], ``speed`` [1/s], ``head`` [J/kg],
        ``efficiency`` [-], ``sound_speed_ratio`` s [-], ``map_head`` [J/kg],
        ``map_efficiency`` [-] (as-new, Mach-corrected), ``gas_power`` [W] (mass flow
        times the enthalpy rise), ``measured_power`` [W] (NaN where not recorded).
    excluded : pandas.DataFrame
        ``unit``, ``reason``, ``rows``.
    notes : dict of str to list of str
        Per unit: assumptions and flags (Mach correction used or not, speed range).
    """

    points: pd.DataFrame
    excluded: pd.DataFrame
    notes: dict[str, list[str]] = field(default_factory=dict)


def _test_sound_speed(case, unit_index: int, row_gas) -> tuple[float | None, str]:
    """Inlet sound speed of the map's test [m/s], or None, and a note saying how."""
    from trainopt.case.gas_file import read_yaml
    from trainopt.machines.maps.table import read_map_source
    from trainopt.physics.gas import Gas

    raw = read_yaml(case.path)["units"][unit_index]
    if raw.get("map") is None:
        return None, "no Mach correction (a train of sections)"
    source = read_map_source(Path(case.path).parent / raw["map"])
    tc = getattr(source, "test_conditions", None)
    if tc is None or tc.suction_pressure is None or tc.suction_temperature is None:
        return None, "no Mach correction: the map states no test suction pressure and " \
                     "temperature"
    if isinstance(tc.gas, dict):
        gas, how = Gas.from_composition(tc.gas, case.gas.equation_of_state), "its test gas"
    else:
        gas, how = row_gas, "the case gas (the map names its test gas only in words)"
    a = gas.state(tc.suction_pressure, tc.suction_temperature).speed_of_sound
    return a, (f"Mach-number similarity to the map's test state {tc.suction_pressure / 1e5:.1f}"
               f" bar, {tc.suction_temperature - 273.15:.1f} degC, with {how}")


def _sound_speed(gas, p, t) -> np.ndarray:
    """Inlet sound speed [m/s] at the rows, bilinear on a 5 x 5 grid of CoolProp states."""
    ps = np.linspace(np.nanmin(p) * 0.999, np.nanmax(p) * 1.001, 5)
    ts = np.linspace(np.nanmin(t) - 0.1, np.nanmax(t) + 0.1, 5)
    grid = np.array([[gas.state(float(x), float(y)).speed_of_sound for y in ts] for x in ps])
    return RegularGridInterpolator((ps, ts), grid)(np.column_stack([p, t]))


def _gases(case, history: History) -> dict:
    from trainopt.case.gas_file import load_gas
    from trainopt.physics.gas import Gas

    eos = case.gas.equation_of_state
    out = {}
    for label, value in history.gases.items():
        if isinstance(value, str) and value == "case":
            out[label] = case.gas
        elif isinstance(value, dict):
            out[label] = Gas.from_composition(value, eos,
                                              f"station.gas.compositions.{label}")
        else:
            out[label] = load_gas(value, eos)
    return out


def _state_columns(frame: pd.DataFrame, unit: str) -> dict[str, np.ndarray]:
    out = {}
    for name in ("suction_pressure", "suction_temperature", "discharge_pressure"):
        own = f"{unit}.{name}"
        out[name] = (frame[own] if own in frame else frame[name]).to_numpy(float)
    out["discharge_temperature"] = frame[f"{unit}.discharge_temperature"].to_numpy(float)
    return out


def field_points(case, history: History, bands: SteadyBands | None = None) -> FieldPoints:
    """Measured and map performance of every unit at its steady history rows.

    Parameters
    ----------
    case : Case
        The station with its as-new maps (single-section units).
    history : History
        From :func:`~trainopt.studies.history_reader.read_history`; needs each unit's speed
        and discharge temperature columns.
    bands : SteadyBands, optional

    Returns
    -------
    FieldPoints

    Raises
    ------
    InputError
        A unit without a speed or discharge-temperature column; a unit whose measured
        efficiency lies outside 0.3 to 1 on most of its steady rows (the sensor named).
    """
    bands = bands or SteadyBands()
    frame = history.frame
    where = history.mapping.where
    gases = _gases(case, history)
    rows, excluded, notes = [], [], {}
    for index, train in enumerate(case.trains):
        u = train.name
        for column, what in (("speed", "speed"), ("discharge_temperature",
                                                  "discharge temperature")):
            if f"{u}.{column}" not in frame:
                raise InputError(f"{where}: units.{u}.{column}", "is missing",
                                 f"calibration needs each unit's {what}; map its column")
        if not train.is_single_section:
            excluded.append((u, "a train of sections (calibrated per single section only)",
                             len(frame)))
            continue
        section = train.sections[0]
        cmap = section.compressor_map
        s = _state_columns(frame, u)
        speed = frame[f"{u}.speed"].to_numpy(float) / section.speed_ratio
        reason = np.full(len(frame), "", dtype=object)

        def mark(mask, text, reason=reason):
            mask = np.asarray(mask, bool) & (reason == "")
            reason[mask] = text

        if f"{u}.available" in frame:
            mark(~frame[f"{u}.available"].to_numpy(bool), "unit not available")
        flow_raw = frame[f"{u}.flow"].to_numpy(float)
        mark(~(flow_raw > 0) & np.isfinite(flow_raw), "unit not running (no flow)")
        mark(np.isnan(speed), "speed missing")
        mark(~(speed > 0), "unit not running (no speed)")
        for name, value in s.items():
            mark(np.isnan(value), f"{name.replace('_', ' ')} missing")
        spec = history.mapping.units[u]
        if spec.recycle is None and f"{u}.valve" in frame:
            mark(frame[f"{u}.valve"].to_numpy(float) > bands.recycle_valve,
                 "recycle valve open, recycle flow unknown")
        mass = np.full(len(frame), np.nan)
        work = np.full(len(frame), np.nan)
        head, eta, rho1, ratio = (np.full(len(frame), np.nan) for _ in range(4))
        a_test, note = None, "no Mach correction"
        for label, gas in gases.items():
            sel = (frame["gas"].to_numpy() == label) & (reason == "")
            if not sel.any():
                continue
            if a_test is None:
                a_test, note = _test_sound_speed(case, index, gas)
            p_lo = 0.95 * np.nanmin(s["suction_pressure"][sel])
            p_hi = 1.05 * np.nanmax(s["discharge_pressure"][sel])
            t_lo = np.nanmin(s["suction_temperature"][sel]) - 5.0
            t_hi = np.nanmax(s["discharge_temperature"][sel]) + 5.0
            table = GasTable(gas, (p_lo, p_hi), (t_lo, max(t_hi, t_lo + 40.0)),
                             pressure_points=8)
            m = measured_compression(table, *(s[k][sel] for k in (
                "suction_pressure", "suction_temperature", "discharge_pressure",
                "discharge_temperature")), cmap.basis)
            head[sel], eta[sel], work[sel], rho1[sel] = (m.head, m.efficiency,
                                                         m.specific_work, m.suction_density)
            through = mass_flow(flow_raw[sel], history.flow_basis[f"{u}.flow"], gas,
                                rho1[sel])
            if spec.flow.measures == "net" and f"{u}.recycle" in frame:
                through = through + mass_flow(frame[f"{u}.recycle"].to_numpy(float)[sel],
                                              history.flow_basis[f"{u}.recycle"], gas,
                                              rho1[sel])
            mass[sel] = through
            ratio[sel] = 1.0 if a_test is None else a_test / _sound_speed(
                gas, s["suction_pressure"][sel], s["suction_temperature"][sel])
        notes[u] = [note]
        mark(np.isnan(eta), "states outside the gas model (check pressures and temperatures)")
        volume = mass / rho1
        n_test = speed * ratio
        lo, hi = cmap.speed_min * (1 - SPEED_SLACK), cmap.speed_max * (1 + SPEED_SLACK)
        mark((n_test < lo) | (n_test > hi), "outside the map's tested speed range "
             "(extrapolation refused)")
        steady = unsteady_reasons(
            pd.DataFrame({"speed": speed, "flow": flow_raw, **s}, index=frame.index),
            {"speed": "speed", "flow": "flow", "suction_pressure": "pressure",
             "discharge_pressure": "pressure", "suction_temperature": "temperature",
             "discharge_temperature": "temperature"}, bands, history.interval)
        reason[(reason == "") & (steady != "")] = steady[(reason == "") & (steady != "")]
        keep = reason == ""
        high, low = eta > EFFICIENCY_PLAUSIBLE[1], eta < EFFICIENCY_PLAUSIBLE[0]
        if keep.sum() >= 5 and (high[keep] | low[keep]).mean() > 0.5:
            side = "above 1" if high[keep].sum() >= low[keep].sum() else "below 0.3"
            sensor = ("discharge temperature reads low or discharge pressure high"
                      if side == "above 1" else
                      "discharge temperature reads high or discharge pressure low")
            raise InputError(f"{where}: units.{u}.discharge_temperature",
                             f"the measured efficiency is {side} on "
                             f"{int((high | low)[keep].sum())} of {int(keep.sum())} steady rows "
                             f"(median {np.nanmedian(eta[keep]):.3f}): {sensor}",
                             "check the unit's temperature and pressure sensors and units")
        mark(high, "measured efficiency above 1 (temperature or pressure sensor)")
        mark(low, "measured efficiency below 0.3 (temperature or pressure sensor)")
        keep = reason == ""
        with np.errstate(invalid="ignore"):
            q_test, n_row = volume * ratio, speed * ratio
            outside = ~cmap.in_tested_range(q_test, n_row)
        flagged = int((outside & keep).sum())
        if flagged:
            notes[u].append(f"{flagged} steady rows lie outside the map's tested flow or "
                            "speed range (within 2 % of speed): evaluated by extrapolation")
        keep = reason == ""
        counts = pd.Series(reason[~keep]).value_counts()
        excluded += [(u, str(r), int(c)) for r, c in counts.items()]
        k = np.flatnonzero(keep)
        q, n, r = volume[k], speed[k], ratio[k]
        map_head = cmap.head(r * q, r * n, warn=False) / r**2
        map_eta = cmap.efficiency(r * q, r * n, warn=False)
        power = (frame[f"{u}.power"].to_numpy(float)[k] if f"{u}.power" in frame
                 else np.full(k.size, np.nan))
        rows.append(pd.DataFrame({
            "unit": u, "time": frame.index[k], **{name: v[k] for name, v in s.items()},
            "mass_flow": mass[k], "volume_flow": q, "speed": n, "head": head[k],
            "efficiency": eta[k], "sound_speed_ratio": r, "map_head": map_head,
            "map_efficiency": map_eta, "gas_power": mass[k] * work[k],
            "measured_power": power}))
    points = pd.concat(rows, ignore_index=True) if rows else pd.DataFrame()
    return FieldPoints(points, pd.DataFrame(excluded, columns=["unit", "reason", "rows"]),
                       notes)
