"""Calibrate each unit's as-new map to its operating history: degradation factors.

:func:`calibrate` reads the history, keeps the steady rows, reduces them to measured head
and efficiency (:mod:`~trainopt.studies.field_points`), fits ``head_factor``,
``efficiency_factor`` and optionally ``flow_factor`` per unit with their standard errors
(:mod:`~trainopt.studies.calibration_fit`), once for the whole period and once per calendar
month (the trend), and returns the calibrated case: the as-new maps times the factors
(:mod:`trainopt.machines.degradation`). :func:`calibrated_case_text` writes that case as
YAML with a ``calibration`` key under each unit, the original maps untouched.

Example
-------
>>> from trainopt.studies.calibration import calibrate          # doctest: +SKIP
>>> result = calibrate("station.yaml", "history.csv", "columns.yaml")   # doctest: +SKIP
>>> result.factors                                              # doctest: +SKIP
"""

from __future__ import annotations

import dataclasses
import os
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from trainopt.errors import InputError
from trainopt.machines.degradation import Degradation, DegradationWarning, degraded_map
from trainopt.studies.calibration_fit import FactorFit, fit_factors, predict
from trainopt.studies.field_points import FieldPoints, field_points
from trainopt.studies.steady_windows import SteadyBands

MIN_POINTS = 12
"""Fewest steady points [-] a unit (or a month of the trend) needs to be fitted."""

_FACTORS = ("head_factor", "efficiency_factor", "flow_factor")


class CalibrationWarning(UserWarning):
    """A unit could not be calibrated (too few steady points); it keeps its as-new map."""


@dataclass
class CalibrationResult:
    """Degradation factors per unit and the calibrated case.

    Attributes
    ----------
    factors : pandas.DataFrame
        One row per unit: ``unit``, ``head_factor``, ``head_factor_se``,
        ``efficiency_factor``, ``efficiency_factor_se``, ``flow_factor``, ``flow_factor_se``
        (standard errors [-], NaN when held fixed), ``points`` (steady points used),
        ``excluded_rows``, ``period_start``, ``period_end``, ``note``,
        ``measured_over_gas_power`` (median recorded power over ``m (h2 - h1)``, the
        power cross-check).
    trend : pandas.DataFrame
        The same per unit and calendar month (``month``), for months with enough points
        (without ``excluded_rows``: the rows left out are counted for the whole period).
    points : pandas.DataFrame
        The measured points with the as-new map's prediction (``map_head``,
        ``map_efficiency``) and the calibrated one (``fitted_head``, ``fitted_efficiency``).
    excluded : pandas.DataFrame
        ``unit``, ``reason``, ``rows``: every history row left out, by its first reason.
    case : Case
        The calibrated case.
    as_new_case : Case
        The case with its as-new maps.
    notes : dict of str to list of str
    bands : SteadyBands
    running_hours : pandas.DataFrame
        ``unit``, ``month``, ``running_hours`` (rows with flow and speed, steady or not),
        ``period_hours`` (hours of the month the history covers).
    """

    factors: pd.DataFrame
    trend: pd.DataFrame
    points: pd.DataFrame
    excluded: pd.DataFrame
    case: object
    as_new_case: object
    notes: dict = field(default_factory=dict)
    bands: SteadyBands = field(default_factory=SteadyBands)
    running_hours: pd.DataFrame = field(default_factory=pd.DataFrame)

    def summary(self) -> str:
        """A short text summary (factors with their standard errors)."""
        lines = [self.bands.describe()]
        for row in self.factors.itertuples():
            if row.points == 0 or np.isnan(row.head_factor_se):
                lines.append(f"{row.unit}: not calibrated ({row.note})")
                continue
            flow = ("" if np.isnan(row.flow_factor_se) else
                    f", flow {row.flow_factor:.4f} ± {row.flow_factor_se:.4f}")
            lines.append(f"{row.unit}: head {row.head_factor:.4f} ± {row.head_factor_se:.4f}, "
                         f"efficiency {row.efficiency_factor:.4f} ± "
                         f"{row.efficiency_factor_se:.4f}{flow} ({row.points} steady points, "
                         f"{row.excluded_rows} rows excluded){'; ' + row.note if row.note else ''}")
        return "\n".join(lines)


def _as_new_case(case):
    from trainopt.case.loading import load_case

    path = case if isinstance(case, (str, Path)) else case.path
    return load_case(path, calibrated=False)


def _history(history, columns, case, since, until):
    from trainopt.studies.history_reader import History, read_history

    if not isinstance(history, History):
        if columns is None:
            raise InputError("--columns", "is missing", "give the column mapping (YAML) of "
                             "the history")
        history = read_history(history, columns, case)
    frame = history.frame
    keep = np.ones(len(frame), bool)
    stamps = {}
    for text, side in ((since, "since"), (until, "until")):
        if text is None:
            continue
        try:
            stamp = pd.Timestamp(text)
        except (ValueError, TypeError):
            stamp = None
        if stamp is None or stamp is pd.NaT:
            raise InputError(f"--{side}", f"cannot read the date {text!r}",
                             "write e.g. 2023-01-01")
        if stamp.tz is None:
            stamp = stamp.tz_localize(frame.index.tz)
        stamps[side] = stamp
        keep &= (frame.index >= stamp) if side == "since" else (frame.index <= stamp)
    outside = int((~keep).sum())
    if outside:
        history = dataclasses.replace(history, frame=frame[keep])
    if len(history.frame) == 0:
        raise InputError(*_empty_period(stamps, frame.index))
    return history, outside


def _when(stamp) -> str:
    return f"{stamp.tz_convert('UTC'):%Y-%m-%d %H:%M} UTC"


def _empty_period(stamps: dict, index) -> tuple[str, str, str]:
    """The field, problem and fix of a --since/--until period holding no history row."""
    first, last = index.min(), index.max()
    span = (f"give dates between {_when(first)} and {_when(last)} (the history's first and "
            "last rows)")
    since, until = stamps.get("since"), stamps.get("until")
    if since is not None and until is not None and since > until:
        return ("--since/--until", f"no history row lies in the period: --since "
                f"{_when(since)} is after --until {_when(until)}", "swap them")
    if since is not None and since > last:
        return ("--since", f"no history row lies in the period: {_when(since)} is after the "
                "history's last row", span)
    if until is not None and until < first:
        return ("--until", f"no history row lies in the period: {_when(until)} is before the "
                "history's first row", span)
    return ("--since/--until", "no history row lies in the period", span)


def _row(unit: str, fit: FactorFit | None, n_excluded: int, times, note: str) -> dict:
    if fit is None:
        row = {k: 1.0 for k in _FACTORS} | {f"{k}_se": np.nan for k in _FACTORS}
        row.update(points=0 if times is None else len(times), note=note)
    else:
        row = {k: getattr(fit, k) for k in _FACTORS} | {f"{k}_se": getattr(fit, f"{k}_se")
                                                         for k in _FACTORS}
        row.update(points=fit.points, note=fit.note)
    start = end = pd.NaT
    if times is not None and len(times):
        start, end = times.min(), times.max()
    return {"unit": unit, **row, "excluded_rows": n_excluded, "period_start": start,
            "period_end": end}


def calibrate(case, history, columns=None, *, since=None, until=None,
              bands: SteadyBands | None = None, fit_flow: bool = False,
              min_points: int = MIN_POINTS) -> CalibrationResult:
    """Fit each unit's degradation factors to its history and return the calibrated case.

    Parameters
    ----------
    case : Case or str or Path
        The station (its maps are taken as new: any ``calibration`` already in the case
        file is ignored for the fit).
    history : History or str or Path
        The history, or its file (then ``columns`` is needed).
    columns : ColumnMapping or str or Path, optional
        The column mapping; each unit needs its ``speed`` and ``discharge_temperature``.
    since, until : str or Timestamp, optional
        Period of the history to use (inclusive).
    bands : SteadyBands, optional
        What counts as steady.
    fit_flow : bool
        Fit ``flow_factor`` too (else it stays 1).
    min_points : int
        Fewest steady points per unit (and per month of the trend).

    Returns
    -------
    CalibrationResult

    Raises
    ------
    InputError
        No unit has enough steady points (the counts and the need are named), a missing
        speed or discharge-temperature column, a sensor giving impossible efficiencies.
    """
    bands = bands or SteadyBands()
    new_case = _as_new_case(case)
    history, outside = _history(history, columns, new_case, since, until)
    pts: FieldPoints = field_points(new_case, history, bands)
    excluded = pts.excluded
    if outside:
        excluded = pd.concat([excluded, pd.DataFrame(
            [(t.name, "outside the --since/--until period", outside)
             for t in new_case.trains], columns=excluded.columns)], ignore_index=True)
    rows, trend, fitted, degradations = [], [], [], {}
    for train in new_case.trains:
        u = train.name
        mine = pts.points[pts.points["unit"] == u] if len(pts.points) else pts.points
        n_out = int(excluded.loc[excluded["unit"] == u, "rows"].sum())
        if len(mine) < min_points:
            rows.append(_row(u, None, n_out, mine["time"] if len(mine) else None,
                             f"{len(mine)} steady points, {min_points} needed"))
            continue
        cmap = train.sections[0].compressor_map
        fit = fit_factors(cmap, mine, fit_flow=fit_flow)
        rows.append(_row(u, fit, n_out, mine["time"], "")
                    | {"measured_over_gas_power": _power_check(mine)})
        degradations[u] = Degradation(fit.head_factor, fit.efficiency_factor, fit.flow_factor)
        h, e = predict(cmap, mine, fit.head_factor, fit.efficiency_factor, fit.flow_factor)
        fitted.append(mine.assign(fitted_head=h, fitted_efficiency=e))
        months = mine["time"].dt.tz_convert("UTC").dt.strftime("%Y-%m")
        for month, group in mine.groupby(months.to_numpy()):
            if len(group) >= min_points:
                entry = _row(u, fit_factors(cmap, group, fit_flow=fit_flow), 0,
                             group["time"], "")
                entry.pop("excluded_rows")  # counted for the whole period only
                trend.append({"month": month, **entry})
    factors = pd.DataFrame(rows)
    if not degradations:
        counts = ", ".join(f"{r.unit} {r.points}" for r in factors.itertuples())
        raise InputError("history", f"too few steady points to calibrate any unit ({counts}; "
                         f"{min_points} needed per unit)", "give a longer period, or widen "
                         "the steady bands (--steady-hours, --speed-band ...)")
    for r in factors.itertuples():
        if r.points < min_points:
            warnings.warn(f"unit {r.unit}: {r.note}; it keeps its as-new map",
                          CalibrationWarning, stacklevel=2)
    for u, d in degradations.items():
        odd = d.outside_plausible()
        if odd:
            warnings.warn(f"unit {u}: {', '.join(odd)} outside 0.7-1.1: check the sensors "
                          "and the history before trusting it", DegradationWarning,
                          stacklevel=2)
    return CalibrationResult(
        factors, pd.DataFrame(trend), pd.concat(fitted, ignore_index=True), excluded,
        calibrated_case(new_case, degradations), new_case, pts.notes, bands,
        _running_hours(history))


def _power_check(points: pd.DataFrame) -> float:
    """Median of recorded power over gas power ``m (h2 - h1)`` [-]; NaN if none recorded.

    A cross-check only (the efficiency comes from the temperature rise): about
    1 + mechanical loss for a shaft-power meter, more for a driver's input.
    """
    ratio = points["measured_power"] / points["gas_power"]
    ratio = ratio[np.isfinite(ratio)]
    return float(ratio.median()) if len(ratio) else np.nan


def _running_hours(history) -> pd.DataFrame:
    """Hours each unit ran (flow and speed above zero) per calendar month (UTC).

    ``period_hours`` is the hours of that month the history covers (its rows times its
    interval), so that a month cut by ``--since``/``--until`` is known to be part of one.
    """
    frame = history.frame
    month = frame.index.tz_convert("UTC").strftime("%Y-%m")
    covered = pd.Series(1, index=frame.index).groupby(month).sum() * history.interval / 3600.0
    out = []
    for u in history.units:
        speed = frame.get(f"{u}.speed", pd.Series(np.nan, index=frame.index))
        running = (frame[f"{u}.flow"] > 0) & (speed.fillna(0) > 0)
        counts = running.groupby(month).sum() * history.interval / 3600.0
        out += [{"unit": u, "month": m, "running_hours": float(h),
                 "period_hours": float(covered[m])} for m, h in counts.items()]
    return pd.DataFrame(out, columns=["unit", "month", "running_hours", "period_hours"])


def split_groups(case, degradations: dict[str, Degradation]) -> set[str]:
    """Groups whose units were calibrated to different factors (no longer identical)."""
    split = set()
    for train in case.trains:
        if train.group is None:
            continue
        members = {degradations.get(t.name, Degradation()) for t in case.trains
                   if t.group == train.group}
        if len(members) > 1:
            split.add(train.group)
    return split


def calibrated_case(case, degradations: dict[str, Degradation]):
    """The case with each named unit's maps degraded (the others as they are).

    Units of a ``group`` (identical units) calibrated to different factors leave their
    group: they are no longer identical.
    """
    split = split_groups(case, degradations)
    trains = []
    for train in case.trains:
        d = degradations.get(train.name)
        if d is not None:
            sections = tuple(dataclasses.replace(s, compressor_map=degraded_map(
                s.compressor_map, d)) for s in train.sections)
            train = dataclasses.replace(train, sections=sections)
        if train.group in split:
            train = dataclasses.replace(train, group=None)
        trains.append(train)
    return dataclasses.replace(case, trains=tuple(trains))


def _relative(value: str, source: Path, target: Path) -> str:
    path = Path(value)
    if path.is_absolute():
        return value
    full, there = (source / path).resolve(), target.resolve()
    if os.path.commonpath([full, there]) == os.path.sep:  # nothing shared: keep it absolute
        return full.as_posix()
    return Path(os.path.relpath(full, there)).as_posix()


def calibrated_case_text(result: CalibrationResult, out_dir: str | Path) -> str:
    """The calibrated case file (YAML) to be written in ``out_dir``.

    The original case with, under each calibrated unit, a ``calibration`` key holding the
    factors, their standard errors, the period and the point counts; map and gas file
    paths are rewritten relative to ``out_dir`` so that the original maps are used as they
    are.
    """
    import yaml

    from trainopt.case.gas_file import read_yaml

    source = Path(result.as_new_case.path)
    data = read_yaml(source)
    here, there = source.parent, Path(out_dir)
    if isinstance(data.get("gas"), dict) and data["gas"].get("file"):
        data["gas"]["file"] = _relative(data["gas"]["file"], here, there)
    by_unit = {r.unit: r for r in result.factors.itertuples()}
    calibrated = {t.name: t for t in result.case.trains}
    for unit in data["units"]:
        if unit.get("group") is not None and calibrated[unit["name"]].group is None:
            unit.pop("group")  # its group's units were calibrated apart
        if unit.get("map"):
            unit["map"] = _relative(unit["map"], here, there)
        for section in unit.get("sections") or []:
            section["map"] = _relative(section["map"], here, there)
        unit.pop("calibration", None)
        r = by_unit.get(unit["name"])
        if r is None or r.points == 0 or np.isnan(r.head_factor_se):
            continue
        entry = {}
        for k in _FACTORS:
            entry[k] = round(float(getattr(r, k)), 5)
            se = float(getattr(r, f"{k}_se"))
            if np.isfinite(se):
                entry[f"{k}_uncertainty"] = round(se, 5)
        entry["period"] = f"{r.period_start:%Y-%m-%d %H:%M} to {r.period_end:%Y-%m-%d %H:%M}"
        entry["points"] = int(r.points)
        entry["excluded_rows"] = int(r.excluded_rows)
        unit["calibration"] = entry
    from trainopt.caution import CAUTION

    head = (f"# Calibrated from {source.name} by 'trainopt calibrate': the as-new maps times "
            "each unit's\n# calibration factors (docs/calibration.md). The maps are not "
            f"changed.\n# {CAUTION}\n")
    return head + yaml.safe_dump(data, sort_keys=False, allow_unicode=True)
