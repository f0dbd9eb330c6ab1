"""Steady-state windows of an operating history: which rows a field-test reduction may use.

A head and efficiency read from pressures and temperatures are only meaningful when the
machine is steady: the discharge temperature lags a change of speed or flow by minutes, and
a recycle valve on the move mixes hot gas into the suction. A row is **steady** when, over
the window of :attr:`SteadyBands.duration` ending at it, every quantity stays within its
band (largest minus smallest value, against the band).

The default bands follow the permissible fluctuations of a performance test, from memory
after ASME PTC 10-1997 Table 3.3 (speed 0.5 %, pressures 2 %, inlet temperature about
0.5 % of absolute temperature, flow 2 % in that table); the speed band is widened to 1 %
here because historian rows are averages, not test readings. State your own where the
history is noisier.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd


@dataclass(frozen=True)
class SteadyBands:
    """Bands that make a window steady.

    Parameters
    ----------
    duration : float
        Length of the window that must be steady, ending at the row [s]; default 3 h
        (three hourly rows).
    speed : float
        Largest speed spread in the window, fraction of its mean [-].
    flow : float
        Largest flow spread, fraction of its mean [-].
    pressure : float
        Largest spread of each pressure, fraction of its mean [-].
    temperature : float
        Largest spread of each temperature [K].
    recycle_valve : float
        A valve opening above this fraction counts as open [-].
    """

    duration: float = 3 * 3600.0
    speed: float = 0.01
    flow: float = 0.02
    pressure: float = 0.02
    temperature: float = 2.0
    recycle_valve: float = 0.01

    def describe(self) -> str:
        """One line for reports."""
        return (f"steady over {self.duration / 3600:g} h: speed within {100 * self.speed:g} %, "
                f"flow within {100 * self.flow:g} %, pressures within {100 * self.pressure:g} %, "
                f"temperatures within {self.temperature:g} K; recycle valve open above "
                f"{100 * self.recycle_valve:g} %")


def _spread(series: pd.Series, duration: float) -> np.ndarray:
    """Largest minus smallest value over the window ending at each row (time-based)."""
    window = f"{int(round(duration))}s"
    rolling = series.rolling(window, min_periods=1)
    return (rolling.max() - rolling.min()).to_numpy()


def _covered(index: pd.DatetimeIndex, duration: float, interval: float) -> np.ndarray:
    """True where the window ending at the row holds as many rows as it should (no gap)."""
    counts = pd.Series(1.0, index=index).rolling(f"{int(round(duration))}s").sum().to_numpy()
    needed = max(1, int(np.floor(duration / max(interval, 1.0) + 1e-9)))
    return counts >= needed


def unsteady_reasons(frame: pd.DataFrame, columns: dict[str, str], bands: SteadyBands,
                     interval: float) -> np.ndarray:
    """The first reason each row is not steady ('' where it is).

    Parameters
    ----------
    frame : pandas.DataFrame
        Rows indexed by time (rising).
    columns : dict of str to str
        Quantity kind (``speed``, ``flow``, ``pressure``, ``temperature``) for each column
        name to check; several columns may share a kind.
    bands : SteadyBands
    interval : float
        Typical row spacing [s].

    Returns
    -------
    numpy.ndarray of str
        ``'not steady: <column>'``, ``'window incomplete (gap in the history)'`` or ''.
    """
    reasons = np.full(len(frame), "", dtype=object)
    reasons[~_covered(frame.index, bands.duration, interval)] = \
        "window incomplete (gap in the history)"
    for column, kind in columns.items():
        values = frame[column].astype(float)
        spread = _spread(values, bands.duration)
        if kind == "temperature":
            bad = spread > bands.temperature
        else:
            scale = values.abs().rolling(f"{int(round(bands.duration))}s", min_periods=1).mean()
            with np.errstate(divide="ignore", invalid="ignore"):
                bad = spread > getattr(bands, kind) * scale.to_numpy()
        bad &= reasons == ""
        reasons[bad] = f"not steady: {column}"
    return reasons
