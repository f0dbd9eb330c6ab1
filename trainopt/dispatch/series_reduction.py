"""Series trains reduced to one least-power curve, and reported section by section.

:class:`trainopt.station.reduced.Station` calls :func:`reduce_train` for every train of more
than one section and :func:`trainopt.station.result.unit_rows` calls :func:`section_rows` to
report one. The internal freedoms (the shaft speed of a one-shaft train; the interstage
pressure of separately driven sections) are solved in :mod:`trainopt.machines.train_operation`
for each through-flow, so a train enters the dispatch model as one curve of its
through-flow, like a single unit (these freedoms do not couple trains).

Recycle, simplified: each section of a train has its own recycle loop, but a train
enters the station model with one through-flow; when the net flow falls below the
train's least through-flow the whole train recycles as one (every section carries net
flow plus recycle). Opening only the loop of the section at its control line would take
less power, so the reported power at part load is an upper bound (docs/series.md).
"""

from __future__ import annotations

import math
import weakref
from dataclasses import replace

import numpy as np

from trainopt.dispatch.reduction import (
    DEFAULT_TOLERANCE,
    LIMIT_NAMES,
    LeastPowerCurve,
    _choose_breakpoints,
)
from trainopt.errors import InputError
from trainopt.machines.maps import stonewall_margin
from trainopt.machines.section_operation import section_basis
from trainopt.machines.train import Train
from trainopt.machines.train_operation import (
    TrainConditions,
    TrainPoints,
    after_cooler,
    gas_table_for,
    operate_train,
    shaft_speed_range,
)
from trainopt.physics.compression import compress

COARSE_FLOWS = 121
"""Through-flows scanned across the first section's map: the feasible range and the
sample the breakpoints are chosen from [-]."""

END_PASSES = 2
"""Passes of :data:`END_POINTS` flows that narrow each end of the feasible range [-]."""

END_POINTS = 17
"""Flows per end per pass (the end is located to 1/16 of the previous step) [-]."""

_CONDITIONS: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()
_GROUP_CURVES: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def train_conditions(station) -> TrainConditions:
    """The conditions a station's trains work against, with the gas table (cached).

    Parameters
    ----------
    station : trainopt.station.reduced.Station

    Returns
    -------
    TrainConditions
        The gas table spans the station's header pressures and every cooler outlet
        temperature of the case (see :func:`trainopt.machines.train_operation.gas_table_for`).
    """
    if station in _CONDITIONS:
        return _CONDITIONS[station]
    case = station.case
    temps = [case.suction_temperature]
    for t in case.trains:
        temps += [s.cooler.outlet_temperature for s in t.sections if s.cooler is not None]
    table = gas_table_for(case.gas, (case.suction_pressure, case.discharge_pressure), temps)
    c = TrainConditions(table, case.suction_pressure, case.suction_temperature,
                        case.discharge_pressure, case.ambient_temperature, station.objective,
                        station.driver_price)
    _CONDITIONS[station] = c
    return c


def _limit_text(where: str, key: str) -> str:
    name = LIMIT_NAMES.get(key, key)
    return f"{name} ({where})" if where else name


def _check_coolers(train: Train, points: TrainPoints, c: TrainConditions) -> None:
    """Refuse a cooler whose outlet lies above its inlet at every operating point scanned."""
    for k, s in enumerate(train.sections[:-1]):
        if s.cooler is None:
            continue
        inlet = points.sections[k].discharge_temperature
        inlet = inlet[np.isfinite(inlet)]
        if inlet.size and s.cooler.outlet_temperature > inlet.max():
            raise InputError(
                f"units.{train.name}.sections.{s.name}.cooler.outlet_temperature",
                f"{s.cooler.outlet_temperature - 273.15:.1f} degC is above the gas entering "
                f"the cooler, at most {inlet.max() - 273.15:.1f} degC at this case's "
                f"conditions ({c.suction_pressure / 1e3:.0f} to "
                f"{c.discharge_pressure / 1e3:.0f} kPa, suction "
                f"{c.suction_temperature - 273.15:.1f} degC)",
                "a cooler never heats the gas: give an outlet temperature below the "
                "section's discharge temperature, or remove the cooler")


def _flow_span(train: Train, c: TrainConditions) -> tuple[float, float]:
    """Through-flows [kg/s] bracketing the first section's map at suction density."""
    cmap = train.sections[0].compressor_map
    rho = float(c.table.density(c.suction_pressure, c.suction_temperature))
    q_lo = float(cmap.surge_flow_at_speed(cmap.speed_min, warn=False))
    q_hi = float(cmap.stonewall_flow_at_speed(cmap.speed_max, warn=False))
    return 0.95 * q_lo * rho, 1.02 * q_hi * rho


def _ends(c: TrainConditions, train: Train, m: np.ndarray, scan: TrainPoints):
    """Narrow both ends of the longest feasible run of a scan.

    Returns
    -------
    run : numpy.ndarray
        Indices of the scan's longest feasible run.
    ends : list of TrainPoints
        The last feasible point found at each end (one flow each).
    limits : list of (str, str)
        ``(where, limit)`` broken just beyond each end.
    """
    idx = np.flatnonzero(scan.feasible)
    runs = np.split(idx, np.flatnonzero(np.diff(idx) > 1) + 1)
    run = max(runs, key=len)
    i0, i1 = run[0], run[-1]
    brackets = [[m[i0], m[i0 - 1] if i0 > 0 else None],
                [m[i1], m[i1 + 1] if i1 < m.size - 1 else None]]
    ends = [scan.take(slice(i0, i0 + 1)), scan.take(slice(i1, i1 + 1))]
    limits = [("", "map"), ("", "map")]
    for _ in range(END_PASSES):
        live = [j for j in (0, 1) if brackets[j][1] is not None]
        if not live:
            break
        flows = np.concatenate([np.linspace(*brackets[j], END_POINTS) for j in live])
        tp = operate_train(c, train, flows)
        feasible = tp.feasible
        for n, j in enumerate(live):
            part = slice(n * END_POINTS, (n + 1) * END_POINTS)
            f, good = flows[part], feasible[part]
            bad = int(np.argmax(~good[1:])) + 1 if (~good[1:]).any() else END_POINTS - 1
            brackets[j] = [f[bad - 1], f[bad]]
            limits[j] = tp.first_violation(n * END_POINTS + bad)
            at = n * END_POINTS + bad - 1
            if good[bad - 1]:
                ends[j] = tp.take(slice(at, at + 1))
    return run, ends, limits


def _samples(points: list[TrainPoints]) -> tuple[np.ndarray, ...]:
    """Flow, objective, shaft power, energy input and cost of several point sets, joined."""
    return tuple(np.concatenate([np.atleast_1d(np.asarray(getattr(tp, name), float))
                                 for tp in points])
                 for name in ("mass_flow", "objective", "shaft_power", "energy_input",
                              "cost_rate"))


def reduce_train(station, train: Train, tolerance: float = DEFAULT_TOLERANCE) -> LeastPowerCurve:
    """Least-objective curve of a series train against its through-flow.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
        Gives the conditions, the objective and the driver prices.
    train : Train
        Two or more sections on one shaft, or two separately driven sections.
    tolerance : float, optional
        Breakpoint tolerance as a fraction of the largest objective on the curve [-].

    Returns
    -------
    LeastPowerCurve
        ``low_section``/``high_section`` name the section (or ``driver``) whose limit sets
        each end; ``cost_rate`` holds the energy cost at the breakpoints. Trains of one
        ``group`` are identical by the case's word: the first is reduced, the others
        share its curve.

    Raises
    ------
    InputError
        If a cooler's outlet lies above its inlet at every flow scanned.

    Notes
    -----
    The through-flow is scanned at :data:`COARSE_FLOWS` points across the first
    section's map; the longest feasible run is narrowed at both ends by
    :data:`END_PASSES` passes (to 1/30000 of the scanned span), and breakpoints are
    placed greedily on the run and its two ends so that every chord stays within
    ``tolerance`` of the sampled objective, as for single units.
    """
    if train.group is not None:
        # Trains of one group are identical (the case says so): reduce the first only.
        done = _GROUP_CURVES.setdefault(station, {})
        if (train.group, tolerance) not in done:
            done[(train.group, tolerance)] = reduce_under(train_conditions(station), train,
                                                          tolerance)
        return replace(done[(train.group, tolerance)], name=train.name)
    return reduce_under(train_conditions(station), train, tolerance)


def reduce_under(c: TrainConditions, train: Train, tolerance: float = DEFAULT_TOLERANCE
                 ) -> LeastPowerCurve:
    """:func:`reduce_train` under given conditions (any train, also a single unit).

    Parameters
    ----------
    c : TrainConditions
    train : Train
    tolerance : float, optional
        Breakpoint tolerance as a fraction of the largest objective on the curve [-].

    Returns
    -------
    LeastPowerCurve
    """
    m = np.linspace(*_flow_span(train, c), COARSE_FLOWS)
    scan = operate_train(c, train, m)
    _check_coolers(train, scan, c)
    ok = scan.feasible
    if not ok.any():
        return _infeasible(train, scan)
    run, ends, (low_limit, high_limit) = _ends(c, train, m, scan)
    inner = run[(m[run] > float(ends[0].mass_flow[0])) & (m[run] < float(ends[1].mass_flow[0]))]
    fine, objective, shaft, energy, cost = _samples([ends[0], scan.take(inner), ends[1]])
    scale = float(np.nanmax(np.abs(objective)))
    idx = _choose_breakpoints(fine, objective, tolerance * scale)
    x = fine[idx]
    error = float(np.max(np.abs(np.interp(fine, x, shaft[idx]) - shaft)))
    y = objective[idx]
    slopes = np.diff(y) / np.diff(x)
    convex = bool(np.all(np.diff(slopes) >= -1e-9 * scale))
    return LeastPowerCurve(
        train.name, x, shaft[idx], energy[idx], low_limit[1], high_limit[1], convex, error,
        sample_flow=fine, sample_shaft_power=shaft, sample_energy_input=energy,
        low_section=low_limit[0], high_section=high_limit[0], cost_rate=cost[idx],
        sample_cost_rate=cost)


def _infeasible(train: Train, scan: TrainPoints) -> LeastPowerCurve:
    """A curve marking the train unable to meet the duty, with the reason in words."""
    counts: dict[tuple[str, str], int] = {}
    for key, value in scan.margins.items():
        counts[key] = int(np.sum(np.broadcast_to(value, scan.mass_flow.shape) < 0))
    where, key = max(counts, key=counts.get)
    reason = (f"no through-flow meets every limit of the train; the "
              f"{_limit_text(where, key)} binds at the most flows scanned")
    empty = np.array([])
    return LeastPowerCurve(train.name, empty, empty, empty, key, "", True, 0.0, False, reason,
                           low_section=where)


def train_profile(station, train: Train, through_flow) -> tuple[np.ndarray, np.ndarray]:
    """Speed fraction [-] and least control-line margin [-] of a train along through-flows.

    The speed fraction is the shaft speed over its largest (separately driven: the
    largest such fraction among the sections); the margin is ``Q / Q_scl - 1`` of the
    section nearest its surge control line.
    """
    c = train_conditions(station)
    tp = operate_train(c, train, np.atleast_1d(np.asarray(through_flow, float)))
    if train.separately_driven:
        fraction = np.max([d.speed / s.drive.speed_max for d, s in
                           zip(tp.drives, train.sections, strict=True)], axis=0)
    else:
        fraction = tp.drives[0].speed / shaft_speed_range(train)[1]
    margin = np.min([p.volume_flow / p.control_line_flow - 1.0 for p in tp.sections], axis=0)
    return fraction, margin


def _pct(x: float) -> float:
    return float(100.0 * x) if math.isfinite(x) else math.nan


def section_rows(station, train: Train, through_flow: float, recycle: float, row: dict
                 ) -> list[dict]:
    """One result row per section of a running train, on the true model.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
    train : Train
    through_flow : float
        The train's through-flow [kg/s], the same in every section.
    recycle : float
        The train's recycle [kg/s] (the whole train recycles as one).
    row : dict
        The train's common columns (``name``, ``status``, ``running``).

    Returns
    -------
    list of dict
        The columns of a single-section row (``trainopt.station.result``) for each section, plus
        ``train``, ``section``, ``shaft_speed_rpm``, ``suction_pressure_kPa``,
        ``suction_temperature_C``, ``discharge_pressure_kPa``, ``cooler_duty_kW``,
        ``train_shaft_power_kW``, ``train_driver_input_kW``, ``limiting_section``,
        ``limiting_constraint`` and ``limiting_margin_pct``. Per-section
        ``shaft_power_kW`` is the section's gas power plus its share of mechanical
        losses; on a shared shaft the driver's input, CO2 and cost are shared in
        proportion to it (the train totals appear on every row under ``train_*``).
    """
    case = station.case
    c = train_conditions(station)
    tp = operate_train(c, train, [through_flow]).take(0)
    curve = station.curves.get(train.name)
    rho_std = case.gas.standard_density("iso")
    where, key, margin = tp.closest_limit(())
    net = through_flow - recycle
    total_shaft = float(tp.shaft_power)
    total_input = float(tp.energy_input)
    lo, hi, _, _ = shaft_speed_range(train)
    rows = []
    for k, (s, pts) in enumerate(zip(train.sections, tp.sections, strict=True)):
        p_s, t_s = float(pts.suction_pressure), float(pts.suction_temperature)
        p_d, eta = float(pts.discharge_pressure), float(pts.efficiency)
        basis = section_basis(s)
        exact = compress(case.gas, p_s, t_s, p_d, eta, basis)
        q, n = float(pts.volume_flow), float(pts.speed)
        shaft = float(pts.gas_power) * (1.0 + train.mechanical_loss)
        if train.separately_driven:
            d, driver = tp.drives[k], s.drive.driver
            n_lo, n_hi = s.drive.speed_min, s.drive.speed_max
            share = 1.0
        else:
            d, driver = tp.drives[0], train.driver
            n_lo, n_hi = lo * s.speed_ratio, hi * s.speed_ratio
            share = shaft / total_shaft if total_shaft > 0 else 0.0
        available, energy = float(d.available_power), float(d.energy_input) * share
        drive_shaft = float(d.shaft_power)
        price, co2 = station.driver_price(driver)
        cooler_duty = math.nan
        if s.cooler is not None:
            p_c, t_c = (float(v) for v in after_cooler(s, pts))
            h_in = case.gas.state(p_d, exact.discharge.temperature).enthalpy
            cooler_duty = through_flow * (h_in - case.gas.state(p_c, t_c).enthalpy)
        surge, scl = float(pts.surge_flow), float(pts.control_line_flow)
        entry = dict(row)
        entry.update({
            "train": train.name,
            "section": s.name,
            "net_mass_flow_kg_s": net,
            "through_mass_flow_kg_s": through_flow,
            "recycle_kg_s": recycle,
            "net_standard_flow_MMSCMD": net / rho_std * 86_400 / 1e6,
            "inlet_volume_flow_m3_h": q * 3600.0,
            "speed_rpm": n * 60.0,
            "shaft_speed_rpm": float(d.speed) * 60.0 if not train.separately_driven
            else n * 60.0,
            "map_basis": basis.value,
            "suction_pressure_kPa": p_s / 1e3,
            "suction_temperature_C": t_s - 273.15,
            "discharge_pressure_kPa": p_d / 1e3,
            "polytropic_head_kJ_kg": exact.polytropic_head / 1e3,
            "polytropic_efficiency": exact.polytropic_efficiency,
            "isentropic_head_kJ_kg": exact.isentropic_head / 1e3,
            "isentropic_efficiency": exact.isentropic_efficiency,
            "gas_power_kW": float(pts.gas_power) / 1e3,
            "shaft_power_kW": shaft / 1e3,
            "train_shaft_power_kW": total_shaft / 1e3,
            "available_power_kW": available / 1e3,
            "driver_input_kW": energy / 1e3,
            "train_driver_input_kW": total_input / 1e3,
            "driver_kind": driver.kind,
            "co2_t_h": energy * co2 * 3.6,
            "cost_per_h": energy * price * 3600.0,
            "discharge_temperature_C": exact.discharge.temperature - 273.15,
            "cooler_duty_kW": cooler_duty / 1e3,
            "surge_margin_pct": _pct((q - surge) / surge),
            "control_line_margin_pct": _pct((q - scl) / scl),
            "stonewall_margin_pct": _pct(float(stonewall_margin(s.compressor_map, q, n,
                                                                warn=False))),
            "speed_min_margin_pct": _pct((n - n_lo) / n_lo),
            "speed_max_margin_pct": _pct((n_hi - n) / n_hi),
            "driver_power_margin_pct": _pct((available - drive_shaft) / available
                                            if available > 0 else -1.0),
            "discharge_temperature_margin_K": (
                s.max_discharge_temperature - exact.discharge.temperature
                if s.max_discharge_temperature is not None else math.nan),
            "throttle_pressure_drop_kPa": 0.0,
            "throttle_lost_power_kW": 0.0,
            "least_flow_limit": _limit_text(curve.low_section, curve.low_limit) if curve
            else "",
            "largest_flow_limit": _limit_text(curve.high_section, curve.high_limit) if curve
            else "",
            "limiting_section": where,
            "limiting_constraint": LIMIT_NAMES.get(key, key),
            "limiting_margin_pct": _pct(margin),
        })
        rows.append(entry)
    return rows
