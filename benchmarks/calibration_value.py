"""The value of calibrating, and the time to calibrate a year of hourly history.

On the INVENTED demo station (``cases/demo/station.yaml``) with an INVENTED wear of its four
units (``TRUE_WEAR``; no real machine or data), this script:

1. makes a year of hourly history of the worn units (seeded;
   :func:`trainopt.studies.calibration_synthetic.synthetic_history`, instrument noise of
   :class:`~trainopt.studies.calibration_synthetic.InstrumentNoise`: pressure 0.1 %,
   temperature 0.5 K, flow 1 %, speed 0.05 %, all assumptions), writes it as CSV and
   calibrates the demo's as-new maps to it with :func:`trainopt.studies.calibration.calibrate`
   (timed, against the time of reading the same file alone, measured in the same run;
   target under 30 s on 2 cores);
2. at several demands and discharge pressures, chooses a split three ways and evaluates
   each on the worn machines (the truth): on the as-new maps, on the calibrated maps, and on
   the worn maps themselves (the true optimum). It prints the excess power of the first two
   over the true optimum.

Run: ``python benchmarks/calibration_value.py`` (about a minute on two cores).
"""

from __future__ import annotations

import dataclasses
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np
import yaml

import trainopt
from trainopt.machines.degradation import Degradation
from trainopt.station.split import evaluate, optimize
from trainopt.studies.calibration import calibrate, calibrated_case
from trainopt.studies.calibration_synthetic import synthetic_history
from trainopt.studies.history_reader import read_history

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "cases" / "demo" / "station.yaml"
HOURS = 8760
TARGET_SECONDS = 30.0
TRUE_WEAR = {
    "A": Degradation(head_factor=0.97, efficiency_factor=0.96),
    "B": Degradation(head_factor=0.99, efficiency_factor=0.985),
    "C": Degradation(head_factor=0.95, efficiency_factor=0.92),
    "D": Degradation(head_factor=0.93, efficiency_factor=0.88),
}
"""Invented wear of the demo units (demo data, not a measurement)."""

DEMANDS = (0.6, 0.8, 1.0, 1.15)   # share of the case demand (44 MMSCMD)
DISCHARGE_BAR = (62.0, 66.0, 70.0)


def _split(result) -> dict[str, float]:
    units = result.units
    running = units[units["running"].astype(bool)]
    return dict(zip(running["name"], running["net_mass_flow_kg_s"], strict=True))


def _power(result) -> float:
    return np.nan if result.status == "infeasible" else result.total_shaft_power


def main() -> None:
    warnings.simplefilter("ignore")
    as_new = trainopt.load_case(DEMO)
    truth = calibrated_case(as_new, TRUE_WEAR)
    with tempfile.TemporaryDirectory() as folder:
        folder = Path(folder)
        t0 = time.perf_counter()
        frame, mapping = synthetic_history(as_new, TRUE_WEAR, HOURS, seed=2026)
        frame.to_csv(folder / "history.csv", index=False)
        (folder / "columns.yaml").write_text(yaml.safe_dump(mapping))
        made = time.perf_counter() - t0
        t0 = time.perf_counter()
        read_history(folder / "history.csv", folder / "columns.yaml", as_new)
        read = time.perf_counter() - t0
        t0 = time.perf_counter()
        result = calibrate(DEMO, folder / "history.csv", folder / "columns.yaml")
        took = time.perf_counter() - t0
    print(f"Calibration of {HOURS} hourly rows x {len(as_new.trains)} units "
          f"(history made in {made:.1f} s, invented):")
    print(f"  calibrate (read + steady windows + reduction + fit + trend): {took:6.2f} s   "
          f"target < {TARGET_SECONDS:.0f} s: {'met' if took < TARGET_SECONDS else 'MISSED'}")
    print(f"  reference, reading the same file alone (read_history):      {read:6.2f} s")
    print()
    f = result.factors.set_index("unit")
    print("unit  true head  fitted head (se)      true eff  fitted eff (se)       points")
    for u, w in TRUE_WEAR.items():
        print(f"{u:>4}  {w.head_factor:9.4f}  {f.loc[u, 'head_factor']:.4f} "
              f"({f.loc[u, 'head_factor_se']:.4f})   {w.efficiency_factor:8.4f}  "
              f"{f.loc[u, 'efficiency_factor']:.4f} ({f.loc[u, 'efficiency_factor_se']:.4f})"
              f"  {f.loc[u, 'points']:6d}")
    calibrated = result.case
    print()
    print("Split chosen on each model, evaluated on the worn machines (shaft power, MW):")
    print(" demand  p2 bar   true optimum   as-new split (excess)   calibrated split (excess)")
    excess_new, excess_cal, reasons = [], [], []
    for share in DEMANDS:
        for p2 in DISCHARGE_BAR:
            def at(case, p2=p2):
                return dataclasses.replace(case, discharge_pressure=p2 * 1e5)
            demand = f"{share * 44:.2f} MMSCMD"
            best = optimize(at(truth), demand)
            if best.status != "optimal":
                print(f" {demand:>14} {p2:5.0f}   worn station cannot carry it")
                continue
            row = [_power(best)]
            for label, model in (("as-new", as_new), ("calibrated", calibrated)):
                chosen = optimize(at(model), demand)
                if chosen.status != "optimal":
                    row.append(np.nan)
                    reasons.append(f"{demand} {p2:.0f} bar, {label}: no split ({chosen.reason})")
                    continue
                checked = evaluate(at(truth), _split(chosen))
                row.append(_power(checked))
                if checked.status == "infeasible":
                    reasons.append(f"{demand} {p2:.0f} bar, {label} split on the worn "
                                   f"machines: {checked.reason}")
            new_x = 100 * (row[1] / row[0] - 1)
            cal_x = 100 * (row[2] / row[0] - 1)
            excess_new.append(new_x)
            excess_cal.append(cal_x)
            new_text, cal_text = ("infeasible on worn" if np.isnan(value) else
                                  f"{value / 1e6:7.3f} ({x:+.2f} %)"
                                  for value, x in ((row[1], new_x), (row[2], cal_x)))
            print(f" {demand:>14} {p2:5.0f}   {row[0] / 1e6:10.3f}   {new_text:>22}   "
                  f"{cal_text:>22}")
    print()
    for name, values in (("as-new maps", excess_new), ("calibrated maps", excess_cal)):
        ok = [x for x in values if np.isfinite(x)]
        print(f"{name:>16}: mean excess over the true optimum {np.mean(ok):+.3f} %, largest "
              f"{np.max(ok):+.3f} %, {len(values) - len(ok)} of {len(values)} splits "
              "infeasible on the worn machines")
    for text in reasons:
        print("  " + text[:160])


if __name__ == "__main__":
    main()
