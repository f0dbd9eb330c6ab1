"""Turndown, running sets, throughput sweeps and condition sweeps on the demo station.

References: a brute-force scan of each unit's through-flow on the true model (its limit
checks), a brute-force scan of station throughput with the dispatch model, the hand
count of running sets, ``trainopt.station.reduced.evaluate_split`` for the sweep's powers, and the
fan-law trend of capacity against discharge pressure (common practice).
"""

from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from trainopt.dispatch.reduction import operate
from trainopt.errors import InputError
from trainopt.station.reduced import evaluate_split
from trainopt.studies.envelope import (
    condition_sweep,
    envelope_study,
    parse_sweep,
    recycle_free_ranges,
    running_sets,
    service_sets,
    start_stop_points,
    throughput_sweep,
    turndown,
)

DEMO = Path(__file__).resolve().parents[2] / "cases" / "demo" / "station.yaml"


@pytest.fixture(scope="module")
def station(demo_station):
    return demo_station


def test_service_sets(demo_case):
    sets = service_sets(demo_case, named=[("C", "A")])
    assert [label for label, _ in sets] == ["all available", "A offline", "B offline",
                                            "C offline", "D offline", "A+C"]
    assert sets[3][1] == ("A", "B", "D")
    assert sets[-1][1] == ("A", "C")
    assert service_sets(demo_case, offline=["D"])[0][1] == ("A", "B", "C")
    with pytest.raises(InputError, match="no unit named 'E'"):
        service_sets(demo_case, named=[("E",)])


@pytest.mark.parametrize("unit", ["A", "C", "D"])
def test_unit_ends_against_a_true_model_scan(demo_case, station, unit):
    """Each end of a unit's range, and the limit named, by scanning the true model."""
    curve = station.curves[unit]
    train = demo_case.train(unit)
    flows = np.linspace(0.8 * curve.min_flow, 1.1 * curve.max_flow, 6001)
    step = flows[1] - flows[0]
    op = operate(train, station.duty(train), flows, demo_case.ambient_temperature)
    broken = op.violations(train)
    bad = np.any(list(broken.values()), axis=0)
    ok = np.flatnonzero(~bad)
    assert abs(flows[ok[0]] - curve.min_flow) <= step
    assert abs(flows[ok[-1]] - curve.max_flow) <= step
    below, above = ok[0] - 1, ok[-1] + 1
    assert broken[curve.low_limit][below]
    assert broken[curve.high_limit][above]


def test_running_sets_count_identical_units_once(station):
    sets = running_sets(station, ["A", "B", "C", "D"])
    # A and B are one group: (none, one or both of A/B) x (C or not) x (D or not) - empty
    assert len(sets) == 3 * 2 * 2 - 1
    assert ("A",) in sets
    assert ("B",) not in sets
    assert ("A", "B", "C", "D") in sets


def test_recycle_free_ranges_of_all_units(station):
    c = station.curves
    ranges = recycle_free_ranges(station, ["A", "B", "C", "D"])
    # A alone is the smallest range; from C's least flow on, the running sets overlap
    expected = [(c["A"].min_flow, c["A"].max_flow),
                (c["C"].min_flow, sum(x.max_flow for x in c.values()))]
    assert_allclose(ranges, expected, rtol=1e-12)


def test_turndown_ends_against_a_throughput_scan(demo_case, station):
    """C offline: scan the station throughput with the dispatch model, 2 kg/s apart."""
    from trainopt.dispatch.solve import Dispatcher

    row = turndown(station, [("C offline", ("A", "B", "D"))]).iloc[0]
    dispatcher = Dispatcher([c for c in station.unit_curves() if c.name != "C"])
    scan = np.arange(2.0, row.largest_kg_s + 10.0, 2.0)
    answers = [dispatcher.solve(float(d)) for d in scan]
    feasible = np.array([a.status == "optimal" for a in answers])
    recycle = np.array([sum(a.recycle.values()) if a.status == "optimal" else np.nan
                        for a in answers])
    largest = scan[feasible].max()
    assert row.largest_kg_s - 2.0 < largest <= row.largest_kg_s
    first_free = scan[feasible & (recycle < 1e-6)].min()
    assert row.least_without_recycle_kg_s <= first_free < row.least_without_recycle_kg_s + 2.0
    ranges = recycle_free_ranges(station, ["A", "B", "D"])
    outside = ~np.any([(scan >= a) & (scan <= b) for a, b in ranges], axis=0)
    assert (recycle[outside & feasible] > 1e-6).all()
    assert row.least_set_by == "A: surge control line"
    assert row.largest_set_by == "A: driver power; B: driver power; D: driver power"


def test_sweep_powers_are_the_true_model(station):
    sweep = throughput_sweep(station, [("A",), ("C",), ("A", "C")], points=7, free=("A", "C"))
    a = sweep[(sweep["running"] == "A") & (sweep["throughput_kg_s"]
                                           >= station.curves["A"].min_flow)]
    for _, r in a.iterrows():
        reference = evaluate_split(station, {"A": r.throughput_kg_s}).total_shaft_power
        assert_allclose(r.shaft_power_kW * 1e3, reference, rtol=1e-9)
    best = sweep[sweep["running"] == "best"]
    slack = sum(c.error_bound for c in station.curves.values()) / 1e3
    for label in ("A", "C", "A+C"):
        rows = sweep[sweep["running"] == label]
        inside = best["throughput_kg_s"] <= rows["throughput_kg_s"].max()
        # chords of a convex curve lie above it: the best is below the set's chord
        chord = np.interp(best["throughput_kg_s"][inside], rows["throughput_kg_s"],
                          rows["shaft_power_kW"])
        assert (best["shaft_power_kW"][inside] <= chord * (1 + 1e-4) + slack).all()


def test_start_and_stop_points(station):
    """With A and C in service the best set changes where A, then C, reach their largest."""
    sweep = throughput_sweep(station, [], points=9, free=("A", "C"))
    points = start_stop_points(station, ("A", "C"), sweep)
    assert list(zip(points["from_running"], points["to_running"], strict=True)) == \
        [("A", "C"), ("C", "A+C")]
    # bisection bracket of 0.05 kg/s around the curves' own largest flows
    assert_allclose(points["throughput_kg_s"],
                    [station.curves["A"].max_flow, station.curves["C"].max_flow], atol=0.05)


def test_parse_sweep(demo_case):
    name, values = parse_sweep("discharge_pressure=60 bar:75 bar:1 bar", demo_case)
    assert name == "discharge_pressure"
    assert len(values) == 16
    assert_allclose(values[[0, -1]], [60e5, 75e5], rtol=1e-12)
    _, gauge = parse_sweep("suction_pressure=40 barg:41 barg:0.5 bar", demo_case)
    assert_allclose(gauge, np.array([40e5, 40.5e5, 41e5]) + demo_case.atmospheric_pressure,
                    rtol=1e-12)
    _, temps = parse_sweep("ambient_temperature=0 degC:30 degC:10 K", demo_case)
    assert_allclose(temps, [273.15, 283.15, 293.15, 303.15], rtol=1e-12)
    for bad in ("speed=1:2:1", "discharge_pressure=60 bar:75 bar",
                "discharge_pressure=75 bar:60 bar:1 bar", "discharge_pressure=1 bar:900 bar:1 bar"):
        with pytest.raises(InputError, match="--sweep"):
            parse_sweep(bad, demo_case)


def test_condition_sweep_capacity_falls_with_delivery_pressure(demo_case):
    sets = service_sets(demo_case)[:2]
    table = condition_sweep(demo_case, "discharge_pressure", [64e5, 68e5, 40e5], sets,
                            workers=1, progress=False)
    everything = table[table["service_set"] == "all available"]
    # more head per kilogram at the same driver power: less flow (fan laws, common practice)
    assert everything["largest_kg_s"].iloc[0] > everything["largest_kg_s"].iloc[1]
    assert everything["status"].iloc[2].endswith("discharge pressure not above suction pressure")


def test_envelope_study_tables(demo_case):
    study = envelope_study(demo_case, named=[("A", "C")], points=3, progress=False)
    tables = study.tables()
    assert set(tables) == {"turndown", "running_sets", "recycle_free_ranges",
                           "throughput_sweep", "start_stop"}
    assert len(study.turndown) == 6
    assert len(study.running_sets) == 11
    assert (study.turndown["least_with_recycle_kg_s"] == 0).all()
    assert all(column.endswith(("_kg_s", "_MMSCMD", "_kW")) for column in study.turndown
               if study.turndown[column].dtype == float)
