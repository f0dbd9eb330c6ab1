"""The usual load-sharing practices, evaluated on the true model for comparison.

Each rule splits the same demand across a set of running units:

- **equal flow**: every running unit delivers the same net mass flow;
- **equal speed**: every running unit turns at the same fraction of its maximum speed;
- **equal margin**: every running unit keeps the same relative distance from its surge
  control line, ``(Q - Q_scl) / Q_scl`` (the usual load-sharing practice of anti-surge
  systems; common practice).

Each rule is applied twice (:func:`compare_baselines`): on the optimum's running set, and
on every available unit, as a station does that runs all its machines on load-sharing
control. The second comparison includes the value of choosing which units run.

A rule that would put any unit past its largest flow (stonewall, maximum speed, driver
power, discharge temperature, edge of the map) is infeasible, with the unit and the limit
named: no unit is held at its largest flow while the others carry on. A rule that asks
for less than a unit's least flow holds it on that end and makes it recycle, as an
anti-surge controller would.

Figures are compared in the unit of the objective solved (kW of shaft power or driver
input, currency/h) with the shaft power beside them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from trainopt.dispatch.reduction import LIMIT_NAMES, operate
from trainopt.station.reduced import evaluate_split

SAMPLES = 80
"""True-model samples per unit along its curve for the speed and margin rules [-]."""

RULE_WORDS = {"equal_speed": ("speed", "{:.1f} % of maximum speed", 100.0),
              "equal_margin": ("control-line margin", "a control-line margin of {:.1f} %",
                               100.0)}


@dataclass(frozen=True)
class RuleSplit:
    """A rule's net flows [kg/s] per unit, or why the rule cannot be run.

    Attributes
    ----------
    flows : dict of str to float
        Unit to net flow [kg/s]; empty when infeasible.
    reason : str
        Which unit the rule would put past which limit, in words; empty when it can run.
    """

    flows: dict
    reason: str = ""

    @property
    def feasible(self) -> bool:
        """Whether the rule can be run."""
        return not self.reason


def _scale(flows: np.ndarray, demand: float) -> float:
    """Below every unit's least flow the rule still splits in proportion (with recycle)."""
    total = flows.sum()
    return demand / total if total > demand else 1.0


def _limit_words(station, name: str) -> str:
    curve = station.curves[name]
    words = LIMIT_NAMES.get(curve.high_limit, str(curve.high_limit))
    return words + (f" ({curve.high_section})" if getattr(curve, "high_section", "") else "")


def _common_value_split(station, running, demand: float, rule: str, profiles) -> RuleSplit:
    """Split by one common value x of a non-decreasing profile per unit.

    Parameters
    ----------
    profiles : list of (numpy.ndarray, numpy.ndarray)
        Per unit: the rule's quantity along its through-flows and those flows [kg/s],
        from its least to its largest flow.
    """
    quantity, value_text, scale = RULE_WORDS[rule]
    for name, (v, _) in zip(running, profiles, strict=True):
        if not np.all(np.isfinite(v)):
            return RuleSplit({}, f"{name}: its {quantity} is not known along its whole flow "
                             "range (off the tested map), so the rule cannot be applied")
    ups = [(np.maximum.accumulate(v), m) for v, m in profiles]

    def share(x):
        return np.array([np.interp(x, v, m) for v, m in ups])

    tops = [float(v[-1]) for v, _ in ups]
    first = int(np.argmin(tops))
    x_top = tops[first]
    most = share(x_top)
    if most.sum() < demand * (1 - 1e-9):
        name = running[first]
        return RuleSplit({}, (
            f"{name} reaches its largest flow, {station.curves[name].max_flow:.2f} kg/s set by "
            f"the {_limit_words(station, name)}, at {value_text.format(scale * x_top)}; at "
            f"that common {quantity} the units carry {most.sum():.2f} kg/s of the "
            f"{demand:.2f} kg/s asked, and more would put {name} past its limit"))
    x_low = min(0.0, min(float(v[0]) for v, _ in ups))
    if share(x_low).sum() >= demand:
        x = x_low
    else:
        x = brentq(lambda t: share(t).sum() - demand, x_low, x_top, xtol=1e-12)
    flows = share(x)
    flows = flows * _scale(flows, demand)
    return RuleSplit(dict(zip(running, (float(f) for f in flows), strict=True)))


def baseline_splits(station, running: list[str], demand: float) -> dict[str, RuleSplit]:
    """Net flows [kg/s] per unit for each rule, or why the rule cannot be run.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
    running : list of str
        Units that run under the rule.
    demand : float
        Station net flow [kg/s].

    Returns
    -------
    dict of str to RuleSplit
        ``equal_flow``, ``equal_speed`` and ``equal_margin``.
    """
    running = list(dict.fromkeys(running))  # a series train has one row per section
    out = {}
    flow = demand / len(running)
    over = [n for n in running if flow > station.curves[n].max_flow * (1 + 1e-9)]
    out["equal_flow"] = (RuleSplit({n: flow for n in running}) if not over else RuleSplit(
        {}, f"{over[0]} cannot carry {flow:.2f} kg/s: its largest through-flow today is "
        f"{station.curves[over[0]].max_flow:.2f} kg/s, set by the "
        f"{_limit_words(station, over[0])}"))
    speed, margin = [], []
    for name in running:
        curve = station.curves[name]
        m = np.linspace(curve.min_flow, curve.max_flow, SAMPLES)
        fraction, scl = station.profile(name, m)
        speed.append((np.asarray(fraction, float), m))
        margin.append((np.asarray(scl, float), m))
    out["equal_speed"] = _common_value_split(station, running, demand, "equal_speed", speed)
    out["equal_margin"] = _common_value_split(station, running, demand, "equal_margin", margin)
    return out


def objective_unit(objective: str, currency: str) -> str:
    """The unit the objective is compared in: ``kW``, or ``<currency>/h`` for cost."""
    return f"{currency}/h" if objective == "cost" else "kW"


def _objective_display(result) -> float:
    """The result's objective in its display unit: kW, or currency/h for cost."""
    value = result.objective_value()
    return value * 3600.0 if result.objective == "cost" else value / 1e3


def contrast_in_words(objective: str, objective_saving: float, shaft_saving_kW: float,
                      input_saving_kW: float, cost_saving: float, cost_unit: str,
                      against: str = "the rule", energy_unit: str = "kW") -> str:
    """Say why the savings' signs differ, or nothing when they agree.

    Parameters
    ----------
    objective : str
        ``shaft_power``, ``energy_input`` or ``cost``: what the optimum minimised.
    objective_saving : float
        The other split's objective less the optimum's, in the objective's unit.
    shaft_saving_kW, input_saving_kW : float
        The other split's shaft power and driver input less the optimum's [kW] (or
        energies in any one unit).
    cost_saving : float
        The other split's cost less the optimum's, in ``cost_unit``.
    cost_unit : str
        ``USD/h`` for rates, ``USD`` for a period's totals.
    against : str
        What the optimum is compared with, for the sentence.
    energy_unit : str
        The unit of the shaft and driver-input figures (``kW``; ``MWh`` for energies).

    Returns
    -------
    str
        Empty when every saving has the objective's sign.
    """
    if objective_saving < 0:
        return ""
    words = []
    if shaft_saving_kW < 0:
        words.append(f"{-shaft_saving_kW:.0f} {energy_unit} more shaft power")
    if input_saving_kW < 0 and objective != "energy_input":
        words.append(f"{-input_saving_kW:.0f} {energy_unit} more driver input")
    if cost_saving < 0 and objective != "cost":
        words.append(f"{-cost_saving:.0f} {cost_unit} more cost")
    if not words:
        return ""
    aim = {"shaft_power": "least shaft power", "energy_input": "least driver input",
           "cost": "least cost"}[objective]
    why = []
    if objective == "cost":
        why.append("it loads the drivers whose energy is cheaper at the case's prices, even "
                   "where they use more of it")
    if objective == "shaft_power" and input_saving_kW < 0:
        why.append("the compressors it loads need less shaft power, but their drivers turn "
                   "less of their input into shaft power")
    if objective == "energy_input" and shaft_saving_kW < 0:
        why.append("it loads the more efficient drivers, even where their compressors take "
                   "more shaft power")
    if objective != "cost" and cost_saving < 0:
        why.append("at the case's prices the energy it adds costs more than the energy it "
                   "saves")
    if objective != "cost" and cost_saving >= 0 and input_saving_kW < 0:
        why.append(f"the extra input is the cheaper kind, so it still costs {cost_saving:.0f} "
                   f"{cost_unit} less")
    return (f"the optimum is chosen for {aim}; against {against} it uses "
            f"{' and '.join(words)}: {'; '.join(why)}")


class _Totals:
    """A rule split's station totals on the true model, as a result table would sum them.

    Only what the comparison reads: shaft power, driver input, cost and recycle per
    running unit, each as the result table's row holds it (``unit_rows``) and summed in
    the same order, so every figure is the one a full
    :func:`~trainopt.station.reduced.evaluate_split` gives.
    """

    status = "evaluated"

    def __init__(self, objective: str, columns: dict[str, np.ndarray]):
        self.objective = objective
        self._totals = {k: float(np.nansum(v)) for k, v in columns.items()}

    def total(self, column: str) -> float:
        """Station total of a column (as :meth:`StationResult.total`)."""
        return self._totals.get(column, 0.0)

    @property
    def total_shaft_power(self) -> float:
        """[W]."""
        return self._totals["shaft_power_kW"] * 1e3

    def objective_value(self) -> float:
        """W for power and energy, currency/s for cost."""
        key = {"shaft_power": "shaft_power_kW", "energy_input": "driver_input_kW",
               "cost": "cost_per_h"}[self.objective]
        scale = 1e3 if key.endswith("kW") else 1 / 3600.0
        return self._totals[key] * scale


class _TrueModel:
    """The rules' splits on the true model: one vectorised operation per unit.

    Every through-flow any rule asks of a single-section unit is operated in one call of
    :func:`~trainopt.dispatch.reduction.operate` (a flow two rules share once); the
    exact compression of each row (CoolProp), the margins and the result table are not
    computed, since the comparison shows only totals. A split with a series train, or one
    a unit cannot carry, is evaluated in full by
    :func:`~trainopt.station.reduced.evaluate_split`.
    """

    def __init__(self, station, splits):
        self.station = station
        self._figures: dict[tuple[str, float], tuple[float, float]] = {}
        wanted: dict[str, set[float]] = {}
        for split in splits:
            through = self._through(split.flows) if split.feasible else None
            for name, m in (through or {}).items():
                wanted.setdefault(name, set()).add(m)
        case = station.case
        for name, flows in wanted.items():
            train = case.train(name)
            m = np.array(sorted(flows))
            op = operate(train, station.duty(train), m, case.ambient_temperature,
                         station.throttle)
            for i, flow in enumerate(m.tolist()):
                self._figures[name, flow] = (float(op.shaft_power[i]),
                                             float(op.energy_input[i]))

    def _through(self, net: dict) -> dict | None:
        """Through-flows [kg/s] as evaluate_split sets them; None to evaluate in full."""
        through = {}
        for name, m in net.items():
            curve = self.station.curves[name]
            if (not curve.feasible or m > curve.max_flow * (1 + 1e-9)
                    or not self.station.case.train(name).is_single_section):
                return None
            through[name] = max(m, curve.min_flow)
        return through

    def evaluate(self, net: dict):
        """The split's totals (:class:`_Totals`), or the full result where needed."""
        through = self._through(net)
        if through is None:
            return evaluate_split(self.station, net)
        station, case = self.station, self.station.case
        columns = {k: np.full(len(case.trains), np.nan) for k in
                   ("shaft_power_kW", "driver_input_kW", "cost_per_h", "recycle_kg_s")}
        for i, train in enumerate(case.trains):
            m = through.get(train.name, 0.0)
            if m <= 0.0:
                continue
            shaft, energy = self._figures[train.name, m]
            price, _ = station.price(train)
            columns["shaft_power_kW"][i] = shaft / 1e3
            columns["driver_input_kW"][i] = energy / 1e3
            columns["cost_per_h"][i] = energy * price * 3600.0
            columns["recycle_kg_s"][i] = m - net[train.name]
        return _Totals(station.objective, columns)


def _entry(station, optimum: dict, split: RuleSplit, rule: str, running: list[str],
           true_model: _TrueModel) -> dict:
    currency = station.case.economics.currency
    entry = {"status": "feasible" if split.feasible else "infeasible",
             "reason": split.reason, "running_units": list(running),
             "net_mass_flow_kg_s": {k: float(v) for k, v in split.flows.items()},
             "objective_unit": objective_unit(station.objective, currency)}
    if not split.feasible:
        return entry
    res = true_model.evaluate(split.flows)
    if res.status == "infeasible":
        entry.update(status="infeasible", reason=res.reason)
        return entry
    power, best_power = res.total_shaft_power, optimum["shaft"]
    value, best_value = _objective_display(res), optimum["value"]
    shaft_saving = (power - best_power) / 1e3
    input_saving = res.total("driver_input_kW") - optimum["input"]
    cost_saving = res.total("cost_per_h") - optimum["cost"]
    entry.update({
        "total_shaft_power_kW": power / 1e3,
        "total_driver_input_kW": res.total("driver_input_kW"),
        "total_cost_per_h": res.total("cost_per_h"),
        "total_recycle_kg_s": res.total("recycle_kg_s"),
        "saving_kW": shaft_saving,
        "saving_pct": 100.0 * (power - best_power) / power if power > 0 else 0.0,
        "total_objective": value,
        "objective_saving": value - best_value,
        "objective_saving_pct": 100.0 * (value - best_value) / value if value > 0 else 0.0,
        "note": contrast_in_words(station.objective, value - best_value, shaft_saving,
                                  input_saving, cost_saving, f"{currency}/h",
                                  rule.replace("_", " ")),
    })
    return entry


def running_units(optimum) -> list[str]:
    """The units running in a result, each once, in table order."""
    table = optimum.units
    if "running" not in table or table.empty:
        return []
    mask = table["running"].to_numpy(dtype=bool)
    return list(dict.fromkeys(table["name"].to_numpy()[mask].tolist()))


def _compare(station, optimum, demand: float, unit_sets: list[list[str]]) -> list[dict]:
    """Each rule on each set of units, the true model run once for all of them."""
    splits = [baseline_splits(station, units, demand) if units else {}
              for units in unit_sets]
    true_model = _TrueModel(station, [s for rules in splits for s in rules.values()])
    best = {"shaft": optimum.total_shaft_power, "value": _objective_display(optimum),
            "input": optimum.total("driver_input_kW"), "cost": optimum.total("cost_per_h")}
    return [{rule: _entry(station, best, split, rule, units, true_model)
             for rule, split in rules.items()}
            for units, rules in zip(unit_sets, splits, strict=True)]


def compare_baselines(station, optimum, demand: float, units: list[str] | None = None) -> dict:
    """Evaluate each rule and the optimum's saving against it.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
    optimum : trainopt.station.result.StationResult
    demand : float
        [kg/s].
    units : list of str, optional
        The units the rules run; the optimum's running set by default.

    Returns
    -------
    dict
        Per rule: ``status``, ``reason``, ``running_units``, the split, the objective,
        shaft power, driver input and cost totals, and the optimum's savings (see
        ``docs/results.md``).
    """
    if units is None:
        units = running_units(optimum)
    if not units:
        return {}
    return _compare(station, optimum, demand, [units])[0]


def available_units(station) -> list[str]:
    """Units a station could run today: not offline, and able to meet today's duty."""
    return [n for n, c in station.curves.items() if c.feasible]


def compare_all_units(station, optimum, demand: float, running_set: dict | None = None
                      ) -> dict:
    """Each rule on every available unit (a station running every machine on load sharing).

    ``running_set`` (the comparison on the optimum's running set) is reused when the
    optimum already runs every available unit.
    """
    units = available_units(station)
    if running_set is not None and set(running_units(optimum)) == set(units):
        return running_set
    return compare_baselines(station, optimum, demand, units)


def compare_both(station, optimum, demand: float) -> tuple[dict, dict]:
    """:func:`compare_baselines` and :func:`compare_all_units` in one pass.

    The true model is operated once per unit for every split of both comparisons; when
    the optimum runs every available unit the two are the same comparison.

    Returns
    -------
    tuple of dict
        On the optimum's running set, and on every available unit.
    """
    running, units = running_units(optimum), available_units(station)
    if set(running) == set(units):
        same = compare_baselines(station, optimum, demand, running)
        return same, same
    on_running, on_all = _compare(station, optimum, demand, [running, units])
    return on_running, on_all
