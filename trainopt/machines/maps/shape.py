"""Which maps can be evaluated: the shape checks run when a map is built.

A map is refused only where an evaluation the program needs would have no answer or more
than one (docs/maps.md, "Checks after the fit: what a map must satisfy"). Head rising with
flow between the surge line and the peak of a speed line is accepted: for a given flow and
head the speed is still unique, because head rises with speed at a fixed flow, and the
inverse that gives flow for a speed and head answers on the falling part of the line, right
of its peak.
"""

from __future__ import annotations

import numpy as np

from trainopt.errors import InputError
from trainopt.machines.maps.compressor_map import CompressorMap
from trainopt.machines.maps.least_flow import peak_flow_at_speed


def check_map_shape(compressor_map: CompressorMap, field: str, samples: int = 41) -> None:
    """Refuse a map that cannot be evaluated inside its tested domain, saying why.

    Parameters
    ----------
    compressor_map : CompressorMap
        The map to check.
    field : str
        Where the map came from, for the error message.
    samples : int
        Grid points per direction.

    Raises
    ------
    InputError
        If, on a grid over the tested domain, a speed line has no positive surge or
        stonewall flow or its surge flow is not below its stonewall flow (no flow range);
        efficiency leaves (0, 1] (no power); the surge or stonewall flow, or its head, does
        not rise with speed (no unique boundary flow at a head); the peak head of the speed
        lines does not rise with speed (no unique peak at a head); or head does not rise
        with speed at a fixed flow (no unique speed for a flow and head).
    """
    m = compressor_map
    fix = "check the map's points and units, or give more speed lines or points"
    flows, speed_column = m.tested_grid(samples if m.speed_max > m.speed_min else 1, samples)
    speeds, surge, stonewall = speed_column[:, 0], flows[:, 0], flows[:, -1]
    rpm = speeds * 60.0

    def refuse(problem, where):
        raise InputError(field, f"the map {problem}, worst near {rpm[where]:.0f} rpm", fix)

    for name, boundary in (("surge", surge), ("stonewall", stonewall)):
        missing = ~(np.isfinite(boundary) & (boundary > 0))
        if np.any(missing):
            refuse(f"has no positive {name} flow", int(np.argmax(missing)))
    if np.any(surge >= stonewall):
        refuse(
            "has its surge flow at or above its stonewall flow", int(np.argmax(surge >= stonewall))
        )
    heads = m.head_surface(flows, speed_column)
    efficiency = m.efficiency_surface(flows, speed_column)
    bad = ~((efficiency > 0) & (efficiency <= 1))
    if np.any(bad):
        refuse(
            f"gives efficiency {efficiency[bad][0]:.3f}, outside (0, 1]", int(np.argmax(bad.any(1)))
        )
    if len(speeds) == 1:
        return
    peak = peak_flow_at_speed(m, speeds)
    for name, flows_b in (("surge", surge), ("stonewall", stonewall), ("peak", peak)):
        boundary_heads = m.head_surface(flows_b, speeds)
        if name != "peak" and np.any(np.diff(flows_b) <= 0):
            refuse(f"has its {name} flow falling with speed", int(np.argmax(np.diff(flows_b) <= 0)))
        if np.any(np.diff(boundary_heads) <= 0):
            where = "speed lines' peak" if name == "peak" else name
            refuse(
                f"has its {where} head falling with speed",
                int(np.argmax(np.diff(boundary_heads) <= 0)),
            )
    upper = m.head_surface(flows[:-1], speeds[1:, None])
    inside = (flows[:-1] >= surge[1:, None]) & (flows[:-1] <= stonewall[1:, None])
    crossing = inside & (upper <= heads[:-1])
    if np.any(crossing):
        refuse(
            "gives head falling with speed at a fixed flow, so a flow and head have no unique "
            "speed",
            int(np.argmax(crossing.any(1))),
        )
