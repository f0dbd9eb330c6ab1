"""The usual load-sharing practices, evaluated on the true model for comparison.

Each baseline keeps the optimum's commitment (the same units run) and splits the same
demand by a rule:

- **equal flow**: every running unit delivers the same net mass flow;
- **equal speed**: every running unit turns at the same fraction of its maximum speed;
- **equal margin**: every running unit keeps the same relative distance from its surge
  control line, ``(Q - Q_scl) / Q_scl`` (the usual load-sharing practice of anti-surge
  systems; common practice).

A rule that asks a unit for more than it can carry is reported infeasible with the
reason; a rule that asks for less than a unit's least flow makes it recycle.
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import brentq

from trainopt.station.reduced import evaluate_split


def _net_for_total(share, total: float, lo_x: float, hi_x: float):
    """Find x with sum(share(x)) = total by bisection; share is non-decreasing in x."""
    f_lo, f_hi = share(lo_x).sum() - total, share(hi_x).sum() - total
    if f_lo >= 0:
        return lo_x
    if f_hi <= 0:
        return hi_x
    return brentq(lambda x: share(x).sum() - total, lo_x, hi_x, xtol=1e-12)


def baseline_splits(station, running: list[str], demand: float) -> dict[str, dict[str, float]]:
    """Net flows [kg/s] per unit for each baseline rule.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
    running : list of str
        Units that run (the optimum's commitment).
    demand : float
        Station net flow [kg/s].

    Returns
    -------
    dict
        Rule name to {unit: net flow}.
    """
    running = list(dict.fromkeys(running))  # a series train has one row per section
    curves = [station.curves[n] for n in running]
    out = {"equal_flow": {n: demand / len(running) for n in running}}

    # Equal speed: through-flow of each unit against speed, sampled along its curve.
    samples, scl = [], []
    for name, curve in zip(running, curves, strict=True):
        m = np.linspace(curve.min_flow, curve.max_flow, 80)
        fraction, margin = station.profile(name, m)
        samples.append((fraction, m))
        scl.append((margin, m))

    def by_speed(x):
        return np.array([np.interp(x, s, m) for s, m in samples])

    x = _net_for_total(by_speed, demand, 0.0, 2.0)
    out["equal_speed"] = dict(zip(running, by_speed(x) * _scale(by_speed(x), demand),
                                  strict=True))

    # Equal margin to the surge control line.
    def by_margin(x):
        return np.array([np.interp(x, d, m) for d, m in scl])

    # search up to the largest sampled margin: wide maps reach several hundred per cent
    x = _net_for_total(by_margin, demand, 0.0, max(float(np.max(d)) for d, _ in scl))
    out["equal_margin"] = dict(zip(running, by_margin(x) * _scale(by_margin(x), demand),
                                   strict=True))
    return out


def _scale(flows: np.ndarray, demand: float) -> float:
    """Below every unit's least flow the rule still splits in proportion (with recycle)."""
    total = flows.sum()
    return demand / total if total > demand else 1.0


def compare_baselines(station, optimum, demand: float) -> dict:
    """Evaluate each baseline and the optimum's saving against it.

    Parameters
    ----------
    station : trainopt.station.reduced.Station
    optimum : trainopt.station.result.StationResult
    demand : float
        [kg/s].

    Returns
    -------
    dict
        Per rule: ``status``, ``reason``, objective and shaft power totals, and the
        optimum's saving in kW and per cent.
    """
    running = list(dict.fromkeys(r["name"] for r in optimum.units.to_dict("records")
                                 if r.get("running")))
    if not running:
        return {}
    best_power = optimum.total_shaft_power
    out = {}
    for rule, split in baseline_splits(station, running, demand).items():
        res = evaluate_split(station, split)
        entry = {"status": "feasible" if res.status != "infeasible" else "infeasible",
                 "reason": res.reason,
                 "net_mass_flow_kg_s": {k: float(v) for k, v in split.items()}}
        if res.status != "infeasible":
            power = res.total_shaft_power
            entry.update({
                "total_shaft_power_kW": power / 1e3,
                "total_recycle_kg_s": res.total("recycle_kg_s"),
                "saving_kW": (power - best_power) / 1e3,
                "saving_pct": 100.0 * (power - best_power) / power if power > 0 else 0.0,
            })
        out[rule] = entry
    return out
