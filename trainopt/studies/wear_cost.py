"""What wear costs: the worn machine's power above the as-new map at the same duty.

At each steady measured point the duty is the unit's mass flow and measured head at its
suction state. The worn machine (the calibrated model) delivers it at the recorded speed
with efficiency ``eta_worn``; the as-new machine would deliver the same head at the same
flow at the speed its own map needs (``speed_for``, with the same Mach similarity) with
``eta_new``. The extra shaft power is

    dP = m H (1/eta_worn - 1/eta_new) (1 + mechanical loss)

and the extra driver input is the driver's energy at the two shaft powers and speeds
(:meth:`~trainopt.machines.drivers.base.Driver.energy_input`, at the case's ambient). A
month's energy is the mean extra power of its steady points times the unit's running hours
that month (all rows with flow and speed, steady or not; a month without steady points takes
the unit's mean over the period). Money and CO2 follow the case's prices and factors for the
driver's energy (fuel for turbines, electricity for motors).

The mean monthly cost is the period's cost over the months it covers, a month cut by
``--since``/``--until`` counting as its covered share of the calendar month. A wash or
overhaul that restores the as-new map pays for itself after ``cost / monthly saving`` months
(simple payback, no discounting, and no credit for capacity regained).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from trainopt.station.reduced import driver_price


def _excess(train, as_new_map, points: pd.DataFrame, ambient: float) -> pd.DataFrame:
    cmap = as_new_map
    r = points["sound_speed_ratio"].to_numpy(float)
    q, n = points["volume_flow"].to_numpy(float), points["speed"].to_numpy(float)
    head = points["head"].to_numpy(float)
    m = points["mass_flow"].to_numpy(float)
    eta_worn = points["fitted_efficiency"].to_numpy(float)
    n_new = cmap.speed_for(r * q, head * r**2) / r
    eta_new = cmap.efficiency(r * q, r * n_new, warn=False)
    loss = 1.0 + train.mechanical_loss
    worn, new = m * head / eta_worn * loss, m * head / eta_new * loss
    driver = train.driver
    with np.errstate(invalid="ignore"):
        input_worn = driver.energy_input(worn, n, ambient)
        input_new = driver.energy_input(np.where(np.isfinite(new), new, 0.0),
                                        np.where(np.isfinite(n_new), n_new, n), ambient)
    return pd.DataFrame({"month": points["time"].dt.tz_convert("UTC").dt.strftime("%Y-%m"),
                         "shaft_kW": (worn - new) / 1e3,
                         "input_kW": (np.asarray(input_worn) - np.asarray(input_new)) / 1e3,
                         "as_new_speed_found": np.isfinite(n_new)})


def _months_covered(hours: pd.DataFrame) -> dict[str, float]:
    """Calendar months the history covers, per unit [-] (a part-month as its share)."""
    if "period_hours" not in hours:
        return {}
    in_month = pd.PeriodIndex(hours["month"], freq="M").days_in_month.to_numpy() * 24.0
    share = hours["period_hours"].to_numpy(float) / in_month
    return {u: float(s) for u, s in pd.Series(share).groupby(hours["unit"].to_numpy()).sum()
            .items()}


def wear_cost(result, *, wash_cost: float | None = None,
              overhaul_cost: float | None = None) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Monthly cost of wear per unit, and the payback of restoring the as-new map.

    Parameters
    ----------
    result : CalibrationResult
        From :func:`~trainopt.studies.calibration.calibrate`.
    wash_cost, overhaul_cost : float, optional
        Cost of an on-line/off-line wash or of an overhaul, each assumed to restore the
        as-new map [currency].

    Returns
    -------
    monthly : pandas.DataFrame
        ``unit``, ``month``, ``running_hours``, ``steady_points``, ``extra_shaft_kW``
        (mean), ``extra_shaft_MWh``, ``extra_driver_input_MWh``, ``extra_cost``
        [currency], ``extra_co2_t``.
    payback : pandas.DataFrame
        Per unit: ``mean_monthly_cost``, and ``wash_payback_months`` /
        ``overhaul_payback_months`` when the cost is given (inf when wear costs nothing).
    """
    case = result.case
    econ = case.economics
    rows, payback = [], []
    hours = result.running_hours
    for train in case.trains:
        u = train.name
        pts = result.points[result.points["unit"] == u]
        if pts.empty:
            continue
        as_new = result.as_new_case.train(u).sections[0].compressor_map
        ex = _excess(train, as_new, pts, case.ambient_temperature)
        ok = ex[ex["as_new_speed_found"]]
        if ok.empty:
            continue
        price, co2 = driver_price(econ, train.driver)
        mean_shaft, mean_input = ok["shaft_kW"].mean(), ok["input_kW"].mean()
        by_month = ok.groupby("month")[["shaft_kW", "input_kW"]].mean()
        counts = ok.groupby("month").size()
        unit_hours = hours[hours["unit"] == u].set_index("month")["running_hours"]
        for month, h in unit_hours.items():
            shaft = by_month["shaft_kW"].get(month, mean_shaft)
            energy_input = by_month["input_kW"].get(month, mean_input)
            joules = energy_input * 1e3 * h * 3600.0
            rows.append({"unit": u, "month": month, "running_hours": h,
                         "steady_points": int(counts.get(month, 0)), "extra_shaft_kW": shaft,
                         "extra_shaft_MWh": shaft * h / 1e3,
                         "extra_driver_input_MWh": energy_input * h / 1e3,
                         "extra_cost": joules * price, "extra_co2_t": joules * co2 / 1e3})
    monthly = pd.DataFrame(rows, columns=["unit", "month", "running_hours", "steady_points",
                                          "extra_shaft_kW", "extra_shaft_MWh",
                                          "extra_driver_input_MWh", "extra_cost",
                                          "extra_co2_t"])
    months = _months_covered(hours)
    for u, group in monthly.groupby("unit", sort=False):
        mean_cost = float(group["extra_cost"].sum() / months.get(u, len(group)))
        row = {"unit": u, "currency": econ.currency, "mean_monthly_cost": mean_cost}
        for name, cost in (("wash", wash_cost), ("overhaul", overhaul_cost)):
            if cost is not None:
                row[f"{name}_payback_months"] = cost / mean_cost if mean_cost > 0 else np.inf
        payback.append(row)
    return monthly, pd.DataFrame(payback)
