"""A synthetic operating history of worn units, from a known degradation (INVENTED data).

For checks and the demo only: nothing here is measured. Each unit holds a random speed and
flow inside its map for a block of hours, its true head and efficiency are those of its
as-new map times the given :class:`~trainopt.machines.degradation.Degradation` (with the
same Mach-number similarity the calibration applies), and the discharge pressure and
temperature that head and efficiency reach on the real gas are computed from the suction
state (:meth:`~trainopt.physics.gas_table.GasTable.compress_to_head`). Instrument noise is
then added, normal with the standard deviations of :class:`InstrumentNoise` (assumptions,
stated there).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from trainopt.machines.degradation import Degradation, degraded_map
from trainopt.physics.gas_table import GasTable


@dataclass(frozen=True)
class InstrumentNoise:
    """Standard deviations of the simulated instruments (assumptions, not sourced).

    Parameters
    ----------
    pressure : float
        Relative, of each pressure transmitter [-]; 0.1 % assumed.
    temperature : float
        Of each temperature element [K]; 0.5 K assumed.
    flow : float
        Relative, of each flow meter [-]; 1 % assumed.
    speed : float
        Relative, of each speed pick-up [-]; 0.05 % assumed.
    """

    pressure: float = 0.001
    temperature: float = 0.5
    flow: float = 0.01
    speed: float = 0.0005


def synthetic_history(case, degradations: dict[str, Degradation], hours: int, *,
                      seed: int = 0, noise: InstrumentNoise | None = None,
                      block_hours: int = 6, start: str = "2023-01-01",
                      speed_span: tuple[float, float] = (0.0, 1.0)
                      ) -> tuple[pd.DataFrame, dict]:
    """An hourly history of the case's single-section units and its column mapping.

    Parameters
    ----------
    case : Case
        The station with its as-new maps.
    degradations : dict of str to Degradation
        The true wear of each unit (units not named are as new).
    hours : int
        Rows.
    seed : int
        Random seed.
    noise : InstrumentNoise, optional
    block_hours : int
        Hours each operating point is held.
    start : str
        First timestamp (UTC).
    speed_span : tuple of float
        Part of each map's tested speed range to draw speeds from [-] (0 to 1 is all of it).

    Returns
    -------
    (pandas.DataFrame, dict)
        The rows as a historian would export them (bar, degC, Sm3/h, rpm, kW) and the
        column mapping (a dict of the YAML format of ``docs/studies.md``).
    """
    from trainopt.studies.field_points import _sound_speed, _test_sound_speed

    noise = noise or InstrumentNoise()
    rng = np.random.default_rng(seed)
    blocks = -(-hours // block_hours)
    time = pd.date_range(start, periods=hours, freq="h", tz="UTC")

    def held(values):
        return np.repeat(values, block_hours)[:hours]

    p1 = held(case.suction_pressure * (1 + 0.03 * rng.uniform(-1, 1, blocks)))
    t1 = held(case.suction_temperature + 6.0 * rng.uniform(-1, 1, blocks))
    gas = case.gas
    table = GasTable(gas, (0.9 * p1.min(), 3.0 * p1.max()), (t1.min() - 5, t1.max() + 160),
                     pressure_points=10)
    rho1 = table.density(p1, t1)
    data = {"timestamp": time.strftime("%Y-%m-%dT%H:%M:%SZ"),
            "suction_pressure_bar": p1 * (1 + noise.pressure * rng.standard_normal(hours)) / 1e5,
            "suction_temperature_degC": t1 + noise.temperature * rng.standard_normal(hours)
            - 273.15}
    units, discharge = {}, []
    for index, train in enumerate(case.trains):
        if not train.is_single_section:
            continue
        u = train.name
        cmap = train.sections[0].compressor_map
        worn = degraded_map(cmap, degradations.get(u, Degradation()))
        a_test, _ = _test_sound_speed(case, index, gas)
        ratio = np.ones(hours) if a_test is None else a_test / _sound_speed(gas, p1, t1)
        lo, hi = speed_span
        frac = held(rng.uniform(lo, hi, blocks))
        n_test = cmap.speed_min + frac * (cmap.speed_max - cmap.speed_min)
        surge = worn.surge_flow_at_speed(n_test, warn=False)
        stonewall = worn.stonewall_flow_at_speed(n_test, warn=False)
        q_test = surge + held(rng.uniform(0.15, 0.85, blocks)) * (stonewall - surge)
        head = worn.head(q_test, n_test, warn=False) / ratio**2
        eta = worn.efficiency(q_test, n_test, warn=False)
        speed, q = n_test / ratio, q_test / ratio
        c = table.compress_to_head(p1, t1, head, eta, cmap.basis)
        mass = q * rho1
        standard = mass / gas.standard_density("iso")
        r = rng.standard_normal((5, hours))
        p2 = c.discharge_pressure
        discharge.append(p2)
        data |= {
            f"{u}_flow_Sm3h": standard * 3600 * (1 + noise.flow * r[0]),
            f"{u}_recycle_Sm3h": np.zeros(hours),
            f"{u}_speed_rpm": speed * 60 * (1 + noise.speed * r[1]),
            f"{u}_discharge_pressure_bar": p2 * (1 + noise.pressure * r[2]) / 1e5,
            f"{u}_discharge_temperature_degC": c.discharge_temperature - 273.15
            + noise.temperature * r[3],
            f"{u}_shaft_power_kW": mass * c.specific_work * (1 + train.mechanical_loss) / 1e3,
        }
        units[u] = {
            "flow": {"column": f"{u}_flow_Sm3h", "unit": "Sm3/h", "measures": "through"},
            "recycle": {"column": f"{u}_recycle_Sm3h", "unit": "Sm3/h"},
            "speed": {"column": f"{u}_speed_rpm", "unit": "rpm"},
            "power": {"column": f"{u}_shaft_power_kW", "unit": "kW", "measures": "shaft"},
            "discharge_pressure": {"column": f"{u}_discharge_pressure_bar", "unit": "bar"},
            "discharge_temperature": {"column": f"{u}_discharge_temperature_degC",
                                      "unit": "degC"},
        }
    data["discharge_pressure_bar"] = np.mean(discharge, axis=0) / 1e5
    mapping = {
        "time": {"column": "timestamp", "timezone": "UTC"},
        "station": {"suction_pressure": {"column": "suction_pressure_bar", "unit": "bar"},
                    "suction_temperature": {"column": "suction_temperature_degC",
                                            "unit": "degC"},
                    "discharge_pressure": {"column": "discharge_pressure_bar", "unit": "bar"}},
        "units": units,
    }
    return pd.DataFrame(data), mapping
