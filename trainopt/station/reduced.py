"""A station reduced at today's conditions: one least-power curve per available unit.

:class:`Station` reduces every unit once and is reused for many demands;
:func:`evaluate_split` reports given net flows on it. :mod:`trainopt.station.split`
(``optimize``, ``evaluate``), :mod:`~trainopt.station.header` and
:mod:`~trainopt.station.baselines` build on it.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import replace
from functools import lru_cache

import numpy as np
from scipy.interpolate import CubicSpline
from scipy.optimize import minimize

from trainopt.case.loading import Case
from trainopt.dispatch.model import UnitCurve
from trainopt.dispatch.reduction import LIMIT_NAMES, LeastPowerCurve, operate, reduce_unit
from trainopt.errors import InputError
from trainopt.machines.train import Train, UnitStatus
from trainopt.physics.compression import HeadBasis
from trainopt.physics.duty import Duty
from trainopt.physics.units import parse_flow
from trainopt.station.result import StationResult, unit_rows

OBJECTIVES = ("shaft_power", "energy_input", "cost")


def chosen_objective(case: Case, objective: str | None) -> str:
    """The objective asked for, or the case's; refused by name if unknown."""
    chosen = objective or case.objective
    if chosen not in OBJECTIVES:
        raise InputError("objective", f"unknown objective '{chosen}'",
                         f"use one of {', '.join(OBJECTIVES)}")
    return chosen


def driver_price(economics, driver) -> tuple[float, float]:
    """Energy price [currency/J] and CO2 factor [kg/J] of a driver's input.

    Motors draw electricity; turbines burn fuel (steam is charged at the fuel price).
    """
    if "motor" in driver.kind:
        return economics.electricity_price, economics.co2_electricity
    return economics.fuel_price, economics.co2_fuel


class Station:
    """A case at one set of conditions, reduced once and reusable for many demands.

    Parameters
    ----------
    case : Case
        The validated case.
    offline : iterable of str
        Units to take offline on top of the case's own status.
    objective : str, optional
        ``shaft_power``, ``energy_input`` or ``cost``; the case's by default.
    throttle : bool, optional
        Let single-section units run at minimum speed with a discharge throttle where
        their head lies below the minimum-speed line; the case's ``throttle`` by default.
    reuse : mapping of str to LeastPowerCurve, optional
        Curves already reduced at these conditions (for this objective and throttle
        setting), taken as they are instead of reduced again; see
        :class:`~trainopt.station.reduced_station.ReducedStation`.
    duties : dict, optional
        Compression duties already tabulated at these conditions, by head basis; shared
        and filled in place.
    """

    def __init__(self, case: Case, offline: Iterable[str] = (), objective: str | None = None,
                 throttle: bool | None = None, *,
                 reuse: Mapping[str, LeastPowerCurve] | None = None,
                 duties: dict[HeadBasis, Duty] | None = None):
        if case.interstage_header is not None:
            raise InputError("interstage_header", "a station with a shared interstage header "
                             "has two groups of units, not one", "use trainopt.optimize (it "
                             "searches the header pressure) or trainopt.station.header")
        self.case = case
        self.objective = chosen_objective(case, objective)
        self.throttle = bool(case.throttle if throttle is None else throttle)
        offline = list(offline)
        for name in offline:
            case.train(name)
        self.status = {t.name: (UnitStatus.OFFLINE if t.name in offline else t.status)
                       for t in case.trains}
        self._duties: dict[HeadBasis, Duty] = {} if duties is None else duties
        self.curves: dict[str, LeastPowerCurve] = {}
        reduced: dict[tuple, LeastPowerCurve] = {}
        reuse = reuse or {}
        for train in case.trains:
            if self.status[train.name] is UnitStatus.OFFLINE:
                continue
            if train.name in reuse:
                self.curves[train.name] = reuse[train.name]
                key = _twin_key(train) if train.is_single_section else None
                if key is not None:
                    reduced.setdefault(key, reuse[train.name])
                continue
            if train.is_single_section:
                key = _twin_key(train)
                if key is not None and key in reduced:
                    self.curves[train.name] = replace(reduced[key], name=train.name)
                    continue
                self.curves[train.name] = reduce_unit(train, self.duty(train),
                                                      case.ambient_temperature,
                                                      throttle=self.throttle)
                if key is not None:
                    reduced[key] = self.curves[train.name]
            else:
                from trainopt.dispatch.series_reduction import reduce_train

                self.curves[train.name] = reduce_train(self, train)

    def duty(self, train: Train) -> Duty:
        """The compression duty of a unit, tabulated once per map basis."""
        basis = train.sections[0].compressor_map.basis
        basis = HeadBasis(getattr(basis, "value", basis))
        if basis not in self._duties:
            c = self.case
            self._duties[basis] = _duty(c.gas, c.suction_pressure, c.suction_temperature,
                                        c.discharge_pressure, basis)
        return self._duties[basis]

    def price(self, train: Train) -> tuple[float, float]:
        """Energy price [currency/J] and CO2 factor [kg/J] of a unit's driver input."""
        return self.driver_price(train.driver)

    def driver_price(self, driver) -> tuple[float, float]:
        """Energy price [currency/J] and CO2 factor [kg/J] of a driver's input."""
        return driver_price(self.case.economics, driver)

    def curve_cost(self, name: str, sample: bool = False) -> np.ndarray:
        """The objective along a unit's curve: at its breakpoints, or on its fine sample.

        [W for power and energy, currency/s for cost.] A series train whose sections have
        their own drivers carries its cost per breakpoint (drivers of different prices).
        """
        curve = self.curves[name]
        train = self.case.train(name)
        cost_rate = curve.sample_cost_rate if sample else curve.cost_rate
        if self.objective == "cost" and cost_rate is not None:
            return np.asarray(cost_rate, float)
        if sample:
            return np.asarray(self.cost(train, curve.sample_shaft_power,
                                        curve.sample_energy_input), float)
        return np.asarray(self.cost(train, curve.shaft_power, curve.energy_input), float)

    def profile(self, name: str, through_flow) -> tuple[np.ndarray, np.ndarray]:
        """Speed over maximum speed [-] and control-line margin [-] along through-flows.

        For a series train: the shaft's (or, separately driven, the highest section's)
        speed fraction and the smallest control-line margin of its sections. Used by the
        load-sharing baselines.
        """
        train = self.case.train(name)
        m = np.asarray(through_flow, float)
        if train.is_single_section:
            op = operate(train, self.duty(train), m, self.case.ambient_temperature,
                         self.throttle)
            return (op.speed / train.speed_max,
                    (op.volume_flow - op.control_line_flow) / op.control_line_flow)
        from trainopt.dispatch.series_reduction import train_profile

        return train_profile(self, train, m)

    def cost(self, train: Train, shaft_power, energy_input):
        """The objective at shaft power and energy input [W] (W or currency/s)."""
        if self.objective == "shaft_power":
            return shaft_power
        if self.objective == "energy_input":
            return energy_input
        return energy_input * self.price(train)[0]

    def unit_curves(self) -> list[UnitCurve]:
        """The feasible units' curves in the dispatch model's terms."""
        out = []
        for name, curve in self.curves.items():
            if not curve.feasible:
                continue
            train = self.case.train(name)
            out.append(UnitCurve(name, curve.mass_flow, self.curve_cost(name),
                                 self.status[name].value, train.group,
                                 largest_flow_limit=LIMIT_NAMES.get(curve.high_limit)))
        return out

    def sampled_cost(self, name: str) -> CubicSpline:
        """The objective of one unit against through-flow [kg/s], from the fine true sample.

        Cubic interpolation of the ~200-point sample of the true model taken during the
        reduction; between samples it departs from the true model by far less than the
        breakpoint tolerance. The final split is always re-evaluated on the true model.
        """
        curve = self.curves[name]
        return CubicSpline(curve.sample_flow, self.curve_cost(name, sample=True))

    def refine(self, through: dict[str, float]) -> dict[str, float]:
        """Refine running units' interior flows on the sampled true model, keeping their sum.

        A local SLSQP solve (SciPy) from the dispatch's split, within each unit's curve
        range, with the splines' exact derivatives as gradient; kept only if it lowers
        the objective.
        """
        names = [n for n, m in through.items() if m > 0]
        if len(names) < 2:
            return through
        lo = np.array([self.curves[n].min_flow for n in names])
        hi = np.array([self.curves[n].max_flow for n in names])
        x0 = np.array([through[n] for n in names])
        total = x0.sum()
        splines = [self.sampled_cost(n) for n in names]
        scale = max(float(sum(s(m) for s, m in zip(splines, x0, strict=True))), 1e-9)

        slopes = [s.derivative() for s in splines]

        def f(x):
            return float(sum(s(m) for s, m in zip(splines, x, strict=True))) / scale

        def gradient(x):
            return np.array([float(d(m)) for d, m in zip(slopes, x, strict=True)]) / scale

        res = minimize(f, x0, jac=gradient, method="SLSQP", bounds=list(zip(lo, hi, strict=True)),
                       constraints=[{"type": "eq", "fun": lambda x: x.sum() - total,
                                     "jac": lambda x: np.ones_like(x)}],
                       options={"ftol": 1e-13, "maxiter": 200})
        if res.success and f(res.x) < f(x0) and abs(res.x.sum() - total) < 1e-9 * total:
            out = dict(through)
            out.update({n: float(np.clip(m, a, b)) for n, m, a, b in
                        zip(names, res.x, lo, hi, strict=True)})
            return out
        return through


@lru_cache(maxsize=32)
def _duty(gas, suction_pressure: float, suction_temperature: float, discharge_pressure: float,
          basis: HeadBasis) -> Duty:
    """:meth:`Duty.build`, kept for the last conditions seen.

    A duty depends on the gas and the header conditions only (not on the units, the demand
    or the objective), and tabulating it takes 18 CoolProp compressions (about 0.1 s), so a
    station asked for many demands at the same conditions builds it once.
    """
    return Duty.build(gas, suction_pressure, suction_temperature, discharge_pressure, basis)


def _twin_key(train: Train) -> tuple | None:
    """What fixes a single-section unit's curve, so that identical units are reduced once.

    Units sharing a map object (the case loader gives units that name the same map file the
    same object), driver and limits have the same curve. None where the driver is not
    hashable.
    """
    section = train.sections[0]
    key = (id(section.compressor_map), section.speed_ratio, section.surge_control_offset,
           section.least_flow_rule, section.max_discharge_temperature, train.driver,
           train.speed_min, train.speed_max, train.max_power, train.mechanical_loss)
    try:
        hash(key)
    except TypeError:
        return None
    return key


def evaluate_split(station: Station, net: Mapping[str, float]) -> StationResult:
    """Evaluate net flows [kg/s] for running units on a reduced station."""
    through, recycle = {}, {}
    total = float(sum(net.values()))
    for name, m in net.items():
        curve = station.curves[name]
        if not curve.feasible:
            return StationResult.infeasible(station.case, total, f"{name}: {curve.reason}",
                                            station.objective)
        if m > curve.max_flow * (1 + 1e-9):
            return StationResult.infeasible(
                station.case, total,
                f"{name} cannot carry {m:.2f} kg/s: its largest through-flow today is "
                f"{curve.max_flow:.2f} kg/s, set by the {LIMIT_NAMES[curve.high_limit]}"
                + (f" ({curve.high_section})" if curve.high_section else ""),
                station.objective)
        through[name] = max(m, curve.min_flow)
        recycle[name] = through[name] - m
    for name in station.curves:
        through.setdefault(name, 0.0)
        recycle.setdefault(name, 0.0)
    result = station_result(station, through, recycle, total)
    result.status = "evaluated"  # a given split, not an optimum (see StationResult)
    return result


def requested_demand(case: Case, demand) -> float:
    """The demand asked for as a mass flow [kg/s]: the case's when None; refused if negative."""
    if demand is None:
        return case.demand_mass_flow()
    if isinstance(demand, int | float):
        value = float(demand)
    else:
        value = case.demand_mass_flow(parse_flow(demand, "demand"))
    if value < 0:
        raise InputError("demand", f"{demand} is negative", "give a throughput of zero or more")
    return value


def station_result(station: Station, through, recycle, demand: float) -> StationResult:
    """The station result of through-flows and recycle flows [kg/s] on a reduced station."""
    rows = unit_rows(station, through, recycle)
    return StationResult.from_rows(station.case, demand, rows, station.objective)
