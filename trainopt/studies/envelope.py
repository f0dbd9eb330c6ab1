"""Turndown, unit-offline envelopes and throughput sweeps: what the station can carry.

Two kinds of unit sets appear here (``docs/studies.md``):

- a **service set** is the units in service, free to start and stop: every unit
  available, every case with one unit offline, or a set the user names;
- a **running set** is the units that run together (a commitment).

For a service set, at fixed header conditions:

- **largest throughput**: every unit in service at its largest through-flow (each end set
  by that unit's own limit: stonewall, maximum speed, driver power, discharge
  temperature);
- **least throughput without recycle**: the smallest least through-flow of a single unit
  (its surge control line or minimum speed); below it, and in any gap between the flow
  ranges of the running sets, recycle is unavoidable;
- **least throughput with full recycle**: zero; one unit runs at its least through-flow
  and recycles all of it, at the shaft power of that flow.

Everything is read from each unit's :class:`~trainopt.dispatch.reduction.LeastPowerCurve`; the
throughput sweep solves the dispatch model for each running set and evaluates every
answer on the true model. The station is never modelled here, only called.
"""

from __future__ import annotations

import dataclasses
import itertools
from dataclasses import dataclass

import numpy as np
import pandas as pd

from trainopt.dispatch.reduction import LIMIT_NAMES, operate
from trainopt.errors import InputError, TwoPhaseError
from trainopt.machines.train import UnitStatus
from trainopt.physics.units import Kind, parse_quantity
from trainopt.studies.parallel import run_tasks

SWEEP_VARIABLES = {
    "discharge_pressure": (Kind.PRESSURE, Kind.PRESSURE_DIFFERENCE, "bar"),
    "suction_pressure": (Kind.PRESSURE, Kind.PRESSURE_DIFFERENCE, "bar"),
    "suction_temperature": (Kind.TEMPERATURE, Kind.TEMPERATURE_DIFFERENCE, "degC"),
    "ambient_temperature": (Kind.TEMPERATURE, Kind.TEMPERATURE_DIFFERENCE, "degC"),
}
"""Conditions a sweep may vary: case field -> (kind, kind of the step, display unit)."""

MAX_SUBSET_UNITS = 16
"""Largest service set whose running sets are enumerated (2**16 - 1 subsets) [-]."""


def service_sets(case, offline=(), named=()) -> list[tuple[str, tuple[str, ...]]]:
    """The service sets of a study: all available, each one unit offline, and named sets.

    Parameters
    ----------
    case : Case
    offline : iterable of str
        Units out of service in every set (on top of the case's own offline units).
    named : iterable of iterable of str
        Further service sets, each a collection of unit names.

    Returns
    -------
    list of (label, units)
    """
    names = [t.name for t in case.trains]
    for name in list(offline) + [n for group in named for n in group]:
        if name not in names:
            raise InputError("unit", f"no unit named '{name}'", f"use one of {', '.join(names)}")
    for group in named:  # a unit cannot be both out of service and in a named set
        both = sorted(set(group) & set(offline), key=names.index)
        if both:
            raise InputError("service set", f"{', '.join(both)} is also taken offline",
                             "drop it from the offline units or from the set")
    out_of_service = set(offline) | {t.name for t in case.trains
                                     if t.status is UnitStatus.OFFLINE}
    available = tuple(n for n in names if n not in out_of_service)
    sets = [("all available", available)]
    if len(available) > 1:
        sets += [(f"{u} offline", tuple(n for n in available if n != u)) for u in available]
    for group in named:
        chosen = tuple(n for n in names if n in set(group))
        if not chosen:
            raise InputError("service set", "is empty", "name at least one unit")
        sets.append(("+".join(chosen), chosen))
    return sets


def _mmscmd(station, mass_flow):
    return np.asarray(mass_flow, float) / station.case.gas.standard_density("iso") * 86_400 / 1e6


def _limit(curve, end: str) -> str:
    return f"{curve.name}: {LIMIT_NAMES.get(getattr(curve, end), getattr(curve, end))}"


def recycle_free_ranges(station, units) -> list[tuple[float, float]]:
    """Throughput ranges [kg/s] some running set of ``units`` covers without recycle.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
    units : iterable of str
        The service set; units whose curve is infeasible are left out.

    Returns
    -------
    list of (float, float)
        Disjoint, sorted ``(from, to)`` ranges: the union over every non-empty running set
        of ``[sum of least flows, sum of largest flows]``.
    """
    curves = [station.curves[u] for u in units if u in station.curves and
              station.curves[u].feasible]
    if len(curves) > MAX_SUBSET_UNITS:
        raise InputError("service set", f"has {len(curves)} units",
                         f"recycle-free ranges enumerate running sets of at most "
                         f"{MAX_SUBSET_UNITS} units; name smaller sets")
    if not curves:
        return []
    lo = np.array([c.min_flow for c in curves])
    hi = np.array([c.max_flow for c in curves])
    masks = np.array(list(itertools.product([0, 1], repeat=len(curves)))[1:], float)
    spans = sorted(zip(masks @ lo, masks @ hi, strict=True))
    merged = [list(spans[0])]
    for a, b in spans[1:]:
        if a <= merged[-1][1] * (1 + 1e-12):
            merged[-1][1] = max(merged[-1][1], b)
        else:
            merged.append([a, b])
    return [(float(a), float(b)) for a, b in merged]


def turndown(station, sets) -> pd.DataFrame:
    """The ends of each service set's throughput range and what sets them.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
        Reduced at the conditions of interest, with every unit of the sets in service.
    sets : list of (label, units)
        From :func:`service_sets`.

    Returns
    -------
    pandas.DataFrame
        One row per set: ``largest_kg_s``, ``largest_MMSCMD``, ``largest_set_by``,
        ``largest_shaft_power_kW``, ``least_without_recycle_kg_s`` (and MMSCMD),
        ``least_set_by``, ``least_with_recycle_kg_s`` (0), ``full_recycle_power_kW``,
        ``full_recycle_unit``, ``recycle_unavoidable`` (ranges in words), ``units_unable``.
    """
    rows = []
    for label, units in sets:
        ok = [station.curves[u] for u in units if u in station.curves and
              station.curves[u].feasible]
        unable = "; ".join(f"{u}: {station.curves[u].reason}" for u in units
                           if u in station.curves and not station.curves[u].feasible)
        row = {"service_set": label, "in_service": ", ".join(units), "units_unable": unable}
        if not ok:
            row["status"] = "no unit can run"
            rows.append(row)
            continue
        smallest = min(ok, key=lambda c: c.min_flow)
        idle = min(ok, key=lambda c: c.shaft_power[0])
        ranges = recycle_free_ranges(station, units)
        gaps = [(0.0, ranges[0][0])] + [(a[1], b[0]) for a, b in itertools.pairwise(ranges)]
        largest = sum(c.max_flow for c in ok)
        row.update({
            "status": "feasible",
            "largest_kg_s": largest,
            "largest_MMSCMD": float(_mmscmd(station, largest)),
            "largest_set_by": "; ".join(_limit(c, "high_limit") for c in ok),
            "largest_shaft_power_kW": sum(float(c.shaft_power[-1]) for c in ok) / 1e3,
            "least_without_recycle_kg_s": smallest.min_flow,
            "least_without_recycle_MMSCMD": float(_mmscmd(station, smallest.min_flow)),
            "least_set_by": _limit(smallest, "low_limit"),
            "least_with_recycle_kg_s": 0.0,
            "full_recycle_power_kW": float(idle.shaft_power[0]) / 1e3,
            "full_recycle_unit": idle.name,
            "recycle_unavoidable": "; ".join(
                f"{a:.1f} to {b:.1f} kg/s ({_mmscmd(station, a):.2f} to "
                f"{_mmscmd(station, b):.2f} MMSCMD)" for a, b in gaps),
        })
        rows.append(row)
    return pd.DataFrame(rows)


def running_sets(station, units) -> list[tuple[str, ...]]:
    """Every non-empty running set of the feasible ``units``, identical units counted once.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
    units : iterable of str

    Returns
    -------
    list of tuple of str
        Sets that differ only by swapping units of one group (identical units) appear
        once, under the first such set in case order.
    """
    case = station.case
    ok = [u for u in units if u in station.curves and station.curves[u].feasible]
    if len(ok) > MAX_SUBSET_UNITS:
        raise InputError("service set", f"has {len(ok)} units",
                         f"name running sets, or service sets of at most {MAX_SUBSET_UNITS}")
    seen, out = set(), []
    for size in range(1, len(ok) + 1):
        for subset in itertools.combinations(ok, size):
            key = tuple(sorted(case.train(u).group or u for u in subset))
            if key not in seen:
                seen.add(key)
                out.append(subset)
    return out


def running_set_table(station, sets) -> pd.DataFrame:
    """Flow range and power at its ends for each running set.

    Returns
    -------
    pandas.DataFrame
        ``running``, ``least_without_recycle_kg_s`` (sum of least flows) and MMSCMD,
        ``least_set_by``, ``largest_kg_s`` and MMSCMD, ``largest_set_by``,
        ``least_flow_power_kW`` (also the power at zero throughput in full recycle),
        ``largest_flow_power_kW``.
    """
    rows = []
    for units in sets:
        curves = [station.curves[u] for u in units]
        lo = sum(c.min_flow for c in curves)
        hi = sum(c.max_flow for c in curves)
        rows.append({
            "running": "+".join(units),
            "least_without_recycle_kg_s": lo,
            "least_without_recycle_MMSCMD": float(_mmscmd(station, lo)),
            "least_set_by": "; ".join(_limit(c, "low_limit") for c in curves),
            "largest_kg_s": hi, "largest_MMSCMD": float(_mmscmd(station, hi)),
            "largest_set_by": "; ".join(_limit(c, "high_limit") for c in curves),
            "least_flow_power_kW": sum(float(c.shaft_power[0]) for c in curves) / 1e3,
            "largest_flow_power_kW": sum(float(c.shaft_power[-1]) for c in curves) / 1e3,
        })
    return pd.DataFrame(rows)


def _dispatcher(station, units, must_run: bool):
    from trainopt.dispatch.solve import Dispatcher

    chosen = [c for c in station.unit_curves() if c.name in units]
    status = UnitStatus.MUST_RUN.value if must_run else UnitStatus.AVAILABLE.value
    present = [c.name for c in chosen]
    out = []
    for c in chosen:
        mates = [t.name for t in station.case.trains if c.group and t.group == c.group]
        group = c.group if all(m in present for m in mates) else None
        out.append(dataclasses.replace(c, status=status, group=group))
    return Dispatcher(out)


def _true_power(station, through: dict[str, np.ndarray]) -> np.ndarray:
    """Station shaft power [W] on the true model for arrays of through-flows per unit."""
    total = 0.0
    for name, m in through.items():
        power = np.zeros_like(m)
        on = m > 0
        if on.any():
            train = station.case.train(name)
            power[on] = operate(train, station.duty(train), m[on],
                                station.case.ambient_temperature).shaft_power
        total = total + power
    return total


def throughput_sweep(station, sets, points: int = 25, free: tuple[str, ...] | None = None
                     ) -> pd.DataFrame:
    """Least power against throughput for each running set, and for the free choice.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
    sets : list of tuple of str
        Running sets; each runs all its units (recycling below its least flow).
    points : int
        Throughputs per set, from zero to its largest.
    free : tuple of str, optional
        A service set for the optimiser's free choice of running units (label ``best``).

    Returns
    -------
    pandas.DataFrame
        ``running`` (the set, or ``best``), ``best_running``, ``throughput_kg_s``,
        ``throughput_MMSCMD``, ``shaft_power_kW`` (true model), ``recycle_kg_s``.
    """
    if points < 2:
        raise InputError("points", f"{points} is too few", "give 2 or more")
    jobs = [("+".join(s), s, True) for s in sets]
    if free:
        jobs.append(("best", tuple(u for u in free if station.curves[u].feasible), False))
    frames = []
    for label, units, must in jobs:
        if not units:
            continue
        dispatcher = _dispatcher(station, units, must)
        top = sum(station.curves[u].max_flow for u in units)
        demand = np.linspace(0.0, top, points)
        answers = [dispatcher.solve(float(d)) for d in demand]
        through = {u: np.array([a.through_flow.get(u, 0.0) for a in answers]) for u in units}
        frames.append(pd.DataFrame({
            "running": label,
            "best_running": ["+".join(u for u in units if a.running.get(u)) for a in answers],
            "throughput_kg_s": demand,
            "throughput_MMSCMD": _mmscmd(station, demand),
            "shaft_power_kW": _true_power(station, through) / 1e3,
            "recycle_kg_s": [sum(a.recycle.values()) for a in answers],
        }))
    return pd.concat(frames, ignore_index=True) if frames else pd.DataFrame()


def start_stop_points(station, free, sweep: pd.DataFrame, tolerance: float = 0.05
                      ) -> pd.DataFrame:
    """Throughputs where the best running set changes, refined by bisection.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
    free : tuple of str
        The service set of the ``best`` rows of ``sweep``.
    sweep : pandas.DataFrame
        From :func:`throughput_sweep` with ``free``.
    tolerance : float
        Width of the final bracket [kg/s].

    Returns
    -------
    pandas.DataFrame
        ``from_running``, ``to_running``, ``throughput_kg_s``, ``throughput_MMSCMD``.
    """
    best = sweep[sweep["running"] == "best"] if "running" in sweep else sweep
    if best.empty:
        return pd.DataFrame(columns=["from_running", "to_running", "throughput_kg_s",
                                     "throughput_MMSCMD"])
    dispatcher = _dispatcher(station, tuple(u for u in free if station.curves[u].feasible), False)
    def running_at(demand: float) -> str:
        answer = dispatcher.solve(float(demand))
        return "+".join(c.name for c in dispatcher.curves if answer.running.get(c.name))

    rows = []
    flows, sets = best["throughput_kg_s"].to_numpy(), best["best_running"].to_numpy()
    for i in range(len(flows) - 1):
        a, current = flows[i], sets[i]
        for _ in range(4 * len(station.curves) + 1):  # each unit starts or stops a few times
            if current == sets[i + 1]:
                break
            lo, hi, upper = a, flows[i + 1], sets[i + 1]
            while hi - lo > tolerance:
                mid = 0.5 * (lo + hi)
                found = running_at(mid)
                if found == current:
                    lo = mid
                else:
                    hi, upper = mid, found
            if current:
                rows.append({"from_running": current, "to_running": upper,
                             "throughput_kg_s": 0.5 * (lo + hi),
                             "throughput_MMSCMD": float(_mmscmd(station, 0.5 * (lo + hi)))})
            a, current = hi, upper
    return pd.DataFrame(rows)


def parse_sweep(text: str, case) -> tuple[str, np.ndarray]:
    """Read ``"NAME=START:STOP:STEP"`` (quantities with units) into a variable and values.

    Parameters
    ----------
    text : str
        E.g. ``"discharge_pressure=60 bar:75 bar:1 bar"``.
    case : Case
        For the atmospheric pressure of gauge units.

    Returns
    -------
    (str, numpy.ndarray)
        The case field and its values in SI, START to STOP inclusive.
    """
    name, sep, spec = str(text).partition("=")
    name = name.strip()
    if not sep or name not in SWEEP_VARIABLES:
        raise InputError("--sweep", f"cannot read '{text}'",
                         f"write NAME=START:STOP:STEP with NAME one of "
                         f"{', '.join(SWEEP_VARIABLES)}, e.g. "
                         "'discharge_pressure=60 bar:75 bar:1 bar'")
    parts = spec.split(":")
    if len(parts) != 3:
        raise InputError("--sweep", f"'{spec}' is not START:STOP:STEP",
                         "e.g. '60 bar:75 bar:1 bar'")
    kind, step_kind, _ = SWEEP_VARIABLES[name]
    start = parse_quantity(parts[0], kind, "--sweep start", atmospheric=case.atmospheric_pressure)
    stop = parse_quantity(parts[1], kind, "--sweep stop", atmospheric=case.atmospheric_pressure)
    step = parse_quantity(parts[2], step_kind, "--sweep step")
    if not step > 0 or stop < start:
        raise InputError("--sweep", f"'{spec}' gives no values",
                         "give START <= STOP and a positive STEP")
    count = int(np.floor((stop - start) / step + 1e-9)) + 1
    if count > 200:
        raise InputError("--sweep", f"{count} values", "give a coarser step (at most 200 values)")
    return name, start + step * np.arange(count)


@dataclass
class _PointTask:
    case: object
    gas: tuple
    variable: str
    value: float
    sets: list


def envelope_point(task: _PointTask) -> pd.DataFrame:
    """Turndown of every service set at one value of the swept condition (a task)."""
    from trainopt.physics.gas import Gas
    from trainopt.station.reduced import Station

    components, eos = task.gas
    case = dataclasses.replace(task.case, gas=Gas.from_composition(dict(components), eos),
                               **{task.variable: task.value})
    row = {"variable": task.variable, "value": task.value}
    try:
        if not case.discharge_pressure > case.suction_pressure:
            raise InputError(task.variable, "discharge pressure not above suction pressure")
        case.gas.check_gas_phase(case.suction_pressure, case.suction_temperature, "suction")
        table = turndown(Station(case), task.sets)
    except (TwoPhaseError, InputError) as exc:
        return pd.DataFrame([{**row, "service_set": label, "status": str(exc)}
                             for label, _ in task.sets])
    for key, value in row.items():
        table.insert(0, key, value)
    return table


def condition_sweep(case, variable: str, values, sets, *, workers: int | None = None,
                    scheduler=None, progress: bool = True) -> pd.DataFrame:
    """Turndown of every service set at each value of one condition.

    Parameters
    ----------
    case : Case
    variable : str
        A key of :data:`SWEEP_VARIABLES`.
    values : array_like
        Its values in SI ([Pa] or [K]).
    sets : list of (label, units)
    workers, scheduler, progress
        See :func:`~trainopt.studies.parallel.run_tasks`.

    Returns
    -------
    pandas.DataFrame
        The :func:`turndown` columns with ``variable`` and ``value`` [SI]; a value where the
        suction state is near the dew point, or the headers cross, has that ``status``.
    """
    if variable not in SWEEP_VARIABLES:
        raise InputError("variable", f"'{variable}' cannot be swept",
                         f"use one of {', '.join(SWEEP_VARIABLES)}")
    recipe = (case.gas.components, case.gas.equation_of_state)
    transport = dataclasses.replace(case, gas=None)
    tasks = [_PointTask(transport, recipe, variable, float(v), list(sets)) for v in values]
    frames = run_tasks(envelope_point, tasks, workers=workers, scheduler=scheduler,
                       progress=progress, description=f"sweep {variable}", unit="point")
    return pd.concat(frames, ignore_index=True)


@dataclass
class EnvelopeStudy:
    """Everything the envelope study found at the case's conditions and along a sweep.

    Attributes
    ----------
    case : Case
    turndown : pandas.DataFrame
        From :func:`turndown`, one row per service set.
    running_sets : pandas.DataFrame
        From :func:`running_set_table`.
    sweep : pandas.DataFrame
        From :func:`throughput_sweep` (running sets of the all-available set, and ``best``).
    start_stop : pandas.DataFrame
        From :func:`start_stop_points`.
    ranges : pandas.DataFrame
        Recycle-free throughput ranges of each service set (``service_set``,
        ``from_kg_s``, ``to_kg_s``, ``from_MMSCMD``, ``to_MMSCMD``).
    conditions : pandas.DataFrame or None
        From :func:`condition_sweep`, if a condition was swept.
    """

    case: object
    turndown: pd.DataFrame
    running_sets: pd.DataFrame
    sweep: pd.DataFrame
    start_stop: pd.DataFrame
    ranges: pd.DataFrame
    conditions: pd.DataFrame | None = None

    def tables(self) -> dict[str, pd.DataFrame]:
        """The tables by name, for CSV or Excel."""
        out = {"turndown": self.turndown, "running_sets": self.running_sets,
               "recycle_free_ranges": self.ranges, "throughput_sweep": self.sweep,
               "start_stop": self.start_stop}
        if self.conditions is not None:
            out["condition_sweep"] = self.conditions
        return out


def envelope_study(case, *, offline=(), named=(), sweep: str | None = None, points: int = 25,
                   workers: int | None = None, scheduler=None, progress: bool = True
                   ) -> EnvelopeStudy:
    """Turndown, running sets, throughput sweep and (optionally) a condition sweep.

    Parameters
    ----------
    case : Case
    offline : iterable of str
        Units out of service in every set.
    named : iterable of iterable of str
        Further service sets.
    sweep : str, optional
        ``"NAME=START:STOP:STEP"`` (see :func:`parse_sweep`).
    points : int
        Throughputs per running set in the throughput sweep.
    workers, scheduler, progress
        For the condition sweep (see :func:`~trainopt.studies.parallel.run_tasks`).

    Returns
    -------
    EnvelopeStudy
    """
    from trainopt.station.reduced import Station
    from trainopt.studies.audit import single_section_only

    single_section_only(case, "the envelope study")
    named = [tuple(group) for group in named]
    sets = service_sets(case, offline, named)
    variable_values = parse_sweep(sweep, case) if sweep else None
    in_service = sorted({u for _, units in sets for u in units})
    station = Station(case, offline=[t.name for t in case.trains if t.name not in in_service])
    table = turndown(station, sets)
    subsets = running_sets(station, sets[0][1])
    sweep_table = throughput_sweep(station, subsets, points, free=sets[0][1])
    transitions = start_stop_points(station, sets[0][1], sweep_table)
    ranges = pd.DataFrame([{"service_set": label, "from_kg_s": a, "to_kg_s": b,
                            "from_MMSCMD": float(_mmscmd(station, a)),
                            "to_MMSCMD": float(_mmscmd(station, b))}
                           for label, units in sets
                           for a, b in recycle_free_ranges(station, units)],
                          columns=["service_set", "from_kg_s", "to_kg_s", "from_MMSCMD",
                                   "to_MMSCMD"])
    conditions = None
    if variable_values is not None:
        conditions = condition_sweep(case, *variable_values, sets, workers=workers,
                                     scheduler=scheduler, progress=progress)
    return EnvelopeStudy(case, table, running_set_table(station, subsets), sweep_table,
                         transitions, ranges, conditions)
