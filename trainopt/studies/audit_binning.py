"""Condition bins of the history audit: how finely conditions are quantised, and the grouping.

Rows are grouped into bins of suction and discharge pressure and suction temperature, per
gas; each bin is reduced once at the mean conditions of its rows
(:func:`~trainopt.studies.audit.audit_history`). Bins of few rows join a near big one.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from trainopt.errors import InputError


@dataclass(frozen=True)
class Binning:
    """How finely conditions are quantised.

    Attributes
    ----------
    pressure : float
        Width of suction and discharge pressure bins [Pa] (default 0.25 bar).
    temperature : float
        Width of suction temperature bins [K] (default 2 K).
    ambient : float
        Ambient spread allowed under a power-limited optimum [K]: rows whose optimum puts
        a driver at its power limit and that are cooler than the bin's warmest row by
        more are re-reduced in sub-bins of this width (default 10 K).
    demand_step : float
        Spacing of the demands solved in a bin, as a fraction of the case's demand [-];
        rows in between interpolate the two neighbouring dispatches when both run the
        same units, and are solved exactly otherwise (default 0.02).
    min_rows : int
        A bin of fewer rows joins the nearest bin of the same gas with at least this many
        whose mean conditions lie within one bin width in every condition (default 24):
        a reduction costs about a second, whatever the number of rows.
    """

    pressure: float = 0.25e5
    temperature: float = 2.0
    ambient: float = 10.0
    demand_step: float = 0.02
    min_rows: int = 24

    def __post_init__(self):
        for name in ("pressure", "temperature", "ambient", "demand_step"):
            if not getattr(self, name) > 0:
                raise InputError(f"binning.{name}", f"{getattr(self, name)!r} is not a "
                                 "positive width", "give a positive number")
        if not (isinstance(self.min_rows, int) and self.min_rows >= 1):
            raise InputError("binning.min_rows", f"{self.min_rows!r} is not a row count",
                             "give a whole number of 1 or more")


def condition_bins(frame: pd.DataFrame, binning: Binning) -> list[tuple[tuple, np.ndarray]]:
    """Group rows into condition bins; small bins join a near big one.

    Parameters
    ----------
    frame : pandas.DataFrame
        :attr:`~trainopt.studies.history_reader.History.frame`.
    binning : Binning

    Returns
    -------
    list of (key, positions)
        ``key`` is (gas, suction pressure, discharge pressure, suction temperature) in
        bin widths; positions index ``frame``'s rows.
    """
    scaled = pd.DataFrame({"p1": frame["suction_pressure"].to_numpy() / binning.pressure,
                           "p2": frame["discharge_pressure"].to_numpy() / binning.pressure,
                           "t1": frame["suction_temperature"].to_numpy() / binning.temperature})
    keys = scaled.round().assign(gas=frame["gas"].to_numpy())
    groups = dict(keys.groupby(["gas", "p1", "p2", "t1"], sort=True).indices)
    means = {k: scaled.iloc[pos].mean().to_numpy() for k, pos in groups.items()}
    big = [k for k, pos in groups.items() if len(pos) >= binning.min_rows]
    for key in [k for k in groups if k not in big]:
        near = [(np.max(np.abs(means[key] - means[b])), b) for b in big if b[0] == key[0]]
        if near and min(near)[0] <= 1.0:
            target = min(near)[1]
            groups[target] = np.sort(np.concatenate([groups[target], groups.pop(key)]))
    return sorted(groups.items(), key=lambda kv: kv[0])
