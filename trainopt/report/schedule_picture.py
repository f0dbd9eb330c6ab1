"""The schedule picture: each unit's running periods and share of the flow over time.

One lane per unit, stacked under a strip of the demand. In a lane, a step area rises to
the unit's share of the station's net flow while it carries flow, over a dark bar along
the lane's foot while it runs (a unit held running in full recycle, e.g. for the trip
reserve, shows the bar alone); a start-up period (running, no flow yet) is hatched; an
upward wedge marks a start, a downward one a stop. Drawn with matplotlib's Agg canvas.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

_LANE = ["#2a6f97", "#c8553d", "#588157", "#8f5fb0", "#d4a017", "#3d8c95", "#a23e48",
         "#6c757d"]


def schedule_figure(result) -> Figure:
    """Demand strip and one lane per unit (flow share, start-up, starts and stops).

    Parameters
    ----------
    result : ScheduleResult

    Returns
    -------
    matplotlib.figure.Figure
    """
    periods = result.periods
    units = list(dict.fromkeys(periods["unit"]))
    times = pd.DatetimeIndex(periods["time"].drop_duplicates())
    step = pd.Timedelta(seconds=result.period)
    edges = np.append(times, times[-1] + step)
    fig = Figure(figsize=(11.0, 1.6 + 0.95 * len(units)), layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(len(units) + 1, 1, sharex=True,
                        gridspec_kw={"height_ratios": [1.4] + [1.0] * len(units)})
    demand = periods.groupby("time", sort=True)["net_flow_kg_s"].sum().to_numpy()
    top = axes[0]
    top.stairs(demand, edges, color="#1f2a33", lw=1.4, baseline=None)
    top.set_ylabel("station\nnet flow\n[kg/s]", rotation=0, ha="right", va="center",
                   fontsize=8)
    top.set_title(f"{result.case_name}: units running and their share of the flow",
                  loc="left", fontsize=10)
    for j, (ax, unit) in enumerate(zip(axes[1:], units, strict=True)):
        rows = periods[periods["unit"] == unit].sort_values("time")
        share = np.where(rows["running"] & ~rows["starting"], rows["flow_share_pct"], 0.0)
        colour = _LANE[j % len(_LANE)]
        ax.stairs(share, edges, fill=True, color=colour, alpha=0.55, baseline=0.0)
        ax.stairs(share, edges, color=colour, lw=1.0, baseline=None)
        running = rows["running"].to_numpy().astype(float) * 5.0
        ax.stairs(running, edges, fill=True, color="#1f2a33", alpha=0.8, baseline=0.0)
        starting = rows["starting"].to_numpy()
        for k in np.flatnonzero(starting):
            ax.fill_between([edges[k], edges[k + 1]], 0, 12, facecolor="none",
                            edgecolor=colour, hatch="////", lw=0)
        for k in np.flatnonzero(rows["started"].to_numpy()):
            ax.plot(edges[k], 104, marker="^", color=colour, ms=7, clip_on=False)
        for k in np.flatnonzero(rows["stopped"].to_numpy()):
            ax.plot(edges[k], 104, marker="v", color="#1f2a33", ms=6, clip_on=False)
        ax.set_ylim(0, 100)
        ax.set_yticks([0, 50, 100])
        ax.tick_params(labelsize=7)
        ax.set_ylabel(f"{unit}\nshare [%]", rotation=0, ha="right", va="center", fontsize=8)
    for ax in axes:
        ax.grid(color="#d9dee3", lw=0.5)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
    axes[-1].set_xlabel(f"time ({times.tz or 'no zone'}); ^ start, v stop, hatched: "
                        "start-up (no flow yet)", fontsize=8)
    return fig
