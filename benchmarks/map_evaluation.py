"""Map evaluations per second: vectorised numpy calls against a point-by-point loop.

Run: ``python benchmarks/map_evaluation.py``. Uses the invented demo motor-unit map
(cases/demo/maps/motor_unit.yaml, fitted: 12 monomials in head) and the GasLib-135
published fit (tests/data/gaslib, CC BY 3.0; 9 monomials). Points are spread at random
over each map's tested domain. The loop calls the same method one scalar point at a time,
as code that ignores vectorisation would.
"""

import time
from pathlib import Path

import numpy as np

from trainopt.machines.maps import CompressorMap, load_map

ROOT = Path(__file__).resolve().parents[1]
MAPS = {
    "demo motor unit (fitted)": ROOT / "cases/demo/maps/motor_unit.yaml",
    "GasLib-135 (published fit)": ROOT / "tests/data/gaslib/gaslib135_coefficients.yaml",
}
VECTOR_POINTS = 100_000
LOOP_POINTS = 1_000
EVALUATIONS = {  # name: call on (map, flow, speed, head)
    "head(Q, N)": lambda m, q, n, h: m.head(q, n, warn=False),
    "efficiency(Q, N)": lambda m, q, n, h: m.efficiency(q, n, warn=False),
    "speed_for(Q, H)": lambda m, q, n, h: m.speed_for(q, h),
    "flow_for(N, H)": lambda m, q, n, h: m.flow_for(n, h),
    "surge_flow_at_head(H)": lambda m, q, n, h: m.surge_flow_at_head(h),
}


def best_time(call, repeats: int = 3) -> float:
    """Shortest wall time of ``call()`` over a few repeats [s]."""
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        call()
        times.append(time.perf_counter() - start)
    return min(times)


def rates(m: CompressorMap, evaluation, flow, speed, head) -> tuple[float, float]:
    """Evaluations per second, vectorised over all points and looped over the first few."""
    vector = len(flow) / best_time(lambda: evaluation(m, flow, speed, head))

    def loop():
        for i in range(LOOP_POINTS):
            evaluation(m, flow[i], speed[i], head[i])

    return vector, LOOP_POINTS / best_time(loop)


def main() -> None:
    rng = np.random.default_rng(617)
    print(f"{'map':28s} {'evaluation':22s} {'vectorised /s':>14s} {'loop /s':>10s} "
          f"{'speed-up':>9s}")
    for label, path in MAPS.items():
        m = load_map(path)
        speed = rng.uniform(m.speed_min, m.speed_max, VECTOR_POINTS)
        surge, stonewall = m.surge_flow_at_speed(speed), m.stonewall_flow_at_speed(speed)
        flow = surge + rng.uniform(0, 1, VECTOR_POINTS) * (stonewall - surge)
        head = m.head(flow, speed)
        for name, evaluation in EVALUATIONS.items():
            vector, loop = rates(m, evaluation, flow, speed, head)
            print(f"{label:28s} {name:22s} {vector:14.3g} {loop:10.3g} {vector / loop:8.0f}x")
    print(f"({VECTOR_POINTS} points in one vectorised call; {LOOP_POINTS} scalar calls in the "
          "loop; best of 3)")


if __name__ == "__main__":
    main()
