"""Make an INVENTED year of hourly operation for the demo station (seeded, reproducible).

Nothing here is measured: it is a made-up scenario for trying the history audit on
``cases/demo/station.yaml``. Run from the repository root::

    python cases/demo/history/make_history.py            # writes station_history.csv
    python cases/demo/history/make_history.py --out other.csv --seed 7 --force

The scenario (calendar year 2023, timestamps in UTC, 8,760 hours):

- **Demand** in MMSCMD: 40 on average, +8 in mid-January and -8 in mid-July (a cosine
  over the year), morning and evening peaks of about +2.5 and +2, a night trough of
  -2.5, -2 at weekends, and an AR(1) wander (phi 0.95, sigma 0.35).
- **Headers**: discharge pressure held at 66 bar (November to March) or 65 bar (April to
  October) absolute with 0.04 bar of noise; suction pressure falls by 0.045 bar per MMSCMD
  of demand around 44.6 bar, with a small daily swing; suction temperature follows the
  ground (11.5-19.5 degC over the year); ambient swings 5 K a day around a seasonal
  1-21 degC. Pressures are written in barg at the site's 180 m elevation.
- **Gas**: the case's lean gas until 30 June; from 1 July a richer supply (label
  ``rich``, composition in ``columns.yaml``).
- **How the operators run it** (an invented habit, not a recommendation): each day they
  commit units by the day's peak demand (below 33 MMSCMD: C and A; below 50: C, A and B;
  above: all four), and share the flow in proportion to each unit's nominal flow on
  their sheet (A and B 150, C 250, D 125 kg/s). The anti-surge controller holds every unit
  at or right of its surge control line, recycling what the unit cannot deliver.
- **Weeks of recycle from poor sharing**: 6 March to 9 April, unit B's load sharing is
  left in manual; B delivers a fixed 60 kg/s and recycles the rest of its surge-control
  flow while the others carry the balance.
- **A unit out for a month**: D is unavailable for maintenance through September.
- **Meters**: unit through-flows (Sm3/h, at each compressor's suction flow element);
  recycle-valve positions on A, B and D (linear valves, rated Kv 800 m3/h); a recycle
  flow meter on C; speeds; electrical input power of the motor units A, B and D (D reads
  4 % above the model from August: fouling, invented); the station's delivery meter.
- **Data faults**: a 12-hour historian outage (14 February, blank rows), a few
  ``I/O Timeout`` texts, four frozen ``-9999`` suction pressures, three timestamps
  exported twice, and A's flow element reading 35 % low from 13 to 19 November (fouled):
  the audit should flag those hours as left of the surge line without recycle.

Speeds, powers and valve positions come from trainopt's own model of the demo units at
each month's mean conditions, plus meter noise: the file is a consistent invented story,
not a reference for testing trainopt.
"""

from __future__ import annotations

import argparse
import dataclasses
import sys
from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).resolve().parent
CASE = HERE.parent / "station.yaml"
YEAR = 2023
NOMINAL_FLOW = {"A": 150.0, "B": 150.0, "C": 250.0, "D": 125.0}
"""Operators' sheet: each unit's nominal flow for proportional sharing [kg/s] (invented)."""
RICH_GAS = {"methane": 0.872, "ethane": 0.072, "propane": 0.026, "isobutane": 0.004,
            "n-butane": 0.005, "isopentane": 0.0012, "n-pentane": 0.0008, "n-hexane": 0.0003,
            "nitrogen": 0.0085, "carbon dioxide": 0.010}
"""The invented richer gas from 1 July (mole fractions; also in columns.yaml)."""
VALVE_KV = 800.0
"""Rated Kv of the recycle valves of A, B and D [m3/h] (invented, linear trim)."""
VALVE_INLET_TEMPERATURE = 303.15
"""Gas temperature at the recycle valves, after the discharge cooler [K] (invented)."""


def _ar1(rng, n: int, phi: float, sigma: float) -> np.ndarray:
    x = np.zeros(n)
    noise = rng.normal(0.0, sigma, n)
    for i in range(1, n):
        x[i] = phi * x[i - 1] + noise[i]
    return x


def conditions(rng) -> pd.DataFrame:
    """Hourly demand [MMSCMD] and header conditions [bar abs, degC] of the invented year."""
    time = pd.date_range(f"{YEAR}-01-01", periods=8760, freq="h", tz="UTC")
    n = len(time)
    day = (time.day_of_year.to_numpy() - 1) + time.hour.to_numpy() / 24.0
    hour = time.hour.to_numpy()
    season = np.cos(2 * np.pi * (day - 15) / 365)

    def bump(centre, width):
        return np.exp(-0.5 * ((hour - centre) / width) ** 2)

    demand = (40 + 8 * season + 2.5 * bump(8, 1.5) + 2.0 * bump(19, 2.0) - 2.5 * bump(3, 2.0)
              - 2.0 * (time.day_of_week.to_numpy() >= 5) + _ar1(rng, n, 0.95, 0.35))
    winter = np.isin(time.month.to_numpy(), [11, 12, 1, 2, 3])
    p2 = np.where(winter, 66.0, 65.0) + rng.normal(0.0, 0.04, n)
    p1 = (44.6 - 0.045 * (demand - 40) + 0.1 * np.sin(2 * np.pi * (hour - 6) / 24)
          + _ar1(rng, n, 0.98, 0.02))
    t1 = (15.5 - 4 * np.cos(2 * np.pi * (day - 40) / 365)
          + 0.3 * np.sin(2 * np.pi * (hour - 15) / 24) + _ar1(rng, n, 0.99, 0.05))
    ambient = (11 - 10 * np.cos(2 * np.pi * (day - 20) / 365)
               + 5 * np.sin(2 * np.pi * (hour - 9) / 24) + _ar1(rng, n, 0.9, 0.7))
    gas = np.where(time.month.to_numpy() >= 7, "rich", "lean")
    return pd.DataFrame({"demand": demand, "p1": p1, "p2": p2, "t1": t1, "ambient": ambient,
                         "gas": gas}, index=time)


def monthly_stations(case, cond: pd.DataFrame) -> dict:
    """A reduced Station per month at the month's mean conditions (12 reductions)."""
    from trainopt.physics.gas import Gas
    from trainopt.station.reduced import Station

    rich = Gas.from_composition(RICH_GAS, case.gas.equation_of_state)
    out = {}
    for month, rows in cond.groupby(cond.index.month):
        gas = rich if rows["gas"].iloc[0] == "rich" else case.gas
        c = dataclasses.replace(case, gas=gas, suction_pressure=rows.p1.mean() * 1e5,
                                discharge_pressure=rows.p2.mean() * 1e5,
                                suction_temperature=rows.t1.mean() + 273.15,
                                ambient_temperature=rows.ambient.mean() + 273.15)
        out[month] = Station(c)
    return out


def _share(demand: float, running: list[str], lo: dict, hi: dict, fixed: dict) -> dict:
    """Proportional sharing with caps at the largest flow; fixed nets are taken first."""
    net = dict(fixed)
    free = [u for u in running if u not in fixed]
    rest = max(demand - sum(fixed.values()), 0.0)
    for _ in range(len(free) + 1):
        weight = sum(NOMINAL_FLOW[u] for u in free)
        if not free or weight <= 0:
            break
        trial = {u: rest * NOMINAL_FLOW[u] / weight for u in free}
        over = [u for u in free if trial[u] > hi[u]]
        if not over:
            net.update(trial)
            return net
        for u in over:
            net[u] = hi[u]
            rest -= hi[u]
            free.remove(u)
    for u in free:
        net[u] = 0.0
    return net


def operate_year(cond: pd.DataFrame, stations: dict, rng) -> pd.DataFrame:
    """Commitment, sharing, recycle, speed and power of every unit, hour by hour."""
    from trainopt.dispatch.reduction import operate

    case = stations[1].case
    units = [t.name for t in case.trains]
    time = cond.index
    day_peak = cond["demand"].groupby(time.normalize()).transform("max").to_numpy()
    d_out = (time >= pd.Timestamp(f"{YEAR}-09-01", tz="UTC")) & \
        (time < pd.Timestamp(f"{YEAR}-10-01", tz="UTC"))
    b_manual = (time >= pd.Timestamp(f"{YEAR}-03-06", tz="UTC")) & \
        (time < pd.Timestamp(f"{YEAR}-04-10", tz="UTC"))
    rows = []
    for i, (stamp, r) in enumerate(cond.iterrows()):
        st = stations[stamp.month]
        lo = {u: st.curves[u].min_flow for u in units}
        hi = {u: st.curves[u].max_flow for u in units}
        rho_std = st.case.gas.standard_density("iso")
        demand = r.demand * 1e6 / 86_400 * rho_std
        running = ["C", "A"] if day_peak[i] < 33 else ["C", "A", "B"] if day_peak[i] < 50 \
            else ["C", "A", "B", "D"]
        if d_out[i] and "D" in running:
            running.remove("D")
        fixed = {"B": 60.0} if b_manual[i] and "B" in running else {}
        net = _share(demand, running, lo, hi, fixed)
        row = {"time": stamp}
        for u in units:
            m = net.get(u, 0.0)
            through = max(m, lo[u]) if u in running else 0.0
            row[f"{u}.net"], row[f"{u}.through"] = m, through
        row["D.available"] = not d_out[i]
        rows.append(row)
    plan = pd.DataFrame(rows).set_index("time")
    for u in units:
        plan[f"{u}.speed"] = 0.0
        plan[f"{u}.input"] = 0.0
    for month, idx in plan.groupby(plan.index.month).groups.items():
        st = stations[month]
        for train in st.case.trains:
            through = plan.loc[idx, f"{train.name}.through"].to_numpy()
            on = through > 0
            if not on.any():
                continue
            op = operate(train, st.duty(train), through[on],
                         cond.loc[idx, "ambient"].to_numpy()[on] + 273.15)
            speed = np.zeros(len(idx))
            energy = np.zeros(len(idx))
            speed[on], energy[on] = op.speed, op.energy_input
            plan.loc[idx, f"{train.name}.speed"] = speed
            plan.loc[idx, f"{train.name}.input"] = energy
    return plan


def valve_position(recycle: np.ndarray, gas, p1: np.ndarray, p2: np.ndarray) -> np.ndarray:
    """Opening [%] of a linear recycle valve passing the recycle [kg/s] (IEC 60534-2-1)."""
    from fluids.control_valve import size_control_valve_g

    out = np.zeros(len(recycle))
    normal_density = 101_325.0 * gas.molar_mass / (8.314462618 * 273.15)
    for i in np.flatnonzero(recycle > 0):
        state = gas.state(p2[i], VALVE_INLET_TEMPERATURE)
        kv = size_control_valve_g(T=VALVE_INLET_TEMPERATURE, MW=gas.molar_mass * 1e3,
                                  mu=1.1e-5, gamma=state.cp / state.cv, Z=state.compressibility,
                                  P1=p2[i], P2=p1[i], Q=recycle[i] / normal_density, xT=0.7,
                                  allow_laminar=False)
        out[i] = 100.0 * kv / VALVE_KV
    return out


def history_table(cond: pd.DataFrame, plan: pd.DataFrame, stations: dict, rng) -> pd.DataFrame:
    """The historian export: our invented column names, units as in columns.yaml."""
    atm_bar = stations[1].case.atmospheric_pressure / 1e5
    n = len(cond)
    out = pd.DataFrame(index=cond.index)
    out["suct_press_barg"] = (cond.p1 - atm_bar).round(3)
    out["suct_temp_degc"] = cond.t1.round(2)
    out["disch_press_barg"] = (cond.p2 - atm_bar).round(3)
    out["ambient_degc"] = cond.ambient.round(1)
    rho = np.array([stations[m].case.gas.standard_density("iso") for m in cond.index.month])
    gases = {m: stations[m].case.gas for m in stations}
    total = sum(plan[f"{u}.net"].to_numpy() for u in "ABCD")
    out["station_flow_mmscmd"] = (total / rho * 86_400 / 1e6 *
                                  (1 + rng.normal(0, 0.003, n))).round(3)
    out["gas_quality"] = cond.gas
    for u in "ABCD":
        through = plan[f"{u}.through"].to_numpy()
        recycle = through - plan[f"{u}.net"].to_numpy()
        on = through > 0
        noise = 1 + rng.normal(0, 0.004, n)
        if u == "A":
            fouled = (cond.index >= pd.Timestamp(f"{YEAR}-11-13", tz="UTC")) & \
                (cond.index < pd.Timestamp(f"{YEAR}-11-20", tz="UTC"))
            noise = noise * np.where(fouled, 0.65, 1.0)
        out[f"{u}_flow_sm3h"] = np.where(on, through / rho * 3600 * noise, 0.0).round(0).astype(int)
        if u == "C":
            out["C_recycle_flow_sm3h"] = np.where(recycle > 0, recycle / rho * 3600,
                                                  0.0).round(0).astype(int)
        else:
            pos = np.zeros(n)
            for m, idx in pd.Series(np.arange(n)).groupby(cond.index.month).groups.items():
                idx = np.asarray(idx)
                pos[idx] = valve_position(recycle[idx], gases[m], cond.p1.to_numpy()[idx] * 1e5,
                                          cond.p2.to_numpy()[idx] * 1e5)
            out[f"{u}_recycle_valve_pct"] = pos.round(1)
        speed = plan[f"{u}.speed"].to_numpy() * 60 * (1 + rng.normal(0, 0.0015, n))
        out[f"{u}_speed_rpm"] = np.where(on, speed, 0.0).round(0).astype(int)
        if u != "C":
            power = plan[f"{u}.input"].to_numpy() / 1e3 * (1 + rng.normal(0, 0.008, n))
            if u == "D":
                power *= np.where(cond.index >= pd.Timestamp(f"{YEAR}-08-01", tz="UTC"), 1.04, 1)
            out[f"{u}_power_kw"] = np.where(on, power, 0.0).round(0).astype(int)
    out["D_available"] = plan["D.available"].astype(int)
    return out


def add_faults(table: pd.DataFrame, rng) -> pd.DataFrame:
    """Historian outage, timeouts, frozen values and doubled timestamps (counted by the audit)."""
    text = table.astype(object)
    outage = (table.index >= pd.Timestamp(f"{YEAR}-02-14 06:00", tz="UTC")) & \
        (table.index < pd.Timestamp(f"{YEAR}-02-14 18:00", tz="UTC"))
    text.loc[outage, :] = ""
    for i in rng.choice(len(table), 5, replace=False):
        text.iloc[i, text.columns.get_loc("A_flow_sm3h")] = "I/O Timeout"
    for i in rng.choice(len(table), 4, replace=False):
        text.iloc[i, text.columns.get_loc("suct_press_barg")] = -9999
    stamps = table.index.strftime("%Y-%m-%dT%H:%M:%SZ")
    text.insert(0, "timestamp", stamps)
    doubled = np.sort(rng.choice(np.arange(100, len(table) - 100), 3, replace=False))
    parts, start = [], 0
    for i in doubled:
        parts += [text.iloc[start:i + 1], text.iloc[i:i + 1]]
        start = i + 1
    parts.append(text.iloc[start:])
    return pd.concat(parts)


def make(out: Path, seed: int = 2023) -> Path:
    """Build the invented year and write it as CSV.

    Parameters
    ----------
    out : Path
        CSV to write.
    seed : int
        Seed of numpy's random generator.

    Returns
    -------
    Path
    """
    import trainopt

    rng = np.random.default_rng(seed)
    case = trainopt.load_case(CASE)
    cond = conditions(rng)
    stations = monthly_stations(case, cond)
    plan = operate_year(cond, stations, rng)
    table = add_faults(history_table(cond, plan, stations, rng), rng)
    table.to_csv(out, index=False)
    return out


def main(argv=None) -> int:
    """Command line: write the CSV (refusing to replace one unless --force)."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=HERE / "station_history.csv")
    parser.add_argument("--seed", type=int, default=2023)
    parser.add_argument("--force", action="store_true", help="replace an existing file")
    args = parser.parse_args(argv)
    if args.out.exists() and not args.force:
        sys.stderr.write(f"{args.out} exists; pass --force to replace it\n")
        return 2
    path = make(args.out, args.seed)
    sys.stdout.write(f"wrote {path} ({path.stat().st_size / 1e6:.2f} MB)\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
