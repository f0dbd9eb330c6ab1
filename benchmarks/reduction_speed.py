"""The least-power reduction: the vectorised speed solve against the point-wise reference.

Run: ``python benchmarks/reduction_speed.py``. On the invented demo station
(cases/demo/station.yaml, four units, three distinct curves) it prints, side by side and
measured in the same run:

1. one true-model sweep of a unit over the reduction's 241 flows: the reference method
   (fixed-point iteration on efficiency, each pass inverting the map for speed with
   :meth:`CompressorMap.speed_for`, the method the reduction used before) against
   :func:`trainopt.dispatch.unit_operation.operate` (one speed scan and bracketed secant
   steps on the whole array), with the largest difference in shaft power between them;
2. the whole station reduction (:class:`trainopt.station.reduced.Station`), with the duty
   table built (new conditions) and kept (same conditions, new demand);
3. ``trainopt.optimize`` per new demand, in process, reduction included (median of 15
   demands), with and without the load-sharing baselines.
"""

from __future__ import annotations

import time
from pathlib import Path

import numpy as np
from map_evaluation import best_time

import trainopt
from trainopt.dispatch.reduction import FINE_POINTS
from trainopt.dispatch.unit_operation import operate
from trainopt.station import reduced
from trainopt.station.reduced import Station

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "cases" / "demo" / "station.yaml"


def reference_shaft_power(train, duty, mass_flow) -> np.ndarray:
    """Shaft power [W] by the point-wise reference: fixed point on efficiency, speed_for."""
    section = train.sections[0]
    cmap = section.compressor_map
    q = mass_flow / duty.suction.density
    eta = np.full_like(q, 0.8)
    for _ in range(6):
        n = cmap.speed_for(q, duty.head(eta))
        new = np.where(np.isfinite(n), cmap.efficiency(q, n, warn=False), np.nan)
        eta = np.where(np.isfinite(new), new, eta)
    n = cmap.speed_for(q, duty.head(eta))
    eta = cmap.efficiency(q, n, warn=False)
    return mass_flow * duty.specific_work(eta) * (1.0 + train.mechanical_loss)


def best(call) -> float:
    """Shortest wall time of ``call()`` over five repeats [s]."""
    return best_time(call, repeats=5)


def main() -> None:
    case = trainopt.load_case(DEMO)
    station = Station(case)
    print(f"{'true-model sweep of 241 flows':34s} {'reference':>11s} {'vectorised':>11s} "
          f"{'ratio':>7s} {'max |dP|/P':>11s}")
    for name in ("A", "C", "D"):
        train = case.train(name)
        duty = station.duty(train)
        curve = station.curves[name]
        m = np.linspace(0.9 * curve.min_flow, 1.05 * curve.max_flow, FINE_POINTS)
        old = best(lambda: reference_shaft_power(train, duty, m))  # noqa: B023
        new = best(lambda: operate(train, duty, m, case.ambient_temperature))  # noqa: B023
        p_old = reference_shaft_power(train, duty, m)
        p_new = operate(train, duty, m, case.ambient_temperature).shaft_power
        both = np.isfinite(p_old) & np.isfinite(p_new)
        diff = np.max(np.abs(p_new[both] / p_old[both] - 1.0))
        print(f"{'unit ' + name:34s} {old * 1e3:9.1f} ms {new * 1e3:9.1f} ms "
              f"{old / new:6.1f}x {diff:11.1e}")
    print("(the reference is the method the reduction used before; the difference is the "
          "solvers' tolerances, 1e-9 of the head)")

    def cold():
        reduced._duty.cache_clear()
        Station(case)

    print()
    print(f"{'station reduction, 4 units':34s} {'time':>11s}")
    print(f"{'  duty table built (new conditions)':34s} {best(cold) * 1e3:9.1f} ms")
    print(f"{'  duty table kept (new demand)':34s} {best(lambda: Station(case)) * 1e3:9.1f} ms")

    print()
    for baselines in (False, True):
        times = []
        for k in range(15):
            start = time.perf_counter()
            trainopt.optimize(case, f"{20 + 2 * k} MMSCMD", baselines=baselines)
            times.append(time.perf_counter() - start)
        label = "optimize per demand" + (" + baselines" if baselines else "")
        print(f"{label:34s} median {np.median(times) * 1e3:7.1f} ms "
              f"(min {min(times) * 1e3:.1f}, max {max(times) * 1e3:.1f})")
    print("design target: optimize per new demand, reduction included, median under 60 ms")


if __name__ == "__main__":
    main()
