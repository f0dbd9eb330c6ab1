"""Every design speed target against its figure, measured in one run.

Run from the repository root (two to five minutes on two cores)::

    python benchmarks/speed_targets.py [--skip-studies]

Each line prints the target, the figure measured now and a reference measured in the same
run (the plain dynamic program of ``benchmarks/dp_reference.py``, a bare Python start, or
the import of CoolProp alone), and says whether the target is met. Wall times grow with the
machine's load; the load average is printed at the start and the end.

1. ``optimize`` per new demand in process at 4, 8 and 16 units (the demo's units and
   variants of them, ``benchmarks/station_true_model.py``'s ``DEMO_PLAN``): median of
   ``trainopt.optimize(case, demand, baselines=False)`` (reduction included), and of
   ``ReducedStation.optimize`` (one reduction and one persistent model kept), against the
   plain DP (its true sample per unit included, and the DP alone). The power of each is
   its split's true power (``evaluate_split``); "equal" allows 1e-5 relative.
2. ``trainopt --help`` (as ``python -m trainopt --help``), median of five starts, against a
   bare ``python -c pass``.
3. ``trainopt optimize cases/demo/station.yaml`` wall on a warm cache (median of three),
   the same at three new demands, the first run on an empty cache (CoolProp loaded, the
   phase envelope traced), the import of CoolProp alone, and the libraries a warm run
   imports as its floor.
4. The README ``envelope`` command (under 8 s).
5. The audit of the invented year of hourly history, four units (under 15 s), and its
   peak memory (under 1 GB): the resident memory of the process and its workers, summed,
   sampled every 20 ms.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "cases" / "demo" / "station.yaml"
SIZES = (4, 8, 16)
DEMANDS = 6
COLD_CALLS = 3
POWER_RTOL = 1e-5

TARGETS = {"optimize_4_units": 0.060, "help": 0.5, "optimize_demo_wall": 2.5,
           "envelope": 8.0, "audit": 15.0, "audit_memory_GB": 1.0}


def verdict(ok: bool) -> str:
    return "met" if ok else "NOT met"


def run(args: list[str], env: dict | None = None, cwd: Path = ROOT) -> float:
    """Wall time [s] of a command; raises if it fails. Its CPU time goes to ``CPU``."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    subprocess.run(args, cwd=cwd, env={**os.environ, **(env or {})}, check=True,
                   stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    CPU[-1] = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall


CPU = [0.0]
"""CPU time [s] (user + system) of the last command :func:`run` ran."""


def median_run(args: list[str], times: int, env: dict | None = None) -> tuple[float, float]:
    """Median wall time [s] and median CPU time [s] of a command run ``times`` times."""
    walls, cpus = [], []
    for _ in range(times):
        walls.append(run(args, env))
        cpus.append(CPU[-1])
    return statistics.median(walls), statistics.median(cpus)


def per_demand() -> list[str]:
    """Target 1: trainopt against the plain DP at 4, 8 and 16 units."""
    sys.path.insert(0, str(Path(__file__).parent))
    import numpy as np
    from dp_reference import DynamicProgram
    from station_true_model import DEMO_PLAN, demand_spread, station_case

    import trainopt
    from trainopt.station.reduced import evaluate_split
    from trainopt.station.reduced_station import ReducedStation

    base = trainopt.load_case(DEMO)
    trainopt.optimize(base, baselines=False)  # first HiGHS solve of the process, not timed
    lines = [f"{'units':>5} {'optimize ms':>11} {'kept ms':>8} {'DP+set-up ms':>12} "
             f"{'DP ms':>6} {'optimize/(DP+set-up)':>20} {'kept/DP':>7} "
             f"{'worst power/DP':>14}  verdict"]
    verdicts = []
    for count in SIZES:
        case = station_case(base, DEMO_PLAN, count)
        start = time.perf_counter()
        kept = ReducedStation(case)
        station = kept.station()
        setup = time.perf_counter() - start
        start = time.perf_counter()
        peer = DynamicProgram(station)
        peer_setup = time.perf_counter() - start
        lo = np.array([c.min_flow for c in station.curves.values()])
        hi = np.array([c.max_flow for c in station.curves.values()])
        demands = demand_spread(lo, hi, DEMANDS)
        kept.optimize(demands[0], baselines=False)  # builds the persistent model, not timed
        ours, dp, ratio = [], [], []
        for demand in demands:
            start = time.perf_counter()
            result = kept.optimize(demand, baselines=False)
            ours.append(time.perf_counter() - start)
            start = time.perf_counter()
            split = peer.split(demand)
            dp.append(time.perf_counter() - start)
            ratio.append(result.total_shaft_power / evaluate_split(station, split)
                         .total_shaft_power)
        cold = []
        for demand in demands[:: max(1, DEMANDS // COLD_CALLS)][:COLD_CALLS]:
            start = time.perf_counter()
            trainopt.optimize(case, demand=demand, baselines=False)
            cold.append(time.perf_counter() - start)
        o, k, d = statistics.median(cold), statistics.median(ours), statistics.median(dp)
        worst = max(ratio)
        ok = o <= peer_setup + d and worst <= 1 + POWER_RTOL
        verdicts.append((count, o, ok))
        lines.append(f"{count:5d} {o * 1e3:11.0f} {k * 1e3:8.0f} {(peer_setup + d) * 1e3:12.0f} "
                     f"{d * 1e3:6.1f} {o / (peer_setup + d):20.2f} {k / d:7.2f} "
                     f"{worst:14.6f}  {verdict(ok)} (no slower than the DP with its set-up, "
                     f"power equal or lower)")
        lines.append(f"      (reduction and first model of the kept station: {setup:.2f} s; "
                     f"DP set-up {peer_setup:.2f} s)")
    four = next(o for c, o, _ in verdicts if c == 4)
    lines.append(f"optimize per new demand, 4 units, median: {four * 1e3:.0f} ms against "
                 f"{TARGETS['optimize_4_units'] * 1e3:.0f} ms: "
                 f"{verdict(four < TARGETS['optimize_4_units'])}")
    return lines


LIBRARIES = ("import scipy.interpolate, scipy.optimize, pandas, pint, "
             "pyomo.core, pyomo.contrib.solver.solvers.highs, typer, pydantic, yaml")
"""What a warm ``trainopt optimize`` cannot run without: the splines and root finders
(SciPy), the result tables (pandas), units at the edges (pint), the model and its solver
(Pyomo, HiGHS) and the command line and case file (typer, pydantic, PyYAML). Pyomo imports
``scipy.stats`` as soon as SciPy is imported, and pint imports ``dask.base`` when dask is
installed; both are part of this floor. CoolProp is not: on a warm cache every gas state
comes from the disk memo (:mod:`trainopt.physics.state_memo`)."""

NEW_DEMANDS = ("38 MMSCMD", "41 MMSCMD", "47 MMSCMD")
"""Demands the demo is rerun at on a warm cache (its own is 44 MMSCMD)."""


def start_up() -> list[str]:
    """Targets 2 and 3: the command's start and the demo's optimize wall."""
    python = sys.executable
    bare, bare_cpu = median_run([python, "-c", "pass"], 5)
    helped, helped_cpu = median_run([python, "-m", "trainopt", "--help"], 5)
    coolprop, coolprop_cpu = median_run([python, "-c", "import CoolProp.CoolProp"], 3)
    floor, floor_cpu = median_run([python, "-c", LIBRARIES], 3)
    command = [python, "-m", "trainopt", "optimize", str(DEMO)]
    with tempfile.TemporaryDirectory() as empty:
        cache = {"TRAINOPT_CACHE_DIR": empty}
        first = run(command, env=cache)
        first_cpu = CPU[-1]
        warm, warm_cpu = median_run(command, 3, env=cache)
        walls = [run([*command, "--demand", demand], env=cache) for demand in NEW_DEMANDS]
        new = statistics.median(walls)
    target = TARGETS["optimize_demo_wall"]
    return [
        f"trainopt --help: {helped:.2f} s wall ({helped_cpu:.2f} s CPU) against "
        f"{TARGETS['help']} s: {verdict(helped < TARGETS['help'])} (bare python start "
        f"{bare:.2f} s wall, {bare_cpu:.2f} s CPU)",
        f"trainopt optimize demo, warm cache: {warm:.2f} s wall ({warm_cpu:.2f} s CPU) against "
        f"{target} s: {verdict(warm < target)}; at a new demand ({', '.join(NEW_DEMANDS)}), "
        f"median {new:.2f} s: {verdict(new < target)}",
        f"  first run, empty cache: {first:.2f} s wall, {first_cpu:.2f} s CPU (loading CoolProp "
        f"and tracing the gas's envelope, once per composition; importing CoolProp alone "
        f"takes {coolprop:.2f} s wall, {coolprop_cpu:.2f} s CPU)",
        f"  the libraries a warm run needs, imported alone in a bare process: {floor:.2f} s "
        f"wall ({floor_cpu:.2f} s CPU); the rest of the run is trainopt's own imports and "
        f"the computation ({warm_cpu - floor_cpu:.2f} s CPU)",
    ]


_AUDIT = """
import json, time
import trainopt
from trainopt.studies.audit import audit_history
from trainopt.studies.history_reader import read_history
case = trainopt.load_case({case!r})
history = read_history({history!r}, {columns!r}, case)
start = time.perf_counter()
result = audit_history(case, history, progress=False)
print(json.dumps({{"seconds": time.perf_counter() - start,
                  "rows": int(result.totals()["rows_audited"])}}))
"""


def peak_memory(args: list[str], env: dict | None = None) -> tuple[str, float]:
    """Run a command; its stdout and the peak of its process tree's resident memory [B]."""
    import psutil

    proc = subprocess.Popen(args, cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True, env={**os.environ, **(env or {})})
    peak = [0.0]

    def watch():
        parent = psutil.Process(proc.pid)
        while proc.poll() is None:
            try:
                tree = [parent, *parent.children(recursive=True)]
                rss = sum(p.memory_info().rss for p in tree)
            except psutil.Error:
                continue
            peak[0] = max(peak[0], rss)
            time.sleep(0.02)

    thread = threading.Thread(target=watch, daemon=True)
    thread.start()
    out, err = proc.communicate()
    thread.join()
    if proc.returncode:
        raise RuntimeError(err.strip().splitlines()[-1] if err.strip() else "failed")
    return out, peak[0]


def studies() -> list[str]:
    """Targets 4 and 5: the README envelope command and the year audit.

    Both run on a cache folder of their own that starts empty: the envelope command first
    as a new user's first run, then again on the cache the first run left; the audit after
    them, with the history's states new to the cache.
    """
    python = sys.executable
    with tempfile.TemporaryDirectory() as out, tempfile.TemporaryDirectory() as empty:
        cache = {"TRAINOPT_CACHE_DIR": empty}
        command = [python, "-m", "trainopt", "envelope", str(DEMO), "--sweep",
                   "discharge_pressure=60 bar:72 bar:1 bar", "--out", out, "--quiet", "--force"]
        first = run(command, env=cache)
        first_cpu = CPU[-1]
        envelope = run(command, env=cache)
        envelope_cpu = CPU[-1]
        history = ROOT / "cases" / "demo" / "history"
        code = _AUDIT.format(case=str(DEMO), history=str(history / "station_history.csv"),
                             columns=str(history / "columns.yaml"))
        start = time.perf_counter()
        text, peak = peak_memory([python, "-c", code], env=cache)
        wall = time.perf_counter() - start
    audit = json.loads(text.strip().splitlines()[-1])
    gb = peak / 1e9
    return [
        f"README envelope command, warm cache: {envelope:.1f} s wall ({envelope_cpu:.1f} s CPU, "
        f"workers included) against {TARGETS['envelope']} s: "
        f"{verdict(envelope < TARGETS['envelope'])}; first run, empty cache: {first:.1f} s wall "
        f"({first_cpu:.1f} s CPU): {verdict(first < TARGETS['envelope'])}",
        f"year audit, four units, {audit['rows']} hours: {audit['seconds']:.1f} s "
        f"(process wall {wall:.1f} s with start and reading) against {TARGETS['audit']} s: "
        f"{verdict(audit['seconds'] < TARGETS['audit'])}",
        f"year audit peak memory (process and workers): {gb:.2f} GB against "
        f"{TARGETS['audit_memory_GB']} GB: {verdict(gb < TARGETS['audit_memory_GB'])}",
    ]


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="design speed targets")
    parser.add_argument("--skip-studies", action="store_true",
                        help="leave out the envelope and the year audit")
    args = parser.parse_args(argv)
    print(__doc__.split("\n\n")[0])
    print(f"load average at start (1, 5, 15 min): {os.getloadavg()} on {os.cpu_count()} cores")
    began = time.perf_counter()
    lines = start_up()
    print("\n".join(lines), flush=True)
    lines = per_demand()
    print("\n".join(lines), flush=True)
    if not args.skip_studies:
        print("\n".join(studies()), flush=True)
    print(f"load average at end: {os.getloadavg()}; whole run {time.perf_counter() - began:.0f} s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
