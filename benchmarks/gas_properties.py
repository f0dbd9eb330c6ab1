"""Throughput of gas states and compression calls on the demo gas, in one run.

Prints states per second for

- GERG-2008 parameters (CoolProp HEOS) with the gas phase imposed, through
  ``Gas.state`` and through the bare CoolProp ``AbstractState`` it wraps;
- Peng-Robinson (CoolProp PR backend) with the gas phase imposed;
- CoolProp HEOS letting the phase be found on every call (a few calls only: it is slow);
- CoolProp ``PropsSI`` with the mixture string (a few calls only);

plus the one-off costs per composition (building the mixture, the phase envelope used by
the dew-point check) and ``compress()`` calls per second by Schultz's method and by the
path method. Run: ``python benchmarks/gas_properties.py``.
"""

from __future__ import annotations

import platform
import time
from pathlib import Path

import CoolProp
import CoolProp.CoolProp as CP
import numpy as np

from trainopt.case.gas_file import load_gas
from trainopt.physics.components import COOLPROP_NAME
from trainopt.physics.compression import PolytropicMethod, compress
from trainopt.physics.gas import EquationOfState, Gas

DEMO_GAS = Path(__file__).resolve().parents[1] / "cases" / "demo" / "gas.yaml"


def rate(func, calls):
    """Calls per second and seconds per call of ``func(i)`` for i in range(calls)."""
    start = time.perf_counter()
    for i in range(calls):
        func(i)
    elapsed = time.perf_counter() - start
    return calls / elapsed, elapsed / calls


def main() -> None:
    start = time.perf_counter()
    gas = load_gas(DEMO_GAS)
    build = time.perf_counter() - start
    pr = load_gas(DEMO_GAS, EquationOfState.PENG_ROBINSON)
    names = [COOLPROP_NAME[n] for n, _ in gas.components]
    fractions = [x for _, x in gas.components]

    rng = np.random.default_rng(1)
    n = 4000
    pressures = rng.uniform(30e5, 90e5, n)  # [Pa], pipeline suction and discharge
    temperatures = rng.uniform(273.15, 353.15, n)  # [K], well above the dew point

    print(f"trainopt gas-property benchmark: {platform.processor() or platform.machine()}, "
          f"Python {platform.python_version()}, CoolProp {CoolProp.__version__}")
    print(f"demo gas ({len(names)} components, {DEMO_GAS.name}); states at 30-90 bar, "
          "0-80 degC\n")

    rows = []

    def add(label, per_second, per_call, calls):
        rows.append((label, per_second, per_call, calls))

    # GERG-2008 parameters, phase imposed: the production path and the bare CoolProp call.
    gas.state(50e5, 300.0)  # warm
    add("GERG, phase imposed, Gas.state", *rate(
        lambda i: gas.state(pressures[i], temperatures[i]), n), n)
    bare = CP.AbstractState("HEOS", "&".join(names))
    bare.set_mole_fractions(fractions)
    bare.specify_phase(CP.iphase_gas)
    add("GERG, phase imposed, bare AbstractState update", *rate(
        lambda i: bare.update(CP.PT_INPUTS, pressures[i], temperatures[i]), n), n)
    m = 400
    start = time.perf_counter()
    gas.properties(pressures[:m], temperatures[:m])
    elapsed = time.perf_counter() - start
    add("GERG, phase imposed, Gas.properties (array)", m / elapsed, elapsed / m, m)

    # Peng-Robinson, phase imposed.
    pr.state(50e5, 300.0)
    add("Peng-Robinson, phase imposed, Gas.state", *rate(
        lambda i: pr.state(pressures[i], temperatures[i]), n), n)

    bare_pr = CP.AbstractState("PR", "&".join(names))
    bare_pr.set_mole_fractions(fractions)
    bare_pr.specify_phase(CP.iphase_gas)
    add("Peng-Robinson, phase imposed, bare AbstractState update", *rate(
        lambda i: bare_pr.update(CP.PT_INPUTS, pressures[i], temperatures[i]), n), n)

    # CoolProp finding the phase itself: a handful of calls.
    free = CP.AbstractState("HEOS", "&".join(names))
    free.set_mole_fractions(fractions)
    k = 3
    add("GERG, phase found by CoolProp", *rate(
        lambda i: free.update(CP.PT_INPUTS, pressures[i], temperatures[i]), k), k)
    fluid = "HEOS::" + "&".join(f"{c}[{x}]" for c, x in zip(names, fractions, strict=True))
    add("GERG, PropsSI with mixture string", *rate(
        lambda i: CP.PropsSI("D", "P", pressures[i], "T", temperatures[i], fluid), k), k)

    # Compression.
    suction = (45e5, 298.15)
    compress(gas, *suction, 75e5, 0.80)  # warm
    c = 40
    add("compress(), Schultz", *rate(
        lambda i: compress(gas, *suction, 60e5 + 1e5 * i, 0.80), c), c)
    c = 4
    add("compress(), path method (48 steps)", *rate(
        lambda i: compress(gas, *suction, 60e5 + 5e5 * i, 0.80,
                           method=PolytropicMethod.PATH), c), c)

    width = max(len(r[0]) for r in rows)
    print(f"{'call':<{width}}  {'per second':>12}  {'per call':>12}  {'calls':>6}")
    for label, per_second, per_call, calls in rows:
        print(f"{label:<{width}}  {per_second:>12,.0f}  {per_call * 1e3:>9.3f} ms  {calls:>6}")

    # One-off costs per composition.
    start = time.perf_counter()
    envelope = gas.envelope
    envelope_time = time.perf_counter() - start
    start = time.perf_counter()
    gas.check_gas_phase(45.3e5, 298.15)
    check_time = time.perf_counter() - start
    start = time.perf_counter()
    gas.check_gas_phase(45.3e5, 299.15)
    cached_check_time = time.perf_counter() - start
    start = time.perf_counter()
    fresh = Gas.from_composition({"methane": 0.9, "ethane": 0.06, "propane": 0.04})
    fresh.state(50e5, 300.0)
    first_state = time.perf_counter() - start
    print("\none-off costs per composition")
    print(f"  load and build the mixture (GERG, demo gas)   {build * 1e3:9.1f} ms")
    print(f"  build a new 3-component mixture + first state {first_state * 1e3:9.1f} ms")
    print(f"  phase envelope (dew-point check)              {envelope_time * 1e3:9.1f} ms "
          f"(cricondentherm {envelope.cricondentherm - 273.15:.1f} degC, cricondenbar "
          f"{envelope.cricondenbar / 1e5:.1f} bar)")
    print(f"  then a dew-point check at a new pressure      {check_time * 1e3:9.3f} ms "
          "(one pressure-quality flash)")
    print(f"  then a check at a pressure already seen       {cached_check_time * 1e3:9.3f} ms "
          "(cached per 100 Pa)")
    ratio = rows[0][1] / rows[5][1]
    print(f"\nimposing the gas phase is {ratio:,.0f} times faster than letting CoolProp find "
          f"it;\nPeng-Robinson is {rows[3][1] / rows[0][1]:,.0f} times faster than GERG through "
          f"Gas.state, {rows[4][1] / rows[1][1]:,.0f} times as a bare update.")


if __name__ == "__main__":
    main()
