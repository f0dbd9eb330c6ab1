"""Make an INVENTED quarter of hourly history of the demo's worn units (seeded, reproducible).

Nothing here is measured: it is a made-up scenario for trying ``trainopt calibrate`` on
``cases/demo/station.yaml``. Run from the repository root::

    python cases/demo/history/make_wear_history.py          # wear_history.csv, wear_columns.yaml
    python cases/demo/history/make_wear_history.py --out-dir other --seed 7 --force

The rows come from :func:`trainopt.studies.calibration_synthetic.synthetic_history`: each
unit holds a random speed and flow inside its map for 6-hour blocks, and its discharge
pressure and temperature are those its worn map reaches on the real gas, plus instrument
noise (pressure 0.1 %, temperature 0.5 K, flow 1 %, speed 0.05 %: assumptions). The
scenario (1 January to 31 March 2023, timestamps in UTC, 2,160 hours):

- **The invented wear** (constant over the quarter; these are the factors the calibration
  should find, see ``WEAR``):

  ====  ===========  =================
  unit  head_factor  efficiency_factor
  ====  ===========  =================
  A     0.97         0.95
  B     0.99         0.98
  C     0.95         0.93
  D     0.93         0.90
  ====  ===========  =================

- **Rows a field test would exclude**, besides the hours after each change of operating
  point (unsteady until the 3-hour window has settled):

  - *recycle open*: A, B and D record only their recycle-valve position (no recycle flow
    meter; C has one and reads 0); in about 6 % of the blocks a unit's valve stands 8-30 %
    open;
  - *unsteady*: in about 5 % of the blocks a unit's speed and flow swing by +-3 % hour by
    hour (a load controller hunting);
  - *out of the speed range*: about 4 % of each unit's blocks run 5-10 % below the
    lowest tested speed of its map (the rows are the map extrapolated, and refused).

  The measured quantities of those rows are left as the steady model made them: they
  are meant to be left out, not fitted.

The file is a consistent invented story for the demo, not a reference for testing
trainopt's physics.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np
import yaml

HERE = Path(__file__).resolve().parent
CASE = HERE.parent / "station.yaml"
HOURS = 24 * 90
"""1 January to 31 March 2023 [h]."""
BLOCK_HOURS = 6
"""Hours each operating point is held [h]."""
WEAR = {"A": (0.97, 0.95), "B": (0.99, 0.98), "C": (0.95, 0.93), "D": (0.93, 0.90)}
"""The invented wear: (head_factor, efficiency_factor) of each unit [-]."""
VALVE_UNITS = ("A", "B", "D")
"""Units with only a recycle-valve position (no recycle flow meter)."""
VALVE_KV = 800.0
"""Rated Kv of those recycle valves [m3/h] (invented, linear trim)."""
SHARE_RECYCLE, SHARE_SWING, SHARE_SLOW = 0.06, 0.05, 0.04
"""Shares of the blocks with the recycle valve open, hunting, below the speed range [-]."""
DECIMALS = {"bar": 4, "degC": 2, "Sm3h": 0, "rpm": 1, "kW": 1, "pct": 1}
"""Digits written per unit of measure (the file stays small; far below the noise)."""


def _blocks(rng, n_blocks: int, share: float) -> np.ndarray:
    """A random choice of blocks (bool per block)."""
    return rng.uniform(size=n_blocks) < share


def make(seed: int = 2023):
    """The history table and its column mapping (dict of the YAML format).

    Parameters
    ----------
    seed : int
        Random seed.

    Returns
    -------
    (pandas.DataFrame, dict)
    """
    from trainopt.case.loading import load_case
    from trainopt.machines.degradation import Degradation
    from trainopt.studies.calibration_synthetic import synthetic_history

    case = load_case(CASE, calibrated=False)
    wear = {u: Degradation(h, e) for u, (h, e) in WEAR.items()}
    frame, mapping = synthetic_history(case, wear, HOURS, seed=seed, block_hours=BLOCK_HOURS,
                                       start="2023-01-01")
    rng = np.random.default_rng(seed + 1)
    n_blocks = -(-HOURS // BLOCK_HOURS)

    def held(values):
        return np.repeat(values, BLOCK_HOURS)[:HOURS]

    for train in case.trains:
        u = train.name
        units = mapping["units"][u]
        cmap = train.sections[0].compressor_map
        slow = held(_blocks(rng, n_blocks, SHARE_SLOW))
        speed = frame[f"{u}_speed_rpm"].to_numpy(float)
        below = cmap.speed_min * 60 * rng.uniform(0.90, 0.95, HOURS)
        frame[f"{u}_speed_rpm"] = np.where(slow, below, speed)
        swing = held(_blocks(rng, n_blocks, SHARE_SWING)) & ~slow
        wobble = 1 + 0.03 * np.where(np.arange(HOURS) % 2 == 0, 1.0, -1.0)
        for column in (f"{u}_speed_rpm", f"{u}_flow_Sm3h"):
            frame[column] = np.where(swing, frame[column] * wobble, frame[column])
        if u in VALVE_UNITS:
            valve = held(np.where(_blocks(rng, n_blocks, SHARE_RECYCLE),
                                  rng.uniform(8.0, 30.0, n_blocks), 0.0))
            frame = frame.drop(columns=f"{u}_recycle_Sm3h")
            frame[f"{u}_recycle_valve_pct"] = valve
            del units["recycle"]
            units["recycle_valve"] = {"column": f"{u}_recycle_valve_pct", "unit": "%",
                                      "rated_kv": VALVE_KV, "characteristic": "linear"}
    for column in frame.columns:
        for suffix, digits in DECIMALS.items():
            if column.endswith(suffix):
                frame[column] = frame[column].round(digits)
    return frame, mapping


HEADER = """\
# Column mapping of the INVENTED calibration history (wear_history.csv, made by
# make_wear_history.py) onto trainopt's quantities; every number in the file is in the unit
# named here (format: docs/studies.md and docs/calibration.md). Nothing here is a real site's.
"""


def main(argv=None) -> int:
    """Command line: write the CSV and the mapping (refusing to replace them unless --force)."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out-dir", type=Path, default=HERE)
    parser.add_argument("--seed", type=int, default=2023)
    parser.add_argument("--force", action="store_true", help="replace existing files")
    args = parser.parse_args(argv)
    csv, columns = args.out_dir / "wear_history.csv", args.out_dir / "wear_columns.yaml"
    for path in (csv, columns):
        if path.exists() and not args.force:
            sys.stderr.write(f"{path} exists; pass --force to replace it\n")
            return 2
    frame, mapping = make(args.seed)
    args.out_dir.mkdir(parents=True, exist_ok=True)
    frame.to_csv(csv, index=False)
    columns.write_text(HEADER + yaml.safe_dump(mapping, sort_keys=False), encoding="utf-8")
    sys.stdout.write(f"wrote {csv} ({csv.stat().st_size / 1e6:.2f} MB) and {columns}\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
