"""Calibration of the demo units against a synthetic history of known wear.

The history is INVENTED (trainopt.studies.calibration_synthetic): seeded, with instrument
noise of assumed standard deviations (pressure 0.1 %, temperature 0.5 K, flow 1 %, speed
0.05 %: assumptions, not sourced). The true factors are ours, so the check is that the
fit returns them within its own stated standard errors, and that those shrink as 1/sqrt(n).
"""

import warnings

import numpy as np
import pandas as pd
import pytest
import yaml

from tests.conftest import DEMO_STATION
from trainopt.case.loading import load_case
from trainopt.errors import InputError
from trainopt.machines.degradation import Degradation, DegradationWarning
from trainopt.studies.calibration import CalibrationWarning, calibrate, calibrated_case_text
from trainopt.studies.calibration_synthetic import synthetic_history
from trainopt.studies.history_reader import read_history
from trainopt.studies.steady_windows import SteadyBands

TRUE = {"A": Degradation(0.96, 0.95), "B": Degradation(0.98, 0.97),
        "C": Degradation(0.95, 0.93), "D": Degradation(0.92, 0.90)}
"""Invented wear of the demo units (demo data)."""


def write(folder, frame, mapping):
    frame.to_csv(folder / "history.csv", index=False)
    (folder / "columns.yaml").write_text(yaml.safe_dump(mapping))
    return folder / "history.csv", folder / "columns.yaml"


@pytest.fixture(scope="module")
def long_history(demo_case, tmp_path_factory):
    frame, mapping = synthetic_history(demo_case, TRUE, 24 * 40, seed=3)
    return write(tmp_path_factory.mktemp("long"), frame, mapping)


@pytest.fixture(scope="module")
def long_result(long_history):
    return calibrate(DEMO_STATION, *long_history)


def test_factors_come_back_within_their_standard_errors(long_history, long_result):
    f = long_result.factors.set_index("unit")
    for unit, true in TRUE.items():
        for name in ("head_factor", "efficiency_factor"):
            error = f.loc[unit, name] - getattr(true, name)
            # three standard errors: a 99.7 % band for each of the 8 factors
            assert abs(error) <= 3 * f.loc[unit, f"{name}_se"], (unit, name, error)
        assert f.loc[unit, "points"] > 150
        assert f.loc[unit, "flow_factor"] == 1.0
        assert np.isnan(f.loc[unit, "flow_factor_se"])
    # the synthetic shaft-power meter reads m (h2 - h1) (1 + 1 % mechanical loss), exactly
    # the demo's loss; the rest is the flow and temperature noise, averaged (0.3 %)
    np.testing.assert_allclose(f["measured_over_gas_power"], 1.01, rtol=3e-3)
    # every history row of a unit is either used or counted under a reason
    rows = len(read_history(*long_history, long_result.as_new_case).frame)
    assert (f["points"] + f["excluded_rows"] == rows).all()


def test_standard_error_shrinks_as_one_over_root_n(demo_case, long_result, tmp_path):
    frame, mapping = synthetic_history(demo_case, TRUE, 24 * 10, seed=4)
    short = calibrate(DEMO_STATION, *write(tmp_path, frame, mapping)).factors.set_index("unit")
    long = long_result.factors.set_index("unit")
    for name in ("head_factor_se", "efficiency_factor_se"):
        ratio = long[name] / short[name]
        expected = np.sqrt(short["points"] / long["points"])  # about 0.5 for 4x the data
        assert np.all(ratio < 0.8), ratio
        # 10 days hold only 40 operating points (6 h blocks) per unit, so a unit's standard
        # error scatters with where they fell; the mean over the four units within 25 %
        assert abs(ratio.mean() / expected.mean() - 1) < 0.25, (name, ratio, expected)


def test_calibrated_case_round_trips_through_yaml(long_result, tmp_path):
    (tmp_path / "case.yaml").write_text(calibrated_case_text(long_result, tmp_path))
    case = load_case(tmp_path / "case.yaml")
    worn = case.train("D").sections[0].compressor_map
    new = long_result.as_new_case.train("D").sections[0].compressor_map
    f = long_result.factors.set_index("unit").loc["D"]
    q, n = new.tested_grid(3, 3)
    # the file holds the factors rounded to 5 decimals: 1e-4 relative
    np.testing.assert_allclose(worn.head(q, n, warn=False) / new.head(q, n, warn=False),
                               f["head_factor"], rtol=1e-4)
    data = yaml.safe_load((tmp_path / "case.yaml").read_text())
    assert data["units"][3]["calibration"]["points"] == int(f["points"])


def test_fitted_residuals_are_smaller_than_as_new(long_result):
    p = long_result.points
    before = np.abs(p["head"] / p["map_head"] - 1).median()
    after = np.abs(p["head"] / p["fitted_head"] - 1).median()
    assert after < 0.2 * before


def test_flow_factor_cannot_be_separated_at_one_speed(demo_case, tmp_path):
    # one operating point held for six days: one speed, one flow
    frame, mapping = synthetic_history(demo_case, TRUE, 24 * 6, seed=5,
                                       speed_span=(0.5, 0.5), block_hours=24 * 6)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CalibrationWarning)
        result = calibrate(DEMO_STATION, *write(tmp_path, frame, mapping), fit_flow=True,
                           min_points=5)
    note = result.factors.set_index("unit").loc["A", "note"]
    assert "cannot be separated" in note
    assert "one speed" in note


# --- bad input ------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def short_frame(demo_case):
    return synthetic_history(demo_case, TRUE, 24 * 4, seed=6)


def test_too_few_steady_points_says_how_many(short_frame, tmp_path):
    with pytest.raises(InputError, match=r"too few steady points.*A \d+.*500 needed"):
        calibrate(DEMO_STATION, *write(tmp_path, *short_frame), min_points=500)


def test_speed_column_missing_is_named(short_frame, tmp_path):
    frame, mapping = short_frame
    mapping = yaml.safe_load(yaml.safe_dump(mapping))
    del mapping["units"]["B"]["speed"]
    with pytest.raises(InputError, match=r"units\.B\.speed: is missing"):
        calibrate(DEMO_STATION, *write(tmp_path, frame, mapping), min_points=5)


def test_discharge_temperature_sensor_reading_high_is_named(short_frame, tmp_path):
    frame, mapping = short_frame
    frame = frame.assign(C_discharge_temperature_degC=frame["C_discharge_temperature_degC"]
                         + 120.0)
    with pytest.raises(InputError, match=r"units\.C\.discharge_temperature.*below 0\.3"):
        calibrate(DEMO_STATION, *write(tmp_path, frame, mapping), min_points=5)


def test_rows_beyond_the_map_speeds_are_counted(short_frame, tmp_path):
    frame, mapping = short_frame
    frame = frame.assign(A_speed_rpm=frame["A_speed_rpm"] * 1.5)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CalibrationWarning)
        result = calibrate(DEMO_STATION, *write(tmp_path, frame, mapping), min_points=5)
    ex = result.excluded
    speed_rows = ex[(ex["unit"] == "A") & ex["reason"].str.contains("tested speed range")]
    assert speed_rows["rows"].sum() > 50
    assert result.factors.set_index("unit").loc["A", "points"] == 0


def test_factors_outside_plausible_range_warn_on_loading(write_demo_variant, tmp_path):
    data = yaml.safe_load(DEMO_STATION.read_text())
    data["units"][0]["calibration"] = {"head_factor": 0.62, "efficiency_factor": 0.95}
    with pytest.warns(DegradationWarning, match=r"head_factor 0\.620 outside 0\.7-1\.1"):
        load_case(write_demo_variant(tmp_path, data))


def test_period_outside_the_history_is_refused(short_frame, tmp_path):
    with pytest.raises(InputError, match="no history row lies in the period"):
        calibrate(DEMO_STATION, *write(tmp_path, *short_frame), since="2030-01-01")


@pytest.mark.parametrize(("since", "until", "message"), [
    (None, "2022-12-31", r"^--until: no history row lies in the period: 2022-12-31 00:00 UTC "
     r"is before the history's first row; give dates between 2023-01-01 00:00 UTC and "
     r"2023-01-04 23:00 UTC"),
    ("2023-01-03", "2023-01-02", r"^--since/--until: .*--since 2023-01-03 00:00 UTC is after "
     r"--until 2023-01-02 00:00 UTC; swap them$"),
    ("2023-01-02T00:10", "2023-01-02T00:50", r"^--since/--until: no history row lies in the "
     r"period; give dates between"),
])
def test_empty_period_names_the_option_and_the_historys_span(short_frame, tmp_path, since,
                                                              until, message):
    with pytest.raises(InputError, match=message):
        calibrate(DEMO_STATION, *write(tmp_path, *short_frame), since=since, until=until)


def test_steady_bands_are_reported(long_result):
    assert long_result.bands == SteadyBands()
    assert "steady over 3 h" in long_result.summary()
    assert isinstance(long_result.trend, pd.DataFrame)


def test_open_recycle_valve_without_recycle_flow_is_left_out_and_counted(short_frame,
                                                                           tmp_path):
    frame, mapping = short_frame
    mapping = yaml.safe_load(yaml.safe_dump(mapping))
    del mapping["units"]["A"]["recycle"]
    mapping["units"]["A"]["recycle_valve"] = {"column": "A_valve_pct", "unit": "%",
                                              "rated_kv": 800}
    open_rows = np.zeros(len(frame))
    open_rows[30:50] = 12.0  # 20 hours with the valve 12 % open
    frame = frame.assign(A_valve_pct=open_rows)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CalibrationWarning)
        result = calibrate(DEMO_STATION, *write(tmp_path, frame, mapping), min_points=5)
    ex = result.excluded.set_index(["unit", "reason"])["rows"]
    # the first reason of each row counts: rows 30-49 are running and fully recorded, so
    # every one of the 20 is counted as an open valve
    assert ex.loc[("A", "recycle valve open, recycle flow unknown")] == 20
    assert ("B", "recycle valve open, recycle flow unknown") not in ex.index


def test_row_by_row_mach_correction_is_the_maps_mach_similarity(demo_case):
    from trainopt.studies.calibration_fit import predict

    cmap = demo_case.train("C").sections[0].compressor_map
    q, n = cmap.tested_grid(4, 5)
    s = 1.04  # a_test / a: a service gas 4 % slower in sound speed than the test's
    points = pd.DataFrame({"volume_flow": (q / s).ravel(), "speed": np.repeat(n[:, 0] / s, 5),
                           "sound_speed_ratio": s})
    head, eta = predict(cmap, points, 1.0, 1.0, 1.0)
    similar = cmap.mach_similar(s)  # the map's own correction (docs/maps.md)
    expected_head = similar.head(points["volume_flow"], points["speed"], warn=False)
    expected_eta = similar.efficiency(points["volume_flow"], points["speed"], warn=False)
    # the same monomials evaluated two ways: rounding only
    np.testing.assert_allclose(head, expected_head, rtol=1e-12)
    np.testing.assert_allclose(eta, expected_eta, rtol=1e-12)


def test_trend_has_no_excluded_count_it_does_not_know(long_result):
    # rows left out are counted for the whole period (factors, excluded), not per month;
    # a column of zeros in the monthly trend would read as "nothing left out"
    assert len(long_result.trend) >= 4
    assert "excluded_rows" not in long_result.trend.columns
    assert long_result.factors["excluded_rows"].gt(0).all()
