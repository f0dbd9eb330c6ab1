"""The history audit of an invented year (8,760 hours, 4 units) against the plain approach.

Run from the repository root::

    python benchmarks/audit_year.py [--workers 2] [--sample 30]

It prints, in one run:

1. the binned audit of ``cases/demo/history/station_history.csv`` (conditions quantised,
   one reduction per bin, one dispatch model per bin, bins spread over the cores): wall
   time, bins, reductions, solves;
2. the plain approach, rebuilding everything every hour (a Station at the row's exact
   conditions, the recorded split on its true model, ``trainopt.optimize`` for the
   optimum), timed on ``--sample`` hours spread over the year and **extrapolated** to the
   year's audited hours;
3. the error the binning causes on those sampled hours: recorded-split power, optimum
   power and avoidable power of the audit against the plain approach's, row by row and
   summed.

The demo data are invented (see ``cases/demo/history/make_history.py``).
"""

from __future__ import annotations

import argparse
import dataclasses
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
CASE = ROOT / "cases" / "demo" / "station.yaml"
HISTORY = ROOT / "cases" / "demo" / "history" / "station_history.csv"
COLUMNS = ROOT / "cases" / "demo" / "history" / "columns.yaml"


def plain_hour(case, gas, row, units) -> tuple[float, float]:
    """Recorded-split and optimum shaft power [W] rebuilt from scratch for one hour."""
    import trainopt
    from trainopt.dispatch.reduction import operate
    from trainopt.machines.train import UnitStatus
    from trainopt.station.reduced import Station

    trains = tuple(dataclasses.replace(t, status=UnitStatus.AVAILABLE) for t in case.trains)
    exact = dataclasses.replace(case, gas=gas, trains=trains,
                                suction_pressure=row.suction_pressure_bar * 1e5,
                                discharge_pressure=row.discharge_pressure_bar * 1e5,
                                suction_temperature=row.suction_temperature_C + 273.15,
                                ambient_temperature=row.ambient_temperature_C + 273.15)
    station = Station(exact)
    actual = 0.0
    for _, u in units.iterrows():
        if u.through_mass_flow_kg_s > 0:
            train = exact.train(u.unit)
            actual += float(operate(train, station.duty(train), u.through_mass_flow_kg_s,
                                    exact.ambient_temperature).shaft_power[0])
    offline = [u.unit for _, u in units.iterrows() if not u.available]
    best = trainopt.optimize(exact, demand=float(units.net_mass_flow_kg_s.sum()),
                             offline=offline, baselines=False)
    return actual, best.total_shaft_power


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="history audit benchmark")
    parser.add_argument("--workers", type=int, default=None)
    parser.add_argument("--sample", type=int, default=30)
    args = parser.parse_args(argv)

    import trainopt
    from trainopt.physics.gas import Gas
    from trainopt.studies.audit import audit_history, gas_recipes
    from trainopt.studies.history_reader import read_history

    if not HISTORY.is_file():
        sys.stdout.write(f"{HISTORY} is missing: run cases/demo/history/make_history.py\n")
        return 2
    start = time.perf_counter()
    case = trainopt.load_case(CASE)
    history = read_history(HISTORY, COLUMNS, case)
    read_seconds = time.perf_counter() - start
    start = time.perf_counter()
    result = audit_history(case, history, workers=args.workers, progress=True)
    audit_seconds = time.perf_counter() - start
    totals = result.totals()
    bins = result.bins
    sys.stdout.write(
        f"binned audit: {totals['rows_audited']} rows audited of {totals['rows_read']} in "
        f"{audit_seconds:.1f} s (+ {read_seconds:.1f} s to load the case and read the file); "
        f"{len(bins)} bins, {int(bins['reductions'].sum())} reductions, "
        f"{int(bins['solves'].sum())} dispatch solves\n")

    audited = result.audited
    rng = np.random.default_rng(1)
    picks = np.sort(rng.choice(len(audited), size=min(args.sample, len(audited)),
                               replace=False))
    gases = {label: Gas.from_composition(dict(c), e)
             for label, (c, e) in gas_recipes(case, history).items()}
    u = result.unit_hours.set_index("time")
    available = {name: history.frame.get(f"{name}.available") for name in u["unit"].unique()}
    rows = []
    start = time.perf_counter()
    for i in picks:
        row = audited.iloc[i]
        stamp = audited.index[i]
        units = u.loc[stamp].reset_index()
        units["available"] = [bool(available[n].loc[stamp]) if available[n] is not None
                              else True for n in units["unit"]]
        actual, best = plain_hour(case, gases[row.gas], row, units)
        rows.append((row.shaft_power_kW * 1e3, row.optimum_shaft_power_kW * 1e3, actual, best))
    plain_seconds = (time.perf_counter() - start) / len(picks)
    data = np.array(rows)
    err_actual = data[:, 0] / data[:, 2] - 1
    err_best = data[:, 1] / data[:, 3] - 1
    avoid_binned, avoid_plain = data[:, 0] - data[:, 1], data[:, 2] - data[:, 3]
    year = plain_seconds * totals["rows_audited"]
    change = 100 * (avoid_binned.sum() / avoid_plain.sum() - 1)
    lines = [
        f"plain approach: {plain_seconds:.2f} s per hour on {len(picks)} sampled hours; "
        f"extrapolated to {totals['rows_audited']} hours: {year:.0f} s ({year / 3600:.1f} h, "
        f"one core), {year / audit_seconds:.0f} times the binned audit",
        "binning error on the sampled hours (binned / plain - 1):",
        f"  recorded-split power: mean {100 * err_actual.mean():+.3f} %, largest "
        f"{100 * np.abs(err_actual).max():.3f} %",
        f"  optimum power:        mean {100 * err_best.mean():+.3f} %, largest "
        f"{100 * np.abs(err_best).max():.3f} %",
        f"  avoidable power: sum {avoid_binned.sum() / 1e3:.0f} kW binned against "
        f"{avoid_plain.sum() / 1e3:.0f} kW plain ({change:+.2f} %); largest row difference "
        f"{np.abs(avoid_binned - avoid_plain).max() / 1e3:.0f} kW",
        f"year totals: shaft {totals['shaft_energy_MWh']:.0f} MWh, recycle "
        f"{totals['recycle_energy_MWh']:.0f} MWh, avoidable "
        f"{totals['avoidable_energy_MWh']:.0f} MWh",
    ]
    sys.stdout.write("\n".join(lines) + "\n")
    return 0



if __name__ == "__main__":
    raise SystemExit(main())
