"""Forecast reading: headers with units and a column mapping give the same SI values.

References: bar to Pa and degC to K (SI definitions, common practice); standard volume to
mass through the gas's standard density (CoolProp, via trainopt.physics.gas).
"""

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from numpy.testing import assert_allclose

from trainopt.errors import InputError
from trainopt.studies.schedule_forecast import read_forecast

WEEK = Path(__file__).resolve().parents[2] / "cases" / "demo" / "forecast" / "week.csv"


def test_mapping_and_headers_agree(demo_case, tmp_path):
    raw = pd.read_csv(WEEK).head(5)
    renamed = raw.rename(columns={"time": "stamp", "demand [MMSCMD]": "nom",
                                  "suction_pressure [barg]": "p1",
                                  "suction_temperature [degC]": "t1",
                                  "discharge_pressure [barg]": "p2",
                                  "ambient_temperature [degC]": "air"})
    renamed["p1"] = renamed["p1"] * 100.0  # kPa gauge
    renamed.to_csv(tmp_path / "f.csv", index=False)
    mapping = {"time": {"column": "stamp"}, "demand": {"column": "nom", "unit": "MMSCMD"},
               "suction_pressure": {"column": "p1", "unit": "kPag"},
               "suction_temperature": {"column": "t1", "unit": "degC"},
               "discharge_pressure": {"column": "p2", "unit": "barg"},
               "ambient_temperature": {"column": "air", "unit": "degC"}}
    (tmp_path / "m.yaml").write_text(yaml.safe_dump(mapping))
    raw.to_csv(tmp_path / "h.csv", index=False)
    by_map = read_forecast(tmp_path / "f.csv", demo_case, tmp_path / "m.yaml")
    by_head = read_forecast(tmp_path / "h.csv", demo_case)
    assert by_map.period == pytest.approx(3600.0, rel=1e-12)
    for column in ("suction_pressure", "discharge_pressure", "suction_temperature",
                   "ambient_temperature", "demand"):
        assert_allclose(by_map.frame[column], by_head.frame[column], rtol=1e-12)
    # 1 barg = 1e5 Pa + atmospheric; degC + 273.15 K (SI)
    assert_allclose(by_head.frame["suction_pressure"].iloc[0],
                    raw["suction_pressure [barg]"].iloc[0] * 1e5
                    + demo_case.atmospheric_pressure, rtol=1e-12)
    rho_std = demo_case.gas.standard_density("iso")  # kg/Sm3 (CoolProp)
    assert_allclose(by_head.frame["demand"].iloc[0],
                    raw["demand [MMSCMD]"].iloc[0] * 1e6 / 86_400 * rho_std, rtol=1e-6)


def test_missing_column_and_bad_value_named(demo_case, tmp_path):
    raw = pd.read_csv(WEEK).head(4)
    raw.drop(columns="discharge_pressure [barg]").to_csv(tmp_path / "a.csv", index=False)
    with pytest.raises(InputError, match="no column for discharge_pressure"):
        read_forecast(tmp_path / "a.csv", demo_case)
    raw.loc[2, "demand [MMSCMD]"] = np.nan
    raw.to_csv(tmp_path / "b.csv", index=False)
    with pytest.raises(InputError, match=r"b.csv:4: 1 row\(s\) unusable, the first: demand: "
                       "missing"):
        read_forecast(tmp_path / "b.csv", demo_case)
