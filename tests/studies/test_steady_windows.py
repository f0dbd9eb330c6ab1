"""Steady-state windows: hand-made histories whose steady rows are known by construction."""

import numpy as np
import pandas as pd

from trainopt.studies.steady_windows import SteadyBands, unsteady_reasons


def frame(speed, temperature, hours=None):
    index = pd.date_range("2023-01-01", periods=len(speed), freq="h", tz="UTC")
    if hours is not None:
        index = pd.DatetimeIndex([index[0] + pd.Timedelta(hours=h) for h in hours])
    return pd.DataFrame({"speed": speed, "t2": temperature}, index=index)


def test_a_speed_step_unsteadies_the_window_after_it():
    # constant, then a 5 % step at row 4: with a 3 h window, rows 4 and 5 hold the step
    # (rows 2-3 and 4-5 span it), rows 6 on are steady again; the first two rows lack a
    # full window
    speed = [100, 100, 100, 100, 105, 105, 105, 105]
    reasons = unsteady_reasons(frame(speed, [300.0] * 8), {"speed": "speed", "t2": "temperature"},
                               SteadyBands(duration=3 * 3600), 3600)
    assert list(reasons[:2]) == ["window incomplete (gap in the history)"] * 2
    assert list(reasons[2:4]) == ["", ""]
    assert list(reasons[4:6]) == ["not steady: speed"] * 2
    assert list(reasons[6:]) == ["", ""]


def test_temperature_band_is_in_kelvin_and_gaps_are_named():
    t2 = [300, 300, 300, 303, 303, 303]
    reasons = unsteady_reasons(frame([100.0] * 6, t2, hours=[0, 1, 2, 3, 4, 9]),
                               {"speed": "speed", "t2": "temperature"},
                               SteadyBands(duration=3 * 3600, temperature=2.0), 3600)
    assert reasons[3] == "not steady: t2"
    assert reasons[5] == "window incomplete (gap in the history)"
    assert np.sum(reasons == "") == 1  # row 2 only
