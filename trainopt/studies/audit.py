"""History audit: the power spent on recycle and on poor load sharing, hour by hour.

For every row of a :class:`~trainopt.studies.history_reader.History` the audit evaluates the
recorded split on the station's true model (map, gas, driver) and the split the optimiser
would have chosen for the same delivered flow, units available and conditions. The
definitions (``docs/studies.md``):

- **useful power** of a unit: ``P_shaft * m_net / m_through``; **recycle power**:
  ``P_shaft * m_recycle / m_through``. Every kilogram through the compressor takes the same
  specific work, so the recycle power is the share of shaft power that compresses gas the
  recycle valve lets back to suction; the two parts add up to the shaft power.
- **avoidable power**: the recorded split's model power less the optimum's model power,
  both at the same conditions, so that a meter's offset from the model cancels. It
  includes the recycle that a better commitment or split avoids, and the loss of unequal
  efficiency between the units.
- the row stands for the median spacing of the timestamps; energies are power times it.

Speed comes from quantising the conditions: rows are grouped into bins of suction and
discharge pressure and suction temperature (:class:`Binning`); each bin's units are reduced
once (:class:`~trainopt.station.reduced.Station`) at the mean conditions of its rows and one
dispatch model serves every demand in the bin. Ambient temperature changes only the
drivers: each row's drivers are evaluated at its own ambient, and a bin is reduced at the
warmest ambient of its rows so that the optimum never counts on gas-turbine power a row did
not have. Bins run on all cores or on a Dask cluster (:mod:`~trainopt.studies.parallel`).

The parts: condition bins in :mod:`~trainopt.studies.audit_binning`, the per-bin worker and
the recorded split in :mod:`~trainopt.studies.audit_worker`, the optimum split in
:mod:`~trainopt.studies.audit_optimum`, and the tables, totals and flags in
:mod:`~trainopt.studies.audit_result`. Their public names are importable from here.
"""

from __future__ import annotations

import dataclasses
import time

import pandas as pd

from trainopt.errors import InputError
from trainopt.studies.audit_binning import Binning, condition_bins
from trainopt.studies.audit_result import FLOW_BALANCE_TOLERANCE, AuditResult, _assemble
from trainopt.studies.audit_worker import (
    HEAD_TOLERANCE,
    LIMIT_TOLERANCE,
    RECYCLE_EXCESS,
    RUNNING_FRACTION,
    _BinTask,
    audit_bin,
)
from trainopt.studies.history_reader import History
from trainopt.studies.parallel import run_tasks

__all__ = [
    "FLOW_BALANCE_TOLERANCE",
    "HEAD_TOLERANCE",
    "LIMIT_TOLERANCE",
    "RECYCLE_EXCESS",
    "RUNNING_FRACTION",
    "AuditResult",
    "Binning",
    "audit_bin",
    "audit_history",
    "condition_bins",
    "gas_recipes",
    "single_section_only",
]


def gas_recipes(case, history: History) -> dict:
    """Gas label to (components, equation of state), building each gas once to check it."""
    from trainopt.case.gas_file import load_gas
    from trainopt.physics.gas import Gas

    eos = case.gas.equation_of_state
    out = {}
    for label, value in history.gases.items():
        field = f"{history.mapping.where}: station.gas.compositions.{label}"
        if isinstance(value, str) and value == "case":
            gas = case.gas
        elif isinstance(value, dict):
            gas = Gas.from_composition(value, eos, field)
        else:
            gas = load_gas(value, eos)
        out[label] = (gas.components, eos)
    return out


def single_section_only(case, study: str) -> None:
    """Refuse a case with series trains: the studies evaluate single-section units so far."""
    for train in case.trains:
        if not train.is_single_section:
            raise InputError(f"units.{train.name}", f"is a train of {len(train.sections)} "
                             f"sections; {study} evaluates single-section units so far",
                             "take the train offline for this study, or audit it separately")


def audit_history(case, history: History, *, binning: Binning | None = None,
                  objective: str | None = None, workers: int | None = None, scheduler=None,
                  progress: bool = True) -> AuditResult:
    """Audit a history: recorded split against the optimum, row by row.

    Parameters
    ----------
    case : Case
        The station (its units' statuses are ignored: the history says which ran and,
        through ``available`` columns, which could have).
    history : History
        From :func:`~trainopt.studies.history_reader.read_history`.
    binning : Binning, optional
        Condition bins and demand step.
    objective : str, optional
        What the optimum minimises (``shaft_power``, ``energy_input``, ``cost``); the
        case's by default.
    workers : int, optional
        Local processes (default every core; 1 runs here).
    scheduler : str or distributed.Client, optional
        Dask scheduler address (``tcp://host:8786``) instead of local processes.
    progress : bool
        Show a progress bar.

    Returns
    -------
    AuditResult
    """
    from trainopt.physics.units import Kind, parse_quantity
    from trainopt.station.reduced import OBJECTIVES

    single_section_only(case, "the history audit")
    binning = binning or Binning()
    objective = objective or case.objective
    if objective not in OBJECTIVES:
        raise InputError("objective", f"unknown objective '{objective}'",
                         f"use one of {', '.join(OBJECTIVES)}")
    recipes = gas_recipes(case, history)
    frame = history.frame
    mapping = history.mapping
    meta = {"basis": history.flow_basis, "measures": {}, "power_measures": {}, "valves": {},
            "valve_temperature": {}}
    for u, spec in mapping.units.items():
        meta["measures"][u] = spec.flow.measures
        if spec.power is not None:
            meta["power_measures"][u] = spec.power.measures
        if spec.recycle_valve is not None:
            meta["valves"][u] = spec.recycle_valve
            if spec.recycle_valve.inlet_temperature is not None:
                meta["valve_temperature"][u] = parse_quantity(
                    spec.recycle_valve.inlet_temperature, Kind.TEMPERATURE,
                    f"{mapping.where}: units.{u}.recycle_valve.inlet_temperature")
    if frame.empty:
        from trainopt.studies.history_reader import describe_skips

        raise InputError(str(history.source or "history"), "no row is left to audit; "
                         + describe_skips(history.skipped).replace("\n", "; "),
                         "check the column mapping and the file against the skip reasons")
    groups = condition_bins(frame, binning)
    transport = dataclasses.replace(case, gas=None)
    # per-unit columns ("A.flow") and the station's flow meter, for the flow-balance check
    data_columns = [c for c in frame.columns if "." in c or c == "station_flow"]
    tasks, bins = [], []
    for number, (key, pos) in enumerate(groups):
        sub = frame.iloc[pos]
        cond = (float(sub["suction_pressure"].mean()), float(sub["discharge_pressure"].mean()),
                float(sub["suction_temperature"].mean()), float(sub["ambient_temperature"].max()))
        rows = {"ambient": sub["ambient_temperature"].to_numpy(float)}
        rows.update({c: sub[c].to_numpy() for c in data_columns})
        tasks.append(_BinTask(transport, recipes[key[0]], cond, rows, meta, objective, binning))
        bins.append({"bin": number, "gas": key[0], "rows": len(pos),
                     "suction_pressure_bar": cond[0] / 1e5,
                     "discharge_pressure_bar": cond[1] / 1e5,
                     "suction_temperature_C": cond[2] - 273.15,
                     "warmest_ambient_C": cond[3] - 273.15})
    start = time.perf_counter()
    results = run_tasks(audit_bin, tasks, workers=workers, scheduler=scheduler,
                        weights=[len(pos) for _, pos in groups], progress=progress,
                        description="audit", unit="row")
    seconds = time.perf_counter() - start
    bins = pd.DataFrame(bins)
    hours, units = _assemble(case, history, recipes, groups, results, bins)
    skipped = dict(history.skipped)
    for reason, count in hours.loc[hours["status"] != "audited", "status"].value_counts().items():
        skipped[str(reason)] = skipped.get(str(reason), 0) + int(count)
    return AuditResult(case, hours, units, skipped, len(frame) + len(history.skipped_rows),
                       history.interval, bins, binning, seconds, objective)
