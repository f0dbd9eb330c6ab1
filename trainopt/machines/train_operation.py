"""Series trains at many through-flows at once: the internal freedoms solved.

Two kinds of series train (:class:`trainopt.machines.train.Train` with several sections):

- **one shaft** (:func:`operate_shaft_train`): the sections turn at fixed ratios of one
  shaft speed; for each through-flow the shaft speed is the one at which the last
  section delivers the discharge-header pressure (secant steps kept inside the first
  interval of a 9-speed scan where the delivered pressure crosses it). One driver
  carries the sum of the section powers.
- **separately driven** (:func:`operate_separate_train`, two sections): each section has
  its own driver and speed, so the interstage pressure is free; for each through-flow it
  is the one that minimises the station objective summed over both drivers, found on a
  17-point grid in ln p and refined by 14 golden-section steps (the two-step bracket
  shrinks by 0.618^14, to about 1/400 of a grid step).

Between sections the gas passes the section's cooler: it leaves at the cooler's outlet
temperature, or at its inlet temperature where that is already colder (a cooler never
heats the gas), and loses the cooler's pressure drop.

Every limit is kept as a relative margin (negative where broken) keyed by where it sits
(a section's name, or ``driver`` for the shared shaft's driver and speed range) and
which limit it is (the keys of :data:`trainopt.dispatch.reduction.LIMIT_NAMES`).
"""

from __future__ import annotations

import weakref
from collections.abc import Callable
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.interpolate import CubicSpline

from trainopt.machines.section_operation import (
    SectionPoints,
    bracketed_root,
    required_head,
    section_at_speed,
    section_basis,
    section_margins,
    section_to_pressure,
)
from trainopt.machines.train import Section, Train
from trainopt.physics.gas_table import GasTable

SPEED_SCAN = 9
"""Shaft speeds scanned to bracket the speed that meets the delivery pressure [-]."""

INTERSTAGE_GRID = 17
"""Interstage pressures on the coarse grid of a separately driven train [-]."""

GOLDEN_STEPS = 14
"""Golden-section steps refining the interstage pressure [-]."""

HEAD_SPLINE_POINTS = 97
"""Interstage pressures at which each section's required head is computed and splined."""

_GOLDEN = (np.sqrt(5.0) - 1.0) / 2.0
_VIOLATION_ORDER = ("map", "control_line", "speed_min", "speed_max", "stonewall", "power",
                    "discharge_temperature")


@dataclass(frozen=True)
class TrainConditions:
    """What a train works against today.

    Attributes
    ----------
    table : GasTable
    suction_pressure, discharge_pressure : float
        Header pressures [Pa].
    suction_temperature : float
        [K].
    ambient_temperature : float
        [K].
    objective : str
        ``shaft_power``, ``energy_input`` or ``cost``.
    price : callable
        ``price(driver) -> (currency per J, kg CO2 per J)`` of a driver's energy input.
    """

    table: GasTable
    suction_pressure: float
    suction_temperature: float
    discharge_pressure: float
    ambient_temperature: float
    objective: str
    price: Callable


_TABLES: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def gas_table_for(gas, pressures, temperatures) -> GasTable:
    """A gas table spanning a station's pressures [Pa] and temperatures [K] with margin.

    From 0.7 times the lowest pressure to 1.6 times the highest (so that a speed scan may
    overshoot the delivery pressure), and from 15 K below the coldest temperature to the
    discharge temperature of a compression through that whole pressure range at about
    50 % efficiency (``T (p_hi/p_lo)**0.35``) plus 40 K, capped at 800 K. A table built
    earlier for the same gas is reused when it spans these ranges.
    """
    p_lo, p_hi = 0.7 * min(pressures), 1.6 * max(pressures)
    t_lo = min(temperatures) - 15.0
    t_hi = min(max(temperatures) * (p_hi / p_lo) ** 0.35 + 40.0, 800.0)
    tables = _TABLES.setdefault(gas, []) if _weakrefable(gas) else []
    for table in tables:
        (a, b), (c, d) = table.pressure_range, table.temperature_range
        if a <= p_lo and b >= p_hi and c <= t_lo and d >= t_hi:
            return table
    table = GasTable(gas, (p_lo, p_hi), (t_lo, t_hi))
    tables.append(table)
    return table


def _weakrefable(obj) -> bool:
    try:
        weakref.ref(obj)
    except TypeError:
        return False
    return True


@dataclass(frozen=True)
class DrivePoints:
    """One driver's side of the operating points (arrays).

    Attributes
    ----------
    speed : compressor-shaft speed at the driver [1/s]
    shaft_power : compressor shaft power, gas power plus mechanical losses [W]
    available_power : what the driver can give at that speed and ambient [W]
    energy_input : fuel or electricity drawn [W]
    cost_rate : energy cost [currency/s]
    co2_rate : CO2 emitted [kg/s]
    """

    speed: np.ndarray
    shaft_power: np.ndarray
    available_power: np.ndarray
    energy_input: np.ndarray
    cost_rate: np.ndarray
    co2_rate: np.ndarray


@dataclass(frozen=True)
class TrainPoints:
    """A series train at many through-flows (arrays of one shape).

    Attributes
    ----------
    mass_flow : through-flow, the same in every section [kg/s]
    sections : tuple of SectionPoints
    drives : tuple of DrivePoints
        One for a shared shaft, one per section when separately driven.
    margins : dict
        ``(where, limit)`` to relative margin [-]; ``where`` is a section name or
        ``driver``.
    objective : station objective [W, or currency/s for cost]
    """

    mass_flow: np.ndarray
    sections: tuple[SectionPoints, ...]
    drives: tuple[DrivePoints, ...]
    margins: dict
    objective: np.ndarray

    @property
    def shaft_power(self) -> np.ndarray:
        """Shaft power of the whole train [W]."""
        return sum(d.shaft_power for d in self.drives)

    @property
    def energy_input(self) -> np.ndarray:
        """Energy input of the whole train [W]."""
        return sum(d.energy_input for d in self.drives)

    @property
    def cost_rate(self) -> np.ndarray:
        """Energy cost of the whole train [currency/s]."""
        return sum(d.cost_rate for d in self.drives)

    @property
    def worst_margin(self) -> np.ndarray:
        """Smallest margin over every limit [-]; negative where a limit is broken."""
        return np.min(np.stack([np.broadcast_to(v, self.mass_flow.shape)
                                for v in self.margins.values()]), axis=0)

    @property
    def feasible(self) -> np.ndarray:
        """Where every limit holds (bool array)."""
        return self.worst_margin >= 0.0

    def first_violation(self, index) -> tuple[str, str]:
        """``(where, limit)`` of the limit that binds at a point: the one broken furthest.

        Just past an end of a feasible range that is the limit crossed first; off the map
        the limit charged there (margin -1). Ties keep the order of
        ``_VIOLATION_ORDER``.
        """
        best, worst = ("", "map"), 0.0
        for limit in _VIOLATION_ORDER:
            for (where, key), value in self.margins.items():
                v = float(np.broadcast_to(value, self.mass_flow.shape)[index])
                if key == limit and v < worst:
                    best, worst = (where, key), v
        return best

    def closest_limit(self, index) -> tuple[str, str, float]:
        """``(where, limit, margin)`` of the limit nearest to binding at a point."""
        best = ("", "map", np.inf)
        for (where, key), value in self.margins.items():
            v = float(np.broadcast_to(value, self.mass_flow.shape)[index])
            if v < best[2]:
                best = (where, key, v)
        return best

    def take(self, index) -> TrainPoints:
        """The points at an index (any numpy index) of the flow arrays."""
        shape = self.mass_flow.shape

        def cut(obj):
            fields = {k: np.broadcast_to(v, shape)[index] for k, v in vars(obj).items()}
            return type(obj)(**fields)

        return TrainPoints(
            self.mass_flow[index], tuple(cut(s) for s in self.sections),
            tuple(cut(d) for d in self.drives),
            {k: np.broadcast_to(v, shape)[index] for k, v in self.margins.items()},
            np.broadcast_to(self.objective, shape)[index])


def _drive(c: TrainConditions, driver, speed, gas_power, loss: float, max_power
           ) -> DrivePoints:
    shaft = gas_power * (1.0 + loss)
    safe = np.where(shaft > 0, shaft, 0.0)
    available = np.asarray(driver.available_shaft_power(speed, c.ambient_temperature), float)
    if max_power is not None:
        available = np.minimum(available, max_power)
    energy = np.asarray(driver.energy_input(safe, speed, c.ambient_temperature), float)
    price, co2 = c.price(driver)
    shape = np.shape(shaft)
    return DrivePoints(*(np.broadcast_to(np.asarray(a, float), shape) for a in (
        speed, shaft, available, energy, energy * price, energy * co2)))


def _objective(c: TrainConditions, drives) -> np.ndarray:
    key = {"shaft_power": "shaft_power", "energy_input": "energy_input",
           "cost": "cost_rate"}[c.objective]
    return sum(getattr(d, key) for d in drives)


def after_cooler(section: Section, points: SectionPoints):
    """Pressure [Pa] and temperature [K] after a section's cooler (or its discharge)."""
    p, t = points.discharge_pressure, points.discharge_temperature
    if section.cooler is None:
        return p, t
    return p - section.cooler.pressure_drop, np.minimum(t, section.cooler.outlet_temperature)


# one shaft ---------------------------------------------------------------------------

def shaft_speed_range(train: Train) -> tuple[float, float, str, str]:
    """Shaft speed range [1/s] inside every section's tested map, and what sets each end.

    Returns
    -------
    speed_min, speed_max : float
        [1/s].
    low_by, high_by : str
        The section whose map sets that end, or ``driver`` (the unit's own range).
    """
    lo, hi, low_by, high_by = train.speed_min, train.speed_max, "driver", "driver"
    for s in train.sections:
        m = s.compressor_map
        # The case folds the maps' tested speeds into the train's range, so a map that
        # sets an end equals it: name the section then (to rounding), not the driver.
        if m.speed_min / s.speed_ratio >= lo * (1 - 1e-9):
            lo, low_by = max(lo, m.speed_min / s.speed_ratio), s.name
        if m.speed_max / s.speed_ratio <= hi * (1 + 1e-9):
            hi, high_by = min(hi, m.speed_max / s.speed_ratio), s.name
    return lo, hi, low_by, high_by


def _shaft_run(c: TrainConditions, train: Train, m, speed) -> list[SectionPoints]:
    p, t = c.suction_pressure, c.suction_temperature
    out = []
    for s in train.sections:
        pts = section_at_speed(c.table, s, p, t, m, speed * s.speed_ratio)
        out.append(pts)
        p, t = after_cooler(s, pts)
    return out


def _delivered(points: list[SectionPoints]) -> np.ndarray:
    """Pressure the last section delivers [Pa]; inf where any section overshoots the table."""
    over = np.zeros(points[-1].discharge_pressure.shape, bool)
    for pts in points:
        over |= np.isposinf(pts.discharge_pressure)
    return np.where(over, np.inf, points[-1].discharge_pressure)


def operate_shaft_train(c: TrainConditions, train: Train, mass_flow) -> TrainPoints:
    """A one-shaft train at through-flows [kg/s]: the speed meeting the delivery pressure.

    Parameters
    ----------
    c : TrainConditions
    train : Train
        Sections on one shaft.
    mass_flow : array_like
        Through-flows [kg/s].

    Returns
    -------
    TrainPoints
        Where no speed in the range meets the delivery pressure, the train is shown at
        the end of its speed range that falls short, with that speed margin at -1.
    """
    m = np.atleast_1d(np.asarray(mass_flow, float))
    lo, hi, low_by, high_by = shaft_speed_range(train)
    scan = np.linspace(lo, hi, SPEED_SCAN)
    gap = _delivered(_shaft_run(c, train, m[:, None], scan[None, :])) - c.discharge_pressure
    rising = (gap[:, :-1] <= 0) & (gap[:, 1:] > 0)
    has = rising.any(axis=1)
    k = np.argmax(rising, axis=1)
    too_fast = ~has & (gap[:, 0] > 0)
    speed = np.full(m.shape, np.nan)
    if has.any():
        rows = np.flatnonzero(has)
        a, b = scan[k[rows]], scan[k[rows] + 1]
        g_a, g_b = gap[rows, k[rows]], gap[rows, k[rows] + 1]
        speed[rows] = bracketed_root(lambda n: _delivered(_shaft_run(c, train, m[rows], n))
                                  - c.discharge_pressure, a, b, g_a, g_b,
                                  c.discharge_pressure)
    speed = np.where(np.isfinite(speed), speed, np.where(too_fast, lo, hi))
    points = _shaft_run(c, train, m, speed)
    gas_power = sum(p.gas_power for p in points)
    drive = _drive(c, train.driver, speed, gas_power, train.mechanical_loss, train.max_power)
    margins = {}
    for s, pts in zip(train.sections, points, strict=True):
        ratio = s.speed_ratio
        for key, v in section_margins(s, pts, lo * ratio, hi * ratio).items():
            if not key.startswith("speed"):
                margins[(s.name, key)] = v
    with np.errstate(invalid="ignore", divide="ignore"):
        margins[(low_by, "speed_min")] = np.where(too_fast, -1.0, speed / lo - 1.0)
        margins[(high_by, "speed_max")] = np.where(~has & ~too_fast, -1.0, 1.0 - speed / hi)
        margins[("driver", "power")] = np.where(
            drive.available_power > 0, 1.0 - drive.shaft_power / drive.available_power, -1.0)
    margins = {k: np.where(np.isnan(v), -np.inf, v) for k, v in margins.items()}
    return TrainPoints(m, tuple(points), (drive,), margins, _objective(c, (drive,)))


# separate drivers ----------------------------------------------------------------------

def interstage_range(c: TrainConditions, train: Train) -> tuple[float, float]:
    """Interstage pressures [Pa] searched: just above suction to just below delivery."""
    drop = train.sections[0].cooler.pressure_drop if train.sections[0].cooler else 0.0
    return c.suction_pressure * 1.001, (c.discharge_pressure + drop) * 0.999


@lru_cache(maxsize=128)
def _head_along_interstage(table: GasTable, basis, first: bool, p_fixed: float, t_s: float,
                           drop: float, lo: float, hi: float) -> CubicSpline | None:
    """Required-head coefficients against ln(interstage pressure), splined once.

    ``first``: the first section, from (``p_fixed``, ``t_s``) up to the interstage
    pressure; otherwise the second, from the interstage pressure less ``drop`` at ``t_s``
    up to ``p_fixed``. Cubic spline through :data:`HEAD_SPLINE_POINTS` pressures evenly in
    ln p (step under 1 % of the pressure; the coefficients are smooth in it, so the
    spline adds less than 1e-9 relative). None where the table does not cover the range.
    """
    grid = np.linspace(np.log(lo), np.log(hi), HEAD_SPLINE_POINTS)
    p = np.exp(grid)
    coefficients = (required_head(table, basis, p_fixed, t_s, p) if first
                    else required_head(table, basis, p - drop, t_s, p_fixed))
    if not np.all(np.isfinite(coefficients)):
        return None
    return CubicSpline(grid, coefficients, axis=0)


def _interstage_heads(c: TrainConditions, train: Train, interstage):
    """Both sections' required-head coefficients at interstage pressures, if splined.

    The second section's is valid only where its suction leaves the cooler at the
    outlet temperature (the caller checks).
    """
    s1, s2 = train.sections
    lo, hi = interstage_range(c, train)
    x = np.log(np.asarray(interstage, float))
    first = _head_along_interstage(c.table, section_basis(s1), True, c.suction_pressure,
                                   c.suction_temperature, 0.0, lo, hi)
    second = None
    if s1.cooler is not None:
        second = _head_along_interstage(c.table, section_basis(s2), False,
                                        c.discharge_pressure, s1.cooler.outlet_temperature,
                                        s1.cooler.pressure_drop, lo, hi)
    inside = np.all((x >= np.log(lo) - 1e-12) & (x <= np.log(hi) + 1e-12))
    return (first(x) if first is not None and inside else None,
            second(x) if second is not None and inside else None)


def _separate_run(c: TrainConditions, train: Train, m, interstage) -> TrainPoints:
    s1, s2 = train.sections
    first_head, second_head = _interstage_heads(c, train, interstage)
    p1 = section_to_pressure(c.table, s1, c.suction_pressure, c.suction_temperature, m,
                             interstage, first_head)
    p_s2, t_s2 = after_cooler(s1, p1)
    head2 = None
    if s1.cooler is not None and second_head is not None:
        # Where the gas leaves the cooler at its outlet temperature the second section's
        # duty depends on the interstage pressure only (splined); elsewhere (the cooler
        # passes colder gas as it comes) it is computed point by point.
        shape = np.broadcast_shapes(np.shape(t_s2), second_head.shape[:-1])
        head2 = np.array(np.broadcast_to(second_head, shape + (second_head.shape[-1],)))
        warm = np.broadcast_to(np.nan_to_num(t_s2, nan=np.inf)
                               < s1.cooler.outlet_temperature, shape)
        if warm.any():
            p_w = np.broadcast_to(p_s2, shape)[warm]
            t_w = np.broadcast_to(t_s2, shape)[warm]
            head2[warm] = required_head(c.table, section_basis(s2), p_w, t_w,
                                        c.discharge_pressure)
    p2 = section_to_pressure(c.table, s2, p_s2, t_s2, m, c.discharge_pressure, head2)
    drives, margins = [], {}
    for s, pts in ((s1, p1), (s2, p2)):
        d = s.drive
        drives.append(_drive(c, d.driver, pts.speed, pts.gas_power, train.mechanical_loss,
                             d.max_power))
        for key, v in section_margins(s, pts, d.speed_min, d.speed_max).items():
            margins[(s.name, key)] = v
        dr = drives[-1]
        with np.errstate(invalid="ignore", divide="ignore"):
            power = np.where(dr.available_power > 0, 1.0 - dr.shaft_power / dr.available_power,
                             -1.0)
        margins[(s.name, "power")] = np.where(np.isnan(power), -np.inf, power)
    shape = np.broadcast_shapes(np.shape(m), np.shape(interstage))
    mass = np.broadcast_to(np.asarray(m, float), shape)
    return TrainPoints(mass, (p1, p2), tuple(drives), margins, _objective(c, drives))


def operate_separate_train(c: TrainConditions, train: Train, mass_flow,
                           interstage_pressure=None) -> TrainPoints:
    """Two separately driven sections at through-flows [kg/s], interstage pressure optimal.

    Parameters
    ----------
    c : TrainConditions
    train : Train
        Two sections, each with its own driver.
    mass_flow : array_like
        Through-flows [kg/s].
    interstage_pressure : array_like, optional
        Impose the interstage pressure [Pa] (first section's discharge) instead of
        searching it.

    Returns
    -------
    TrainPoints
        At the interstage pressure of least objective among those meeting every limit;
        where none does, at the grid pressure whose worst margin is least negative.
    """
    m = np.atleast_1d(np.asarray(mass_flow, float))
    if interstage_pressure is not None:
        return _separate_run(c, train, m, np.broadcast_to(interstage_pressure, m.shape))
    lo, hi = interstage_range(c, train)
    grid = np.exp(np.linspace(np.log(lo), np.log(hi), INTERSTAGE_GRID))
    tp = _separate_run(c, train, m[:, None], grid[None, :])
    value = np.where(tp.feasible, tp.objective, np.inf)
    value = np.where(np.isnan(value), np.inf, value)
    k = np.argmin(value, axis=1)
    none = ~np.isfinite(value[np.arange(m.size), k])
    k = np.where(none, np.argmax(np.where(np.isnan(tp.worst_margin), -np.inf, tp.worst_margin),
                                 axis=1), k)
    x_best = np.log(grid[k])
    f_best = value[np.arange(m.size), k]
    step = np.log(grid[1] / grid[0])
    a = np.maximum(x_best - step, np.log(lo))
    b = np.minimum(x_best + step, np.log(hi))
    x1, x2 = b - _GOLDEN * (b - a), a + _GOLDEN * (b - a)

    def value_at(x):
        t = _separate_run(c, train, m, np.exp(x))
        v = np.where(t.feasible, t.objective, np.inf)
        return np.where(np.isnan(v), np.inf, v)

    f1, f2 = value_at(x1), value_at(x2)
    for _ in range(GOLDEN_STEPS):
        left = f1 <= f2
        a = np.where(left, a, x1)
        b = np.where(left, x2, b)
        for x, f in ((x1, f1), (x2, f2)):
            better = f < f_best
            x_best, f_best = np.where(better, x, x_best), np.where(better, f, f_best)
        x_new = np.where(left, b - _GOLDEN * (b - a), a + _GOLDEN * (b - a))
        f_new = value_at(x_new)
        x1, f1, x2, f2 = (np.where(left, x_new, x2), np.where(left, f_new, f2),
                          np.where(left, x1, x_new), np.where(left, f1, f_new))
    for x, f in ((x1, f1), (x2, f2)):
        better = f < f_best
        x_best = np.where(better, x, x_best)
    x_best = np.where(none, np.log(grid[k]), x_best)
    return _separate_run(c, train, m, np.exp(x_best))


@lru_cache(maxsize=256)
def _fixed_required_head(table: GasTable, basis, p_s: float, t_s: float, p_d: float
                         ) -> np.ndarray:
    """:func:`required_head` of one duty, kept: a unit's duty is met at many flows."""
    return required_head(table, basis, p_s, t_s, p_d)


def operate_single_unit(c: TrainConditions, train: Train, mass_flow) -> TrainPoints:
    """A single-section unit at through-flows [kg/s] on the gas table.

    The same model as :func:`trainopt.dispatch.reduction.operate` (map, gas, driver, limits) on
    the table instead of exact states; used where many header pressures are tried.
    """
    m = np.atleast_1d(np.asarray(mass_flow, float))
    s = train.sections[0]
    head = _fixed_required_head(c.table, section_basis(s), c.suction_pressure,
                                c.suction_temperature, c.discharge_pressure)
    pts = section_to_pressure(c.table, s, c.suction_pressure, c.suction_temperature, m,
                              c.discharge_pressure, head)
    drive = _drive(c, train.driver, pts.speed / s.speed_ratio, pts.gas_power,
                   train.mechanical_loss, train.max_power)
    margins = {("", k): v for k, v in section_margins(
        s, pts, train.speed_min * s.speed_ratio, train.speed_max * s.speed_ratio).items()}
    with np.errstate(invalid="ignore", divide="ignore"):
        power = np.where(drive.available_power > 0,
                         1.0 - drive.shaft_power / drive.available_power, -1.0)
    margins[("", "power")] = np.where(np.isnan(power), -np.inf, power)
    return TrainPoints(m, (pts,), (drive,), margins, _objective(c, (drive,)))


def operate_train(c: TrainConditions, train: Train, mass_flow) -> TrainPoints:
    """A train at through-flows [kg/s], its internal freedoms solved.

    Separately driven sections, sections on one shaft, or a single-section unit.
    """
    if train.is_single_section:
        return operate_single_unit(c, train, mass_flow)
    if train.separately_driven:
        return operate_separate_train(c, train, mass_flow)
    return operate_shaft_train(c, train, mass_flow)
