"""Web API answer time for a new demand, against a cold ``trainopt.optimize`` in the same run.

The demo station (``cases/demo/station.yaml``, INVENTED data) is served in-process
(FastAPI's test client, no network). After one request at the case's conditions (which
reduces the station), each of a spread of demands not asked before is sent to
``GET /api/optimize``; its server time is read from the answer's ``Server-Timing`` header
(from the request's arrival in the endpoint to the JSON text ready) and its wall time
around the client call (framework and transport included); the header also carries the
CPU time of the answering thread, which other work on a shared machine stretches less.
The reference is ``trainopt.optimize(case, demand)`` for the same demands, each from the loaded case
(reduction included): what a program without a kept station pays per question.
Both give the same split (checked here on the total shaft power).

Most of an answer on a kept station used to be the sharing rules' comparison. Its two ways
are timed side by side on the same kept station and answers: the totals-only comparison
(``trainopt.station.baselines.compare_both``: one vectorised true-model operation per unit
for every rule split) and, as before, a full result table per rule split
(``evaluate_split``: CoolProp compression, margins and a pandas table per row); both give
the same totals (checked).

Run: ``PYTHONPATH=$PWD python benchmarks/web_answer.py``. Target: median server time
under 100 ms.
"""

import os
import statistics
import time
from pathlib import Path

from fastapi.testclient import TestClient

import trainopt
from trainopt.station.baselines import baseline_splits, compare_both
from trainopt.station.reduced import evaluate_split
from trainopt.web import create_app
from trainopt.web.inputs import read_conditions

DEMO = Path(__file__).resolve().parents[1] / "cases" / "demo" / "station.yaml"
DEMANDS = [f"{d:.1f} MMSCMD" for d in (30.3, 31.7, 33.2, 34.6, 35.9, 37.4, 38.8, 40.1, 41.5,
                                       42.2, 43.0, 44.4)]


def main() -> None:
    case = trainopt.load_case(DEMO)
    web = create_app(case)
    client = TestClient(web)
    start = time.perf_counter()
    assert client.get("/api/optimize").status_code == 200
    first = time.perf_counter() - start
    server, cpu, wall, powers = [], [], [], []
    for demand in DEMANDS:
        start = time.perf_counter()
        answer = client.get("/api/optimize", params={"demand": demand})
        wall.append(time.perf_counter() - start)
        assert answer.status_code == 200, answer.text
        timing = answer.headers["server-timing"]
        answer_part, cpu_part = timing.split(", ")
        server.append(float(answer_part.split("dur=")[1]) / 1e3)
        cpu.append(float(cpu_part.split("dur=")[1]) / 1e3)
        powers.append(answer.json()["total_shaft_power_kW"])
    cold, cold_cpu = [], []
    for demand, power in zip(DEMANDS, powers, strict=True):
        start, start_cpu = time.perf_counter(), time.thread_time()
        result = trainopt.optimize(case, demand=demand)
        cold.append(time.perf_counter() - start)
        cold_cpu.append(time.thread_time() - start_cpu)
        gap = abs(result.total("shaft_power_kW") - power) / power
        assert gap < 1e-4, (demand, gap)  # the MIP gap HiGHS is given (dispatch/solve.py)

    rules_now, rules_before = rule_comparisons(web.state.answers, case)

    def ms(values):
        return (f"{1e3 * statistics.median(values):7.1f} {1e3 * min(values):7.1f} "
                f"{1e3 * max(values):7.1f}")

    print(f"demo station, {len(DEMANDS)} new demands from {DEMANDS[0]} to {DEMANDS[-1]}")
    print(f"first request (reduces the station): {1e3 * first:.0f} ms")
    print(f"{'[ms]':44s} {'median':>7s} {'min':>7s} {'max':>7s}")
    print(f"{'web API, server time (Server-Timing)':44s} {ms(server)}")
    print(f"{'web API, CPU time of the answering thread':44s} {ms(cpu)}")
    print(f"{'web API, wall time through the test client':44s} {ms(wall)}")
    print(f"{'cold trainopt.optimize (reference)':44s} {ms(cold)}")
    print(f"{'cold trainopt.optimize, CPU time (reference)':44s} {ms(cold_cpu)}")
    print(f"{'sharing rules, totals only (now)':44s} {ms(rules_now)}")
    print(f"{'sharing rules, full table per split (before)':44s} {ms(rules_before)}")
    print(f"load average over the last minute: {os.getloadavg()[0]:.1f} on {os.cpu_count()} "
          "cores (other work on the machine stretches wall times, less so CPU times)")
    print(f"speed-up of the median: {statistics.median(cold) / statistics.median(server):.1f}x;"
          f" target: median server time under 100 ms: "
          f"{'met' if statistics.median(server) < 0.1 else 'NOT met'}")


def rule_comparisons(answers, case) -> tuple[list[float], list[float]]:
    """Time the rules' comparison both ways on the kept station, per demand [s]."""
    conditions = read_conditions(case)
    station = answers.station(conditions)
    now, before = [], []
    for demand in DEMANDS:
        optimum = answers.optimize(conditions, demand)  # kept: not solved again
        m = optimum.demand_kg_s
        start = time.perf_counter()
        on_running, on_all = compare_both(station, optimum, m)
        now.append(time.perf_counter() - start)
        start = time.perf_counter()
        running = list(on_running["equal_flow"]["running_units"])
        sets = [running] + ([] if on_all is on_running else
                            [list(on_all["equal_flow"]["running_units"])])
        full = [evaluate_split(station, split.flows) for units in sets
                for split in baseline_splits(station, units, m).values() if split.feasible]
        before.append(time.perf_counter() - start)
        shown = [e for c in ([on_running] if on_all is on_running else [on_running, on_all])
                 for e in c.values() if e["status"] == "feasible"]
        assert [e["total_shaft_power_kW"] for e in shown] == [
            r.total("shaft_power_kW") for r in full], demand
    return now, before


if __name__ == "__main__":
    main()
