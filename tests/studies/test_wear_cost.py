"""The cost of wear, checked by hand on a noise-free synthetic history (INVENTED demo data).

With head_factor 1 and efficiency_factor 0.9, the as-new unit meets the same duty at the same
speed with efficiency eta_worn / 0.9, so the extra shaft power is exactly 10 % of the worn
unit's shaft power ``m (h2 - h1) (1 + mechanical loss)`` (the definition in
trainopt.studies.wear_cost); money follows the demo case's prices (fuel 3.8 USD/GJ for the
gas-turbine unit C, electricity 72 USD/MWh for the motor units), and the payback is cost over
the mean monthly saving.
"""

import dataclasses

import numpy as np
import pytest
import yaml
from numpy.testing import assert_allclose

from tests.conftest import DEMO_STATION
from trainopt.machines.degradation import Degradation
from trainopt.studies.calibration import calibrate
from trainopt.studies.calibration_synthetic import InstrumentNoise, synthetic_history
from trainopt.studies.wear_cost import wear_cost

WEAR = {"A": Degradation(1.0, 0.9), "B": Degradation(1.0, 0.9), "C": Degradation(1.0, 0.9),
        "D": Degradation(1.0, 0.9)}


@pytest.fixture(scope="module")
def result(demo_case, tmp_path_factory):
    folder = tmp_path_factory.mktemp("wear")
    frame, mapping = synthetic_history(demo_case, WEAR, 24 * 5, seed=8,
                                       noise=InstrumentNoise(0.0, 0.0, 0.0, 0.0))
    frame.to_csv(folder / "h.csv", index=False)
    (folder / "c.yaml").write_text(yaml.safe_dump(mapping))
    return calibrate(DEMO_STATION, folder / "h.csv", folder / "c.yaml", min_points=5)


def test_extra_shaft_power_is_the_efficiency_loss(result):
    monthly, _ = wear_cost(result)
    for unit, row in monthly.set_index("unit").iterrows():
        pts = result.points[result.points["unit"] == unit]
        worn_shaft_kw = (pts["gas_power"] * 1.01).mean() / 1e3  # demo: 1 % mechanical loss
        # noise-free data give the factors to 1e-6, the gas table to a few 1e-6: 1e-4
        assert_allclose(row["extra_shaft_kW"], 0.1 * worn_shaft_kw, rtol=1e-4)
        assert_allclose(row["extra_shaft_MWh"], row["extra_shaft_kW"] * row["running_hours"]
                        / 1e3, rtol=1e-12)


def test_money_co2_and_payback_follow_the_case_prices(result):
    monthly, payback = wear_cost(result, wash_cost=30000.0)
    m = monthly.set_index("unit")
    joules = m["extra_driver_input_MWh"] * 3.6e9
    assert_allclose(m.loc["C", "extra_cost"], joules["C"] * 3.8e-9, rtol=1e-12)  # fuel
    assert_allclose(m.loc["A", "extra_cost"], joules["A"] * 72 / 3.6e9, rtol=1e-12)
    assert_allclose(m.loc["C", "extra_co2_t"], joules["C"] * 56.1e-9 / 1e3, rtol=1e-12)
    p = payback.set_index("unit")
    # the history covers 5 days (120 h) of January's 744 h: its cost is that share of a
    # month's, and the mean monthly cost is scaled up to a whole month
    monthly_cost = m["extra_cost"] / (120.0 / 744.0)
    assert_allclose(p["mean_monthly_cost"], monthly_cost, rtol=1e-12)
    assert_allclose(p["wash_payback_months"], 30000.0 / monthly_cost, rtol=1e-12)
    # driver input exceeds shaft power for every driver (efficiency below 1)
    assert np.all(m["extra_driver_input_MWh"] > m["extra_shaft_MWh"])


def test_a_period_cut_mid_month_is_not_taken_for_a_whole_month(result):
    # two halves of the same 5 days: January 1-3 and 3-5 cost about the same per month as
    # all 5 days, not half of it (the mean monthly cost is per calendar month covered)
    _, whole = wear_cost(result)
    hours = result.running_hours
    half = dataclasses.replace(result, running_hours=hours.assign(
        running_hours=hours["running_hours"] / 2, period_hours=hours["period_hours"] / 2))
    _, part = wear_cost(half)
    assert_allclose(part["mean_monthly_cost"], whole["mean_monthly_cost"], rtol=1e-12)
