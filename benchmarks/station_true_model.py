"""Station optimiser on the true station model at 2, 4, 8 and 16 units, against a multistart NLP.

Where ``benchmarks/dispatch_scaling.py`` times the dispatch core on smooth synthetic curves,
this script times the whole optimiser on the true model: every power figure comes from the
map, the CoolProp gas duty and the driver model, evaluated by
``trainopt.dispatch.reduction.operate``,
and a true evaluation costs about 10 to 30 ms a call (vectorised over flows).

Two families of stations, each at 2, 4, 8 and 16 units (``DEMO_PLAN``, ``GASLIB_PLAN``):

- ``demo``: the INVENTED demo station (``cases/demo/station.yaml``, 44 -> 66 bar) and
  variants of its units (copies, some with another surge control line offset, a lower
  shaft-power limit or a lower maximum speed). Invented data, no real site or machine.
  Every least-power curve here is convex: the demo maps give convex curves at these
  conditions, and a change of offset, speed or power limit only moves the ends of a convex
  curve, which leaves it convex (checked while writing this for offsets of 3 to 20 %, speed
  and power cuts, and discharge pressures of 58 to 70 bar).
- ``gaslib``: the test case ``tests/data/station_small/gaslib_trio.yaml`` (50 -> 68 bar)
  and variants of its units, for stations that mix convex and non-convex curves. The maps
  and the turbine polynomial are published open data (GasLib, Schmidt et al. 2017, Data
  2(4):40, doi:10.3390/data2040040, CC BY 3.0; see ``tests/data/gaslib/README.md``); the
  conditions, the motor of the GasLib-11 unit, the variants and the stations are test
  choices describing no real station. The GasLib-135 unit's least-power curve is not
  convex here (power bends the wrong way just right of its control line), the GasLib-11
  unit's is.

For each station and a spread of demands that some commitment carries without recycle:

- trainopt: the reduction (``Station``) once, the model build once, then per demand the
  persistent HiGHS re-solve (``Dispatcher``), the refinement on the sampled true curve
  (``Station.refine``) and the true evaluation of the split (``evaluate_split``); and, for
  three of the demands, ``trainopt.optimize`` from the case (reduction included);
- the reference: SciPy SLSQP on the true model over the running units' through-flows
  (sum = demand, bounds [least flow, largest flow] of the reduction, gradient by forward
  difference), from several starts, for each of a set of commitments: every distinct
  commitment at 2 and 4 units; at 8 and 16 units a fixed budget of commitments screened
  on a coarse true sample (``screened_commitments``). A reference with a budget, not a
  proof of optimality;
- the gap: (true power of trainopt's split - true power of the best NLP split) / the
  latter, both evaluated by ``evaluate_split`` (negative: trainopt found less power);
- the speed-up: NLP time per demand over trainopt's time per demand, three ways;
- the plain dynamic program (``benchmarks/dp_reference.py``: each unit's true power on a
  4,000-point sample, a DP over the units on a 4,000-step flow grid), its split evaluated
  by ``evaluate_split`` like trainopt's: its time per demand and its true power, with
  trainopt's over the DP's as ratios.

Run: ``python benchmarks/station_true_model.py`` (two to four minutes on two cores).
"""

from __future__ import annotations

import dataclasses
import os
import statistics
import time
from pathlib import Path

import numpy as np
from dp_reference import DynamicProgram
from scipy.optimize import minimize

import trainopt
from trainopt.dispatch.reduction import operate
from trainopt.dispatch.solve import Dispatcher
from trainopt.station.reduced import Station, evaluate_split

ROOT = Path(__file__).resolve().parents[1]
SIZES = (2, 4, 8, 16)
DEMAND_COUNT = 6
OPTIMIZE_CALLS = 3  # demands per station timed through trainopt.optimize (reduction included)
TARGET_MEDIAN_SECONDS = {8: 0.2, 16: 1.0}
TARGET_GAP = 1e-3
TARGET_SPEEDUP = 20.0

NLP_STARTS = 2  # per commitment: the capacity-proportional split and a random split
SCREEN_BUDGET = {8: 5, 16: 5}  # commitments handed to SLSQP at 8 and 16 units
SCREEN_POINTS = 9  # true-model sample per unit kind for the commitment screen
FD_STEP = 1e-4  # forward-difference step of the NLP gradient [kg/s]

MW = 1e6
KW = 1e3

# A variant of a base unit: (base name, new name, group, surge control offset [-] or None,
# shaft-power limit [W] or None, maximum speed as a fraction of the base's or None).
DEMO_PLAN = (
    ("A", "A", "motor pair", None, None, None),
    ("C", "C", None, None, None, None),
    ("B", "B", "motor pair", None, None, None),
    ("D", "D", None, None, None, None),
    ("A", "A2", "motor pair", None, None, None),
    ("C", "C2", None, None, 15.0e6, None),
    ("B", "B2", "motor pair", None, None, None),
    ("D", "D2", None, 0.07, None, None),
    ("A", "A3", "motor pair, 13 % offset", 0.13, None, None),
    ("B", "B3", "motor pair, 13 % offset", 0.13, None, None),
    ("A", "A4", None, None, 8.5e6, None),
    ("B", "B4", None, None, None, 0.97),
    ("C", "C3", None, None, None, None),
    ("C", "C4", None, 0.08, None, None),
    ("D", "D3", None, None, None, None),
    ("D", "D4", None, None, 8.0e6, None),
)
GASLIB_PLAN = (
    ("P1", "P1", "gaslib135", None, None, None),
    ("L", "L", None, None, None, None),
    ("P2", "P2", "gaslib135", None, None, None),
    ("L", "L2", None, 0.08, None, None),
    ("P1", "P3", "gaslib135", None, None, None),
    ("L", "L3", None, None, 12.0e6, None),
    ("P1", "P4", None, 0.15, None, None),
    ("P1", "P5", None, None, None, 0.95),
    ("P1", "P6", "gaslib135", None, None, None),
    ("P1", "P7", "gaslib135", None, None, None),
    ("L", "L4", None, None, None, None),
    ("L", "L5", None, 0.13, None, None),
    ("P1", "P8", None, 0.15, None, None),
    ("P1", "P9", None, None, 4.5e6, None),
    ("L", "L6", None, None, 11.0e6, None),
    ("P1", "P10", None, 0.06, None, None),
)
FAMILIES = (
    ("demo", ROOT / "cases/demo/station.yaml", DEMO_PLAN),
    ("gaslib", ROOT / "tests/data/station_small/gaslib_trio.yaml", GASLIB_PLAN),
)


def variant(base, name: str, group, offset, max_power, speed_fraction):
    """A copy of a unit under a new name, with some of its limits changed."""
    section = base.sections[0]
    if offset is not None:
        section = dataclasses.replace(section, surge_control_offset=offset)
    changes = {"name": name, "group": group, "sections": (section,)}
    if max_power is not None:
        changes["max_power"] = max_power
    if speed_fraction is not None:
        changes["speed_max"] = base.speed_max * speed_fraction
    return dataclasses.replace(base, **changes)


def station_case(base_case, plan, count: int):
    """The base case with the first ``count`` units of the plan."""
    trains = tuple(variant(base_case.train(row[0]), *row[1:]) for row in plan[:count])
    return dataclasses.replace(base_case, trains=trains)


def all_masks(count: int) -> np.ndarray:
    """Every commitment of ``count`` units as rows of booleans."""
    return ((np.arange(2**count)[:, None] >> np.arange(count)) & 1).astype(bool)


def demand_spread(lo: np.ndarray, hi: np.ndarray, count: int) -> list[float]:
    """``count`` demands [kg/s] spread over the station's range, each carried without recycle.

    Candidates are evenly spaced from the least unit's least flow to 97 % of capacity; a
    candidate that no commitment carries without recycle (it falls between the ranges of
    the commitments) moves to the nearest demand 1 % of a range inside one.
    """
    masks = all_masks(len(lo))[1:]
    low, high = masks @ lo, masks @ hi
    inset = 0.01 * (high - low)
    out = []
    for demand in np.linspace(1.05 * lo.min(), 0.97 * hi.sum(), count):
        nearest = np.clip(demand, low + inset, high - inset)
        demand = nearest[np.argmin(np.abs(nearest - demand))]
        out.append(round(float(demand), 3))
    return out


def map_key(compressor_map) -> tuple:
    """What makes two loaded maps the same map (the loader gives each unit its own copy)."""
    m = compressor_map
    return (m.name, m.source, m.basis, m.head_surface.coefficients,
            m.efficiency_surface.coefficients, m.speed_range)


class TrueStation:
    """Shaft power of a set of running units on the true model, for the NLP reference.

    Units whose shaft power is the same function of through-flow (same map, speed ratio
    and mechanical loss; the driver and the limits only bound the flow) are evaluated in
    one vectorised ``operate`` call, with the forward-difference points of the gradient
    in the same call. That makes the reference faster, never slower.
    """

    def __init__(self, station: Station, names: list[str]):
        self.station = station
        self.names = names
        case = station.case
        self.ambient = case.ambient_temperature
        self.kind = {}
        self.train_of_kind = {}
        for name in names:
            train = case.train(name)
            section = train.sections[0]
            key = (map_key(section.compressor_map), section.speed_ratio,
                   train.mechanical_loss)
            self.kind[name] = key
            self.train_of_kind.setdefault(key, train)
        self.lo = np.array([station.curves[n].min_flow for n in names])
        self.hi = np.array([station.curves[n].max_flow for n in names])
        self.calls = 0

    def power(self, names: list[str], flow: np.ndarray, gradient: bool = False):
        """Total shaft power [W] of ``names`` at through-flows ``flow`` [kg/s], and dP/dm."""
        value, slope = 0.0, np.zeros(len(names))
        by_kind: dict[tuple, list[int]] = {}
        for i, name in enumerate(names):
            by_kind.setdefault(self.kind[name], []).append(i)
        for key, index in by_kind.items():
            m = flow[index]
            points = np.concatenate([m, m + FD_STEP]) if gradient else m
            train = self.train_of_kind[key]
            p = operate(train, self.station.duty(train), points, self.ambient).shaft_power
            self.calls += 1
            value += float(p[:len(m)].sum())
            if gradient:
                slope[index] = (p[len(m):] - p[:len(m)]) / FD_STEP
        return value, slope


def random_split(lo, hi, demand: float, rng) -> np.ndarray:
    """A random split of the demand within the bounds (random weights, filled to the bounds)."""
    x, rest = lo.copy(), demand - lo.sum()
    while rest > 1e-9:
        room = hi - x
        weight = rng.random(len(x)) * (room > 1e-12)
        if not weight.any():
            break
        add = np.minimum(rest * weight / weight.sum(), room)
        x, rest = x + add, rest - add.sum()
    return x


def slsqp(model: TrueStation, names: list[str], lo, hi, demand: float,
          start) -> tuple[float, np.ndarray]:
    """SLSQP on the true model from one start; the true power [W] and the through-flows."""
    if len(names) == 1:
        return model.power(names, np.array([demand]))[0], np.array([demand])
    cache = {}

    def both(x):
        key = x.tobytes()
        if key not in cache:
            value, slope = model.power(names, np.clip(x, lo, hi), gradient=True)
            cache.clear()
            cache[key] = (value / MW, slope / MW)
        return cache[key]

    res = minimize(lambda x: both(x)[0], start, jac=lambda x: both(x)[1], method="SLSQP",
                   bounds=list(zip(lo, hi, strict=True)),
                   constraints=[{"type": "eq", "fun": lambda x: x.sum() - demand,
                                 "jac": lambda x: np.ones_like(x)}],
                   options={"maxiter": 100, "ftol": 1e-8})
    x = np.clip(res.x, lo, hi)
    if abs(x.sum() - demand) > 1e-6 * demand:
        return np.inf, x
    return model.power(names, x)[0], x


def unit_kinds(model: TrueStation) -> np.ndarray:
    """An integer per unit: units of the same kind and the same flow bounds are interchangeable."""
    labels = {}
    keys = [(model.kind[n], round(a, 6), round(b, 6))
            for n, a, b in zip(model.names, model.lo, model.hi, strict=True)]
    return np.array([labels.setdefault(k, len(labels)) for k in keys])


def distinct(masks: np.ndarray, kinds: np.ndarray) -> np.ndarray:
    """One commitment of each multiset of unit kinds (swapping identical units changes nothing)."""
    counts = masks.astype(int) @ np.eye(kinds.max() + 1, dtype=int)[kinds]
    _, first = np.unique(counts, axis=0, return_index=True)
    return masks[np.sort(first)]


def feasible_commitments(model: TrueStation, demand: float) -> np.ndarray:
    """Every distinct commitment that carries the demand without recycle."""
    masks = all_masks(len(model.names))[1:]
    ok = (masks @ model.lo <= demand) & (demand <= masks @ model.hi)
    return distinct(masks[ok], unit_kinds(model))


class Screen:
    """A coarse true-model sample of each unit kind, to screen commitments for the NLP."""

    def __init__(self, model: TrueStation):
        start = time.perf_counter()
        self.flow = [np.linspace(a, b, SCREEN_POINTS)
                     for a, b in zip(model.lo, model.hi, strict=True)]
        by_kind: dict[tuple, list[int]] = {}
        for i, name in enumerate(model.names):
            by_kind.setdefault(model.kind[name], []).append(i)
        self.power = [None] * len(model.names)
        for key, index in by_kind.items():
            m = np.concatenate([self.flow[i] for i in index])
            train = model.train_of_kind[key]
            p = operate(train, model.station.duty(train), m, model.ambient).shaft_power
            for j, i in enumerate(index):
                self.power[i] = p[j * SCREEN_POINTS:(j + 1) * SCREEN_POINTS]
        self.seconds = time.perf_counter() - start

    def estimate(self, model: TrueStation, masks: np.ndarray, demand: float) -> np.ndarray:
        """Power [W] of each commitment at the capacity-proportional split, interpolated."""
        span = masks @ (model.hi - model.lo)
        share = (demand - masks @ model.lo) / np.where(span > 0, span, 1.0)
        total = np.zeros(len(masks))
        for i in range(len(model.names)):
            m = model.lo[i] + share * (model.hi[i] - model.lo[i])
            total += np.where(masks[:, i], np.interp(m, self.flow[i], self.power[i]), 0.0)
        return total


def screened_commitments(model: TrueStation, screen: Screen, demand: float,
                         budget: int) -> np.ndarray:
    """The ``budget`` distinct commitments of least estimated power at this demand.

    Every commitment that carries the demand without recycle is estimated at the split
    proportional to its units' flow ranges, on a ``SCREEN_POINTS``-point true sample of
    each unit kind (linear interpolation); the ``budget`` least go to SLSQP.
    """
    masks = feasible_commitments(model, demand)
    order = np.argsort(screen.estimate(model, masks, demand))
    return masks[order[:budget]]


def nlp_reference(model: TrueStation, demand: float, commitments: np.ndarray, rng):
    """Multistart SLSQP over the given commitments; best true power [W], split, SLSQP runs."""
    best, best_split, runs = np.inf, {}, 0
    for mask in commitments:
        names = [n for n, on in zip(model.names, mask, strict=True) if on]
        lo, hi = model.lo[mask], model.hi[mask]
        span = hi - lo
        proportional = lo + (demand - lo.sum()) * span / span.sum() if span.sum() > 0 else lo
        starts = [proportional] + [random_split(lo, hi, demand, rng)
                                   for _ in range(NLP_STARTS - 1)]
        for start in starts[:1 if len(names) == 1 else NLP_STARTS]:
            power, x = slsqp(model, names, lo, hi, demand, start)
            runs += 1
            if power < best:
                best, best_split = power, dict(zip(names, map(float, x), strict=True))
    return best, best_split, runs


def trainopt_answer(station: Station, dispatcher: Dispatcher, demand: float):
    """trainopt's answer to one demand: true power [W], through-flows [kg/s], timings [s].

    The persistent re-solve, the refinement on the sampled true curve and the true
    evaluation of the split, as ``trainopt.optimize`` does them after the reduction.
    """
    result = dispatcher.solve(demand)
    if result.status != "optimal":
        raise RuntimeError(f"dispatch at {demand} kg/s: {result.status} {result.reason}")
    if sum(result.recycle.values()) > 0:
        raise RuntimeError(f"dispatch at {demand} kg/s recycles although no recycle is needed")
    start = time.perf_counter()
    through = station.refine({n: m for n, m in result.through_flow.items() if m > 0})
    refine = time.perf_counter() - start
    start = time.perf_counter()
    true = evaluate_split(station, through).total_shaft_power
    truth = time.perf_counter() - start
    return true, through, {"solve": result.solve_seconds, "refine": refine, "truth": truth}


def run_station(family: str, base_case, plan, count: int, rng) -> dict:
    """Every measurement of one station over its spread of demands."""
    case = station_case(base_case, plan, count)
    start = time.perf_counter()
    station = Station(case)
    reduction = time.perf_counter() - start
    names = list(station.curves)
    dispatcher = Dispatcher(station.unit_curves())
    model = TrueStation(station, names)
    start = time.perf_counter()
    peer = DynamicProgram(station)
    peer_setup = time.perf_counter() - start
    screen = Screen(model) if count in SCREEN_BUDGET else None
    rows = []
    for demand in demand_spread(model.lo, model.hi, DEMAND_COUNT):
        power, through, seconds = trainopt_answer(station, dispatcher, demand)
        start = time.perf_counter()
        peer_split = peer.split(demand)
        dp_seconds = time.perf_counter() - start
        dp_power = evaluate_split(station, peer_split).total_shaft_power
        start = time.perf_counter()
        if screen is None:
            commitments = feasible_commitments(model, demand)
        else:
            commitments = screened_commitments(model, screen, demand, SCREEN_BUDGET[count])
        calls = model.calls
        own, split, runs = nlp_reference(model, demand, commitments, rng)
        reference = evaluate_split(station, split).total_shaft_power
        nlp_seconds = time.perf_counter() - start
        rows.append({"demand": demand, "power": power, "reference": reference,
                     "gap": (power - reference) / reference,
                     "answer": sum(seconds.values()), "nlp": nlp_seconds,
                     "commitments": len(commitments), "runs": runs,
                     "calls": model.calls - calls, "own_diff": abs(own - reference),
                     "running": sum(m > 0 for m in through.values()), "dp": dp_seconds,
                     "dp_power": dp_power, **seconds})
    optimize_seconds, optimize_diff = [], []
    for row in (rows[0], rows[len(rows) // 2], rows[-1])[:OPTIMIZE_CALLS]:
        start = time.perf_counter()
        result = trainopt.optimize(case, demand=row["demand"], baselines=False)
        optimize_seconds.append(time.perf_counter() - start)
        optimize_diff.append(abs(result.total_shaft_power - row["power"]))
    curves = station.curves.values()
    return {"family": family, "units": count, "convex": sum(c.convex for c in curves),
            "breakpoints": sum(len(c.mass_flow) for c in curves),
            "formulation": dispatcher.model.formulation_summary, "reduction": reduction,
            "build": dispatcher.build_seconds, "rows": rows,
            "screen": screen.seconds if screen else 0.0, "dp_setup": peer_setup,
            "optimize": statistics.median(optimize_seconds),
            "optimize_diff": max(optimize_diff)}


def summarise(out: dict) -> dict:
    """Medians and extremes over the demands of one station."""
    rows = out["rows"]

    def med(key):
        return statistics.median(r[key] for r in rows)

    return {"solve_med": med("solve"), "solve_max": max(r["solve"] for r in rows),
            "answer": med("answer"), "gap_med": med("gap"),
            "gap_max": max(r["gap"] for r in rows), "nlp": med("nlp"),
            "speedup_solve": med("nlp") / med("solve"), "speedup": med("nlp") / med("answer"),
            "speedup_cold": med("nlp") / out["optimize"], "dp": med("dp"),
            "dp_power_ratio": max(r["power"] / r["dp_power"] for r in rows)}


def shown(value: float, digits: int) -> float:
    """A figure rounded for printing, without a minus sign on a rounded zero."""
    return round(value, digits) + 0.0


def print_demands(out: dict) -> None:
    print(f"\n{out['family']}, {out['units']} units: {out['convex']} convex curves, "
          f"{out['units'] - out['convex']} not, {out['breakpoints']} breakpoints; "
          f"{out['formulation']}")
    print(f"{'demand kg/s':>11} {'running':>7} {'trainopt kW':>12} {'NLP kW':>12} "
          f"{'gap kW':>7} {'gap %':>7} {'commitments':>11} {'SLSQP runs':>10} "
          f"{'operate calls':>13} {'solve ms':>8} {'answer ms':>9} {'NLP s':>6} "
          f"{'DP kW':>12} {'DP ms':>6} {'power/DP':>8} {'time/DP':>7}")
    for r in out["rows"]:
        print(f"{r['demand']:11.1f} {r['running']:7d} {r['power'] / KW:12.1f} "
              f"{r['reference'] / KW:12.1f} {shown((r['power'] - r['reference']) / KW, 3):7.3f} "
              f"{shown(r['gap'] * 100, 4):7.4f} {r['commitments']:11d} {r['runs']:10d} "
              f"{r['calls']:13d} {r['solve'] * 1e3:8.1f} {r['answer'] * 1e3:9.1f} "
              f"{r['nlp']:6.2f} {r['dp_power'] / KW:12.1f} {r['dp'] * 1e3:6.1f} "
              f"{r['power'] / r['dp_power']:8.5f} {r['answer'] / r['dp']:7.2f}")


def verdict(ok: bool) -> str:
    return "met" if ok else "NOT met"


def print_summary(results: list[dict]) -> None:
    print("\nSummary, medians over each station's demands (max where marked):")
    print(f"{'family':>6} {'units':>5} {'conv/non':>8} {'reduce s':>8} {'build ms':>8} "
          f"{'solve ms':>8} {'max':>6} {'answer ms':>9} {'optimize s':>10} {'gap % med':>9} "
          f"{'max':>7} {'NLP s':>6} {'speed-up: solve':>15} {'answer':>6} {'cold':>5}")
    for o in results:
        print(f"{o['family']:>6} {o['units']:5d} {o['convex']:>3d}/{o['units'] - o['convex']:<4d} "
              f"{o['reduction']:8.2f} {o['build'] * 1e3:8.1f} {o['solve_med'] * 1e3:8.1f} "
              f"{o['solve_max'] * 1e3:6.1f} {o['answer'] * 1e3:9.1f} {o['optimize']:10.2f} "
              f"{shown(o['gap_med'] * 100, 4):9.4f} {shown(o['gap_max'] * 100, 4):7.4f} "
              f"{o['nlp']:6.2f} {o['speedup_solve']:14.0f}x {o['speedup']:5.1f}x "
              f"{o['speedup_cold']:4.1f}x")
    print(f"\n{'family':>6} {'units':>5} {'DP set-up s':>11} {'DP ms':>6} {'answer/DP':>9} "
          f"{'optimize/(DP set-up + DP)':>25} {'worst power/DP':>14}")
    for o in results:
        print(f"{o['family']:>6} {o['units']:5d} {o['dp_setup']:11.2f} {o['dp'] * 1e3:6.1f} "
              f"{o['answer'] / o['dp']:9.2f} {o['optimize'] / (o['dp_setup'] + o['dp']):25.2f} "
              f"{o['dp_power_ratio']:14.5f}")
    rows = [r for o in results for r in o["rows"]]
    optimize_diff = max(o["optimize_diff"] for o in results)
    own_diff = max(r["own_diff"] for r in rows)
    screen = max(o["screen"] for o in results)
    print(f"""
reduce: Station(case), every unit's least-power curve on the true model, once a station.
build: the Pyomo model, once a station.
solve: persistent HiGHS re-solve of one demand, both passes of the no-recycle policy (the
  first demand's solve also hands the model to HiGHS).
answer: solve + refinement on the sampled true curve (Station.refine) + true evaluation
  of the split with its per-unit table (evaluate_split).
optimize: trainopt.optimize(case, demand, baselines=False) from the case, reduction
  included, median of {OPTIMIZE_CALLS} demands; its true power equals the answer's to
  within {optimize_diff:.3g} W.
gap: (trainopt - NLP) / NLP true power, both splits evaluated by evaluate_split;
  negative means trainopt found less power.
NLP: multistart SLSQP of one demand on the true model, then evaluate_split of its best
  split; {NLP_STARTS} starts a commitment (the capacity-proportional split and a random
  one); every distinct commitment at 2 and 4 units, the {SCREEN_BUDGET[8]} of least
  screened power at 8 and 16. Its own sum of operate powers equals evaluate_split's to
  within {own_diff:.3g} W. Not counted in its time: the reduction's flow bounds it is
  given, and the one-off {SCREEN_POINTS}-point screen sample per unit kind (at most
  {screen * 1e3:.0f} ms a station).
speed-up: NLP time over trainopt's; solve = the HiGHS re-solve alone; answer = solve +
  refine + truth; cold = optimize.
DP: the plain dynamic program of benchmarks/dp_reference.py on the same true model; DP ms
  = the grid interpolation and the DP of one demand (its truth evaluation not counted);
  DP set-up = its 4,000-point true sample per unit, once a station. Ratios above 1 mean
  trainopt took longer or found more power.""")


def print_targets(results: list[dict]) -> None:
    print("\nDesign targets (medians over the demands):")
    for o in results:
        limit = TARGET_MEDIAN_SECONDS.get(o["units"])
        if limit is not None:
            print(f"  {o['family']:>6} {o['units']:2d} units solved in under {limit:g} s: "
                  f"solve {o['solve_med'] * 1e3:.1f} ms {verdict(o['solve_med'] < limit)}; "
                  f"answer {o['answer'] * 1e3:.1f} ms {verdict(o['answer'] < limit)}; "
                  f"optimize {o['optimize']:.2f} s {verdict(o['optimize'] < limit)}")
    for o in results:
        worst = max(o["rows"], key=lambda r: r["gap"])
        print(f"  {o['family']:>6} {o['units']:2d} units gap under {TARGET_GAP:.1%}: worst "
              f"{o['gap_max'] * 100:+.5f} % ({(worst['power'] - worst['reference']) / KW:+.3f} "
              f"kW) {verdict(o['gap_max'] < TARGET_GAP)}; "
              f"{TARGET_SPEEDUP:.0f}x faster than the NLP: solve {o['speedup_solve']:.0f}x "
              f"{verdict(o['speedup_solve'] >= TARGET_SPEEDUP)}, answer {o['speedup']:.1f}x "
              f"{verdict(o['speedup'] >= TARGET_SPEEDUP)}, cold {o['speedup_cold']:.1f}x "
              f"{verdict(o['speedup_cold'] >= TARGET_SPEEDUP)}")


def main() -> None:
    began = time.perf_counter()
    print(__doc__.split("\n\n")[0])
    print(f"Load average at start (1, 5, 15 min): {os.getloadavg()} on {os.cpu_count()} cores; "
          "wall times grow with it.")
    rng = np.random.default_rng(2024)
    results = []
    for family, path, plan in FAMILIES:
        base_case = trainopt.load_case(path)
        for count in SIZES:
            out = run_station(family, base_case, plan, count, rng)
            out.update(summarise(out))
            results.append(out)
            print_demands(out)
    print_summary(results)
    print_targets(results)
    print(f"\nLoad average at end: {os.getloadavg()}; "
          f"whole run {time.perf_counter() - began:.0f} s")


if __name__ == "__main__":
    main()
