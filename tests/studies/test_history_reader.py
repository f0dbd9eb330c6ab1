"""Reading operating history through a column mapping: units, counted skips, refusals.

Check values are unit definitions (common practice: 1 bar = 1e5 Pa, 1 rpm = 1/60 rev/s,
0 degC = 273.15 K, 1 h = 3600 s) and the IEC 60534-2-1 gas sizing routine of the ``fluids``
library for the recycle valve.
"""

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from numpy.testing import assert_allclose

from trainopt.errors import InputError
from trainopt.physics.units import FlowBasis
from trainopt.studies.history_reader import (
    ValveColumn,
    load_mapping,
    mass_flow,
    read_history,
    valve_kv_fraction,
    valve_mass_flow,
)

DEMO = Path(__file__).resolve().parents[2] / "cases" / "demo" / "station.yaml"


def _mapping(tmp_path, **changes) -> Path:
    data = {
        "time": {"column": "t", "timezone": "UTC"},
        "station": {
            "suction_pressure": {"column": "p1", "unit": "barg"},
            "suction_temperature": {"column": "t1", "unit": "degC"},
            "discharge_pressure": {"column": "p2", "unit": "bar"},
        },
        "units": {u: {"flow": {"column": f"{u}_flow", "unit": "Sm3/h"},
                      "recycle": {"column": f"{u}_rcy", "unit": "t/h"}} for u in "ABCD"},
    }
    data["units"]["A"]["speed"] = {"column": "A_speed", "unit": "rpm"}
    data["units"]["A"]["power"] = {"column": "A_power", "unit": "kW"}
    data["units"]["D"]["available"] = {"column": "D_ok"}
    for key, value in changes.items():
        node = data
        *path, last = key.split(".")
        for part in path:
            node = node[part]
        if value is None:
            node.pop(last)
        else:
            node[last] = value
    path = tmp_path / "columns.yaml"
    path.write_text(yaml.safe_dump(data), encoding="utf-8")
    return path


def _table(rows: int = 4) -> pd.DataFrame:
    times = pd.date_range("2024-03-01", periods=rows, freq="h", tz="UTC")
    table = pd.DataFrame({
        "t": times.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "p1": 43.0, "t1": 12.5, "p2": 66.0,
        "A_speed": 9000.0, "A_power": 7000.0, "D_ok": 1,
    })
    for u in "ABCD":
        table[f"{u}_flow"] = 360_000.0
        table[f"{u}_rcy"] = 0.0
    return table


def _write(tmp_path, table, name="history.csv") -> Path:
    path = tmp_path / name
    table.to_csv(path, index=False)
    return path


def test_values_arrive_in_si(tmp_path, demo_case):
    h = read_history(_write(tmp_path, _table()), _mapping(tmp_path), demo_case)
    f = h.frame
    assert len(f) == 4
    assert not h.skipped
    # 43 barg = 43e5 Pa above the case's atmospheric pressure (gauge definition)
    assert_allclose(f["suction_pressure"], 43e5 + demo_case.atmospheric_pressure, rtol=1e-12)
    assert_allclose(f["discharge_pressure"], 66e5, rtol=1e-12)  # 1 bar = 1e5 Pa
    assert_allclose(f["suction_temperature"], 285.65, rtol=1e-12)  # 12.5 degC
    assert_allclose(f["A.speed"], 150.0, rtol=1e-12)  # 9000 rpm = 150 rev/s
    assert_allclose(f["A.power"], 7e6, rtol=1e-12)  # 7000 kW
    assert_allclose(f["A.flow"], 100.0, rtol=1e-12)  # 360 000 Sm3/h = 100 Sm3/s
    assert h.flow_basis["A.flow"] == (FlowBasis.STANDARD_VOLUME, "iso")
    assert h.interval == 3600.0
    assert f.index.tz is not None
    assert f["D.available"].all()


def test_mass_flow_bases(demo_case):
    gas = demo_case.gas
    rho_std = gas.standard_density("iso")
    values = np.array([1.0, 2.0])
    assert_allclose(mass_flow(values, (FlowBasis.MASS, None), gas, 35.0), values, rtol=0)
    assert_allclose(mass_flow(values, (FlowBasis.STANDARD_VOLUME, "iso"), gas, 35.0),
                    values * rho_std, rtol=1e-15)
    assert_allclose(mass_flow(values, (FlowBasis.ACTUAL_VOLUME, None), gas, 35.0),
                    values * 35.0, rtol=1e-15)


def test_parquet_reads_like_csv(tmp_path, demo_case):
    table = _table()
    table.to_parquet(tmp_path / "history.parquet")
    a = read_history(_write(tmp_path, table), _mapping(tmp_path), demo_case).frame
    b = read_history(tmp_path / "history.parquet", _mapping(tmp_path), demo_case).frame
    numbers = a.select_dtypes("number").columns.drop("line")
    assert_allclose(a[numbers].to_numpy(float), b[numbers].to_numpy(float), rtol=1e-15)
    assert (a.index == b.index).all()
    assert list(b["gas"]) == ["case"] * 4


def test_bad_rows_are_skipped_and_counted(tmp_path, demo_case):
    table = _table(8).astype(object)
    table.loc[0, "p1"] = ""                  # missing
    table.loc[1, "A_flow"] = "I/O Timeout"   # text in a number column
    table.loc[2, "p1"] = -9999               # frozen sentinel: below zero absolute
    table.loc[3, "D_ok"] = "maybe"           # not a flag
    table.loc[4, "p2"] = 40.0                # discharge below suction
    table.loc[6, "t"] = table.loc[7, "t"]    # the same timestamp twice
    table = pd.concat([table.iloc[:6], table.iloc[7:], table.iloc[6:7]])  # keep order rising
    table = table.sort_values("t", kind="stable")
    h = read_history(_write(tmp_path, table), _mapping(tmp_path), demo_case)
    assert len(h.frame) == 1
    assert h.skipped == {
        "station.suction_pressure: missing (column 'p1')": 1,
        "units.A.flow: not a number (column 'A_flow')": 1,
        "station.suction_pressure: not a positive absolute pressure": 1,
        "units.D.available: not 1/0, true/false, yes/no or on/off": 1,
        "discharge pressure not above suction pressure": 1,
        "time: the same timestamp appears on more than one row": 2,
    }
    assert sorted(h.skipped_rows["line"]) == [2, 3, 4, 5, 6, 8, 9]


def test_optional_columns_may_be_blank(tmp_path, demo_case):
    table = _table().astype(object)
    table.loc[1, "A_speed"] = ""
    h = read_history(_write(tmp_path, table), _mapping(tmp_path), demo_case)
    assert len(h.frame) == 4
    assert np.isnan(h.frame["A.speed"].iloc[1])


def test_text_and_infinities_are_counted_skips_in_every_column(tmp_path, demo_case):
    table = _table(6).astype(object)
    table.loc[0, "A_power"] = "Bad Input"     # text in an optional power column
    table.loc[1, "A_speed"] = "inf"           # an infinite speed
    table.loc[2, "B_flow"] = "-inf"           # an infinite flow
    table.loc[3, "A_power"] = "#VALUE!"       # a spreadsheet error
    table.loc[4, "A_speed"] = ""              # a blank optional cell: no reading, kept
    h = read_history(_write(tmp_path, table), _mapping(tmp_path), demo_case)
    assert h.skipped == {
        "units.A.power: not a number (column 'A_power')": 2,
        "units.A.speed: not finite (column 'A_speed')": 1,
        "units.B.flow: not finite (column 'B_flow')": 1,
    }
    assert sorted(h.skipped_rows["line"]) == [2, 3, 4, 5]
    assert len(h.frame) == 2
    assert np.isfinite(h.frame["A.power"]).all()  # no text read as a missing power
    assert np.isnan(h.frame["A.speed"].iloc[0])  # the blank cell, left unknown


def test_small_negative_flow_is_zero_drift(tmp_path, demo_case):
    table = _table()
    table.loc[1, "B_flow"] = -100.0      # 0.03 % of the column's size: zero drift
    table.loc[2, "B_flow"] = -50_000.0   # 14 %: a bad value
    h = read_history(_write(tmp_path, table), _mapping(tmp_path), demo_case)
    assert h.skipped == {"units.B.flow: negative (column 'B_flow')": 1}
    assert h.frame["B.flow"].iloc[1] == 0.0


def test_timestamps_going_backwards_are_refused(tmp_path, demo_case):
    table = _table().iloc[[0, 2, 1, 3]]
    path = _write(tmp_path, table)
    with pytest.raises(InputError, match=r"history.csv:4: t: .*go backwards.*sort=True"):
        read_history(path, _mapping(tmp_path), demo_case)
    h = read_history(path, _mapping(tmp_path), demo_case, sort=True)
    assert h.frame.index.is_monotonic_increasing
    assert len(h.frame) == 4


def test_ambiguous_local_time_is_counted(tmp_path, demo_case):
    table = _table(3)
    # 2024-10-27 02:30 happens twice in Europe/Berlin (clocks go back at 03:00 CEST)
    table["t"] = ["2024-10-27 01:30", "2024-10-27 02:30", "2024-10-27 03:30"]
    mapping = _mapping(tmp_path, **{"time.timezone": "Europe/Berlin"})
    h = read_history(_write(tmp_path, table), mapping, demo_case)
    assert h.skipped == {"time: missing, unreadable or ambiguous in Europe/Berlin": 1}


def test_unknown_time_zone(tmp_path, demo_case):
    mapping = _mapping(tmp_path, **{"time.timezone": "Mars/Olympus"})
    with pytest.raises(InputError, match=r"time\.timezone: 'Mars/Olympus' is not a time zone"):
        read_history(_write(tmp_path, _table()), mapping, demo_case)


def test_unknown_column_names_the_mapping_key(tmp_path, demo_case):
    mapping = _mapping(tmp_path, **{"units.B.flow": {"column": "B_flw", "unit": "Sm3/h"}})
    with pytest.raises(InputError, match=r"units\.B\.flow\.column: no column 'B_flw'.*"
                                         r"did you mean 'B_flow'"):
        read_history(_write(tmp_path, _table()), mapping, demo_case)


def test_unit_missing_from_mapping(tmp_path, demo_case):
    with pytest.raises(InputError, match=r"units: the case's unit\(s\) D have no columns"):
        read_history(_write(tmp_path, _table()), _mapping(tmp_path, **{"units.D": None}),
                     demo_case)


def test_unit_not_in_case(tmp_path, demo_case):
    mapping = _mapping(tmp_path, **{"units.E": {"flow": {"column": "A_flow", "unit": "kg/s"},
                                                "recycle": {"column": "A_rcy", "unit": "t/h"}}})
    with pytest.raises(InputError, match=r"units\.E: is not a unit of the case"):
        read_history(_write(tmp_path, _table()), mapping, demo_case)


@pytest.mark.parametrize(("name", "content", "message"), [
    ("history.xlsx", b"PK\x03\x04", r"'\.xlsx' is not a history file type"),
    ("history.csv", b"\xff\xfe\x00\x81\x00\x00", r"cannot be read as CSV"),
    ("history.parquet", b"not parquet at all", r"cannot be read as Parquet"),
    ("history.csv", b"", r"cannot be read as CSV"),
])
def test_wrong_file_type(tmp_path, demo_case, name, content, message):
    path = tmp_path / name
    path.write_bytes(content)
    with pytest.raises(InputError, match=message):
        read_history(path, _mapping(tmp_path), demo_case)


def test_mapping_typo_and_bad_unit(tmp_path, demo_case):
    path = _mapping(tmp_path, **{"station.suction_presure": {"column": "p1", "unit": "bar"}})
    with pytest.raises(InputError, match=r"station\.suction_presure: is not a key"):
        load_mapping(path)
    mapping = _mapping(tmp_path, **{"station.suction_pressure": {"column": "p1",
                                                                  "unit": "bananas"}})
    with pytest.raises(InputError, match=r"station\.suction_pressure\.unit: unknown unit"):
        read_history(_write(tmp_path, _table()), mapping, demo_case)


def test_valve_flow_inverts_the_iec_sizing_of_fluids(demo_case):
    from fluids.control_valve import size_control_valve_g

    gas = demo_case.gas
    p_in, p_out, t_in, flow = 66e5, 44e5, 303.15, 80.0
    state = gas.state(p_in, t_in)
    normal_density = 101_325.0 * gas.molar_mass / (8.314462618 * 273.15)  # 0 degC, 1 atm
    kv = size_control_valve_g(T=t_in, MW=gas.molar_mass * 1e3, mu=1.1e-5,
                              gamma=state.cp / state.cv, Z=state.compressibility, P1=p_in,
                              P2=p_out, Q=flow / normal_density, xT=0.7, allow_laminar=False)
    spec = ValveColumn(column="v", rated_kv=kv, characteristic="linear")
    out = valve_mass_flow(spec, np.array([0.0, 0.5, 1.0]), gas, p_in, t_in, p_out)
    # linear trim: half open passes half the Kv; the equation is linear in Kv
    assert_allclose(out, [0.0, 0.5 * flow, flow], rtol=1e-9, atol=1e-12)


def test_valve_flow_is_choked_below_the_critical_ratio(demo_case):
    # IEC 60534-2-1: beyond x = F_gamma x_T the flow no longer rises as the outlet falls.
    spec = ValveColumn(column="v", rated_kv=500.0, x_t=0.7)
    low = valve_mass_flow(spec, np.array([1.0]), demo_case.gas, 66e5, 303.15, 6e5)
    lower = valve_mass_flow(spec, np.array([1.0]), demo_case.gas, 66e5, 303.15, 3e5)
    assert_allclose(low, lower, rtol=1e-12)


def test_valve_characteristics_follow_fluids():
    from fluids.control_valve import Cv_char_equal_percentage

    spec = ValveColumn(column="v", rated_kv=1.0, characteristic="equal_percentage")
    # 201-point table of the fluids spline: within 1e-3 of the spline itself
    assert_allclose(valve_kv_fraction(spec, np.array([0.5, 0.8])),
                    [Cv_char_equal_percentage(0.5), Cv_char_equal_percentage(0.8)], atol=1e-3)
    table = ValveColumn(column="v", rated_kv=1.0, table=[(0, 0), (50, 0.2), (100, 1.0)])
    assert_allclose(valve_kv_fraction(table, np.array([0.25, 0.75])), [0.1, 0.6], rtol=1e-15)
