"""Make an INVENTED week of hourly forecast for the demo station (seeded, reproducible).

Nothing here is measured: it is a made-up scenario for trying ``trainopt schedule`` on
``cases/demo/station.yaml``. Run from the repository root::

    python cases/demo/forecast/make_forecast.py            # writes week.csv
    python cases/demo/forecast/make_forecast.py --out other.csv --seed 7 --force

The scenario (the week from Monday 8 January 2024, timestamps in UTC, 168 hours):

- **Demand** in MMSCMD: 38 on average, a morning peak of about +7 at 08:00 and an evening
  peak of +5 at 19:00, a night trough of -9 at 03:00, -4 on Saturday and Sunday, and an
  AR(1) wander (phi 0.9, sigma 0.4).
- **Headers**: suction pressure falls by 0.04 bar per MMSCMD of demand around 43.6 barg;
  discharge pressure 65 barg with a 0.3 bar daily swing; suction temperature 13-15 degC.
- **Ambient**: 4 degC at night to 14 degC in the afternoon (a cosine peaking at 15:00),
  plus 3 degC warmer from Thursday.

Headers carry their units, so no column mapping is needed.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).resolve().parent


def make(seed: int = 2024) -> pd.DataFrame:
    """The invented forecast as a table (units in the headers)."""
    rng = np.random.default_rng(seed)
    time = pd.date_range("2024-01-08 00:00", periods=168, freq="h", tz="UTC")
    hour = time.hour.to_numpy() + time.minute.to_numpy() / 60.0
    day = time.day_of_week.to_numpy()
    wander = np.zeros(len(time))
    for k in range(1, len(time)):
        wander[k] = 0.9 * wander[k - 1] + rng.normal(0.0, 0.4)
    demand = (38.0 + 7.0 * np.exp(-((hour - 8.0) / 2.5) ** 2)
              + 5.0 * np.exp(-((hour - 19.0) / 2.0) ** 2)
              - 9.0 * np.exp(-((hour - 3.0) / 3.0) ** 2)
              - 4.0 * (day >= 5) + wander)
    ambient = 9.0 + 5.0 * np.cos(2 * np.pi * (hour - 15.0) / 24.0) + 3.0 * (day >= 3)
    suction = 43.6 - 0.04 * (demand - 38.0) + rng.normal(0.0, 0.02, len(time))
    discharge = 65.0 + 0.15 * np.cos(2 * np.pi * (hour - 18.0) / 24.0)
    temperature = 14.0 + np.cos(2 * np.pi * (hour - 16.0) / 24.0)
    return pd.DataFrame({
        "time": time.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "demand [MMSCMD]": demand.round(3),
        "suction_pressure [barg]": suction.round(3),
        "suction_temperature [degC]": temperature.round(2),
        "discharge_pressure [barg]": discharge.round(3),
        "ambient_temperature [degC]": ambient.round(1)})


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=HERE / "week.csv")
    parser.add_argument("--seed", type=int, default=2024)
    parser.add_argument("--force", action="store_true", help="overwrite an existing file")
    args = parser.parse_args(argv)
    if args.out.exists() and not args.force:
        print(f"{args.out} exists; pass --force to overwrite it", file=sys.stderr)
        return 1
    tmp = args.out.with_name(args.out.name + ".part")
    make(args.seed).to_csv(tmp, index=False)
    tmp.replace(args.out)
    print(f"wrote {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
