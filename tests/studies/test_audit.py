"""History audit: energy balance, optimum against independent methods, flags, Dask.

References: conservation (useful + recycle power = shaft power; useful power from the duty's
specific work, an independent path), ``trainopt.station.reduced.evaluate_split`` and
``trainopt.optimize`` (the full single-case path), a brute-force scan of splits on the true
model, and the plain per-row rebuild for the binning error. The history rows are built here
from the demo station's own ranges; they are test inputs, not reference data.
"""

import dataclasses
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from numpy.testing import assert_allclose

import trainopt
from trainopt.dispatch.reduction import operate
from trainopt.station.reduced import Station, evaluate_split
from trainopt.studies.audit import Binning, audit_history
from trainopt.studies.history_reader import read_history

DEMO = Path(__file__).resolve().parents[2] / "cases" / "demo" / "station.yaml"
UNITS = "ABCD"


@pytest.fixture(scope="module")
def station(demo_station):
    return demo_station


def _row(time, p1=44.0, p2=66.0, t1=22.0, ambient=24.0, **units):
    """One history row: unit=(through kg/s, recycle kg/s) or a dict of extra columns."""
    row = {"time": time, "p1": p1, "p2": p2, "t1": t1, "amb": ambient, "D_ok": 1}
    for u in UNITS:
        through, recycle = units.get(u, (0.0, 0.0))
        row[f"{u}_flow"], row[f"{u}_rcy"] = through * 3.6, recycle * 3.6  # kg/s -> t/h
        row[f"{u}_speed"], row[f"{u}_power"] = "", ""
    return row


@pytest.fixture(scope="module")
def history_files(tmp_path_factory, demo_case, station):
    a_speed = float(operate(demo_case.train("A"), station.duty(demo_case.train("A")), 130.0,
                            demo_case.ambient_temperature).speed[0]) * 60
    a_input = float(operate(demo_case.train("A"), station.duty(demo_case.train("A")), 130.0,
                            demo_case.ambient_temperature).energy_input[0]) / 1e3
    t = pd.date_range("2024-01-01", periods=13, freq="h", tz="UTC").strftime("%Y-%m-%dT%H:%MZ")
    rows = [
        _row(t[0], A=(130, 0), C=(200, 0)),                                   # feasible
        _row(t[1], A=(120, 0), B=(120, 0), C=(170, 20)),                      # C recycles
        _row(t[2], A=(140, 0), B=(140, 0), C=(220, 0), D=(115, 0)),           # all four
        _row(t[3], A=(80, 0), C=(200, 0)),                                    # A left of surge
        _row(t[4], A=(130, 0), C=(200, 0)),                                   # speed 10 % off
        _row(t[5], A=(125, 0), C=(230, 0)),                                   # D unavailable
        _row(t[6], A=(130, 0), C=(200, 0)),                                   # metered power
        _row(t[7], A=(130, 0), B=(100, 0), C=(200, 0)),                       # B left of SCL
        _row(t[8], p1=43.05, p2=65.0, t1=18.0, ambient=10.0, A=(125, 0), C=(210, 0)),
        _row(t[9], p1=43.10, p2=65.0, t1=18.0, ambient=10.0, A=(125, 0), C=(210, 0)),
        _row(t[10], p1=43.05, p2=65.0, t1=18.0, ambient=10.0, A=(115, 10), C=(190, 30)),
        _row(t[11], p1=43.10, p2=65.0, t1=18.0, ambient=10.0, A=(140, 0), B=(140, 0),
             C=(200, 0)),
        _row(t[12], t1=-40.0, A=(130, 0), C=(200, 0)),                        # two-phase
    ]
    rows[4]["A_speed"] = 1.10 * a_speed
    rows[5]["D_ok"] = 0
    rows[6]["A_power"] = repr(1.03 * a_input)
    folder = tmp_path_factory.mktemp("audit")
    pd.DataFrame(rows).to_csv(folder / "history.csv", index=False)
    mapping = {
        "time": {"column": "time"},
        "station": {"suction_pressure": {"column": "p1", "unit": "bar"},
                    "suction_temperature": {"column": "t1", "unit": "degC"},
                    "discharge_pressure": {"column": "p2", "unit": "bar"},
                    "ambient_temperature": {"column": "amb", "unit": "degC"}},
        "units": {u: {"flow": {"column": f"{u}_flow", "unit": "t/h"},
                      "recycle": {"column": f"{u}_rcy", "unit": "t/h"},
                      "speed": {"column": f"{u}_speed", "unit": "rpm"},
                      "power": {"column": f"{u}_power", "unit": "kW"}} for u in UNITS},
    }
    mapping["units"]["D"]["available"] = {"column": "D_ok"}
    (folder / "columns.yaml").write_text(yaml.safe_dump(mapping), encoding="utf-8")
    return folder / "history.csv", folder / "columns.yaml"


@pytest.fixture(scope="module")
def history(history_files, demo_case):
    return read_history(*history_files, demo_case)


@pytest.fixture(scope="module")
def audit(history, demo_case):
    return audit_history(demo_case, history, binning=Binning(min_rows=1), workers=1,
                         progress=False)


def _unit(audit, row: int, unit: str) -> pd.Series:
    u = audit.unit_hours
    return u[(u["time"] == audit.hours.index[row]) & (u["unit"] == unit)].iloc[0]


def test_bins_are_the_condition_sets(audit):
    assert list(audit.bins["rows"]) == [4, 1, 8]
    # a bin is reduced at the mean of its rows: 43.05 and 43.10 bar -> 43.075 bar
    assert_allclose(audit.bins["suction_pressure_bar"], [43.075, 44.0, 44.0], rtol=1e-12)


def test_suction_state_in_two_phase_is_counted(audit):
    status = audit.hours["status"].iloc[12]
    assert status.startswith("suction state near the dew point")
    assert audit.skipped[status] == 1


def test_energy_balance(audit, demo_case, station):
    """Useful + recycle = shaft power, and useful = net flow x specific work x (1 + loss)."""
    u = audit.unit_hours[(audit.unit_hours["status"] == "audited") & audit.unit_hours["running"]]
    assert_allclose(u["useful_power_kW"] + u["recycle_power_kW"], u["shaft_power_kW"],
                    rtol=1e-12)
    same = u[u["time"].isin(audit.hours.index[:8])]  # rows at the case's own conditions
    for _, r in same.iterrows():
        train = demo_case.train(r.unit)
        work = float(station.duty(train).specific_work(r.efficiency))  # head / efficiency
        useful = r.net_mass_flow_kg_s * work * (1 + train.mechanical_loss) / 1e3
        # same duty table and efficiency on both sides: agreement to rounding
        assert_allclose(r.useful_power_kW, useful, rtol=1e-9)


def test_recycle_energy_is_zero_without_recycle(audit):
    h = audit.hours
    no_recycle = [0, 2, 4, 5, 6, 7, 8, 9, 11]
    assert (h["recycle_power_kW"].iloc[no_recycle].fillna(0.0) == 0.0).all()
    assert h["recycle_power_kW"].iloc[1] > 0
    assert h["recycle_power_kW"].iloc[10] > 0


def test_recorded_split_matches_evaluate_split(audit, station):
    """Row 0 at the case's conditions against trainopt.station.reduced.evaluate_split."""
    reference = evaluate_split(station, {"A": 130.0, "C": 200.0}).units.set_index("name")
    for unit in "AC":
        # same true model by another path (unit_rows): agreement to rounding
        assert_allclose(_unit(audit, 0, unit)["shaft_power_kW"],
                        reference.loc[unit, "shaft_power_kW"], rtol=1e-9)


def test_optimum_never_above_a_feasible_recorded_split(audit, station):
    h = audit.hours
    u = audit.unit_hours
    broken = u.groupby("time")["limits_broken"].apply(lambda s: (s != "").any())
    feasible = h[(h["status"] == "audited") & ~broken.reindex(h.index).to_numpy()]
    assert len(feasible) >= 8
    # breakpoint error of the piecewise curves plus the MIP gap (1e-4) of the dispatch
    slack = sum(c.error_bound for c in station.curves.values()) / 1e3
    assert (feasible["optimum_shaft_power_kW"]
            <= feasible["shaft_power_kW"] * (1 + 1e-4) + slack).all()


@pytest.mark.parametrize("row", [0, 2, 5])
def test_optimum_matches_trainopt_optimize(audit, demo_case, station, row):
    h = audit.hours.iloc[row]
    offline = ["D"] if row == 5 else []
    best = trainopt.optimize(demo_case, demand=float(h.delivered_kg_s), offline=offline,
                             baselines=False)
    slack = sum(c.error_bound for c in station.curves.values())
    # optimize refines on the sampled true model; the audit interpolates dispatches: both
    # within the breakpoint error and the MIP gap of each other
    assert abs(h.optimum_shaft_power_kW * 1e3 - best.total_shaft_power) <= \
        slack + 1e-4 * best.total_shaft_power


def test_optimum_against_brute_force(audit, demo_case, station):
    """Row 5 (A, B, C available): every split on a 0.25 kg/s grid, on the true model."""
    demand = float(audit.hours["delivered_kg_s"].iloc[5])
    grid = np.arange(0.0, 250.0, 0.25)
    power = {}
    for unit in "ABC":
        train, curve = demo_case.train(unit), station.curves[unit]
        through = np.clip(grid, curve.min_flow, None)
        p = operate(train, station.duty(train), through, demo_case.ambient_temperature)
        power[unit] = np.where(grid == 0, 0.0, np.where(grid <= curve.max_flow, p.shaft_power,
                                                        np.inf))
    a, b = np.meshgrid(np.arange(len(grid)), np.arange(len(grid)), indexing="ij")
    c = (demand - grid[a] - grid[b])
    ok = c >= 0
    c_power = np.interp(np.where(ok, c, 0.0), grid, power["C"], right=np.inf)
    c_power = np.where(c <= 0, np.where(c == 0, 0.0, np.inf), c_power)
    total = power["A"][a] + power["B"][b] + c_power
    brute = float(np.min(np.where(ok, total, np.inf)))
    found = audit.hours["optimum_shaft_power_kW"].iloc[5] * 1e3
    steepest = max(float(np.max(np.diff(c.shaft_power) / np.diff(c.mass_flow)))
                   for c in station.curves.values())
    # the grid misses the optimum by at most a grid step times the steepest unit slope;
    # the optimiser is within its breakpoint error of the true optimum
    assert found <= brute + sum(c.error_bound for c in station.curves.values())
    assert found >= brute - steepest * 0.25


def test_flags(audit):
    assert audit.hours["status"].iloc[3] == "recorded split off the map (no model power)"
    assert bool(_unit(audit, 3, "A")["left_of_surge_without_recycle"])
    a4 = _unit(audit, 4, "A")
    assert bool(a4["head_off_map"])
    assert a4["head_deviation_pct"] < -5
    assert not _unit(audit, 0, "A")["head_off_map"]
    # metered input written as 1.03 x the model's: the model gap is +3 %
    assert_allclose(_unit(audit, 6, "A")["model_gap_pct"], 3.0, rtol=1e-9)
    assert "surge control line" in _unit(audit, 7, "B")["limits_broken"]
    assert "D" not in audit.hours["optimum_running"].iloc[5]
    assert audit.hours["flags"].iloc[0] == 0


def test_binning_error_is_small(audit, demo_case):
    """Row 8 (43.05 bar) evaluated at its bin's mean (43.075 bar) against its own Station."""
    exact_case = dataclasses.replace(demo_case, suction_pressure=43.05e5,
                                     discharge_pressure=65e5, suction_temperature=291.15,
                                     ambient_temperature=283.15)
    exact = evaluate_split(Station(exact_case), {"A": 125.0, "C": 210.0})
    binned = audit.hours["shaft_power_kW"].iloc[8] * 1e3
    # 0.025 bar off in suction pressure moves the head by about 0.14 %
    assert abs(binned / exact.total_shaft_power - 1) < 3e-3


def test_dask_local_cluster_gives_the_same_answer(history, demo_case, audit):
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                                  dashboard_address=":0") as cluster:
        other = audit_history(demo_case, history, binning=Binning(min_rows=1),
                              scheduler=cluster.scheduler_address, progress=False)
    columns = ["shaft_power_kW", "optimum_shaft_power_kW", "recycle_power_kW"]
    assert_allclose(other.hours[columns].to_numpy(float), audit.hours[columns].to_numpy(float),
                    rtol=1e-12)


def test_run_tasks_on_two_processes():
    import math

    from trainopt.studies.parallel import run_tasks

    # results come back in task order whatever order they finish in (largest first)
    assert run_tasks(math.factorial, [3, 10, 5], workers=2, weights=[1, 3, 2],
                     progress=False, start_cost=0) == [6, 3628800, 120]
    assert run_tasks(math.factorial, [4], workers=1, progress=False) == [24]


def test_run_tasks_keeps_short_work_in_this_process():
    import os

    from trainopt.studies.parallel import run_tasks

    # tasks far shorter than a worker's start run here, one after another; a task whose
    # time times the tasks left passes the start cost sends the rest to a pool
    assert set(run_tasks(_process_id, range(4), workers=2, progress=False)) == {os.getpid()}
    # (the first task pays first-call costs: the choice is made after the second)
    pids = run_tasks(_process_id, range(4), workers=2, progress=False, start_cost=1e-9)
    assert pids[:2] == [os.getpid()] * 2
    assert os.getpid() not in pids[2:]


def _process_id(_task) -> int:
    import os

    return os.getpid()


@pytest.mark.slow  # each spawned process imports CoolProp and Pyomo: 20-30 s on 2 cores
def test_two_local_processes_give_the_same_answer(history, demo_case, audit, monkeypatch):
    from trainopt.studies import parallel

    monkeypatch.setattr(parallel, "WORKER_START_SECONDS", 0.0)  # the pool, however short
    other = audit_history(demo_case, history, binning=Binning(min_rows=1), workers=2,
                          progress=False)
    columns = ["shaft_power_kW", "optimum_shaft_power_kW", "recycle_power_kW"]
    # the same arithmetic in another process: equal to the last bits
    assert_allclose(other.hours[columns].to_numpy(float), audit.hours[columns].to_numpy(float),
                    rtol=1e-12)


def test_totals_add_up(audit):
    t = audit.totals()
    h = audit.audited
    assert t["rows_audited"] == 11
    assert t["rows_read"] == 13
    assert_allclose(t["avoidable_energy_MWh"], t["shaft_energy_MWh"]
                    - t["optimum_shaft_energy_MWh"], rtol=1e-12)
    assert_allclose(t["recycle_energy_MWh"], h["recycle_power_kW"].sum() / 1e3, rtol=1e-12)
    assert trainopt.station.result.CAUTION in audit.summary()


def test_station_flow_meter_feeds_the_flow_balance_check(history_files, demo_case, tmp_path):
    """A station meter 10 % above the units' net flows is flagged; one that agrees is not.

    Check values: the sum of the rows' own net flows (A 130 + C 200 = 330 kg/s, conservation
    at the discharge header) and the documented 2 % tolerance (docs/studies.md).
    """
    table = pd.read_csv(history_files[0], keep_default_na=False).iloc[[0, 6]].copy()
    table["st"] = [330.0 * 3.6, 1.10 * 330.0 * 3.6]  # t/h: agrees, then 10 % high
    table.to_csv(tmp_path / "history.csv", index=False)
    mapping = yaml.safe_load(history_files[1].read_text(encoding="utf-8"))
    mapping["station"]["station_flow"] = {"column": "st", "unit": "t/h"}
    (tmp_path / "columns.yaml").write_text(yaml.safe_dump(mapping), encoding="utf-8")
    history = read_history(tmp_path / "history.csv", tmp_path / "columns.yaml", demo_case)
    audit = audit_history(demo_case, history, binning=Binning(min_rows=1), workers=1,
                          progress=False)
    assert_allclose(audit.hours["station_meter_kg_s"], [330.0, 363.0], rtol=1e-12)
    assert audit.hours["flow_balance_off"].tolist() == [False, True]


def test_summary_compares_in_the_objectives_unit_and_explains_signs(audit, history, demo_case):
    # The demo's objective is shaft power: the avoidable figure in that objective is the
    # shaft energy difference (summed by hand from the hourly table: kW x 1 h rows).
    t = audit.totals()
    h = audit.audited
    by_hand = (h["shaft_power_kW"] - h["optimum_shaft_power_kW"]).sum() / 1e3
    assert (t["objective"], t["objective_unit"]) == ("shaft_power", "MWh")
    assert_allclose(t["avoidable_objective"], by_hand, rtol=1e-12)
    assert (f"The optimum minimises shaft energy: against the recorded operation it saves "
            f"{by_hand:.0f} MWh of shaft energy") in audit.summary()
    # For least cost the optimum loads the gas turbine (cheap fuel): it saves money and
    # burns more driver input; the summary compares in USD and says why the signs differ.
    cost = audit_history(demo_case, history, binning=Binning(min_rows=1), workers=1,
                         progress=False, objective="cost")
    t = cost.totals()
    h = cost.audited
    by_hand = (h["model_cost_per_h"] - h["optimum_cost_per_h"]).sum()  # USD/h x 1 h rows
    assert (t["objective"], t["objective_unit"]) == ("cost", "USD")
    assert_allclose(t["avoidable_objective"], by_hand, rtol=1e-12)
    text = cost.summary()
    assert (f"The optimum minimises cost: against the recorded operation it saves "
            f"{by_hand:.0f} USD.") in text
    # regression value (own output): the cost optimum here takes 22 MWh more driver input
    more_input = -t["avoidable_driver_input_MWh"]
    assert more_input > 1.0
    assert (f"The optimum is chosen for least cost; against the recorded operation it uses "
            f"{more_input:.0f} MWh more driver input: it loads the drivers whose energy is "
            f"cheaper") in text
