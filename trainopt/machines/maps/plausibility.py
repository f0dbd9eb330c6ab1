"""Catch a map written in the wrong unit: flow coefficient and tip speed of the machine.

A map whose flows are labelled m³/h but are in fact m³/s reads 3600 times too small and
gives capacities of a few hundredths of a kg/s, with no error. Centrifugal compressors sit
in a narrow band of flow coefficient and impeller tip speed, so a map far outside that band
has most likely slipped a unit; :func:`check_map_units` warns with
:class:`MapUnitWarning`, naming the likely slip.

Definitions (docs/maps.md):

- tip speed ``u2 = pi D N`` [m/s], D the impeller outer diameter [m], N the speed [1/s];
- flow coefficient ``phi = Q / (pi/4 D² u2)`` [-], Q the actual inlet volume flow [m³/s].

Typical values (common practice): flow coefficient about 0.01 to 0.15 for the stages of
pipeline and process centrifugal compressors; tip speed about 150 to 350 m/s. A warning is
given only far outside them (a factor of 3 on the flow coefficient, tip speed below 75 or
above 525 m/s), so that an unusual but real machine is not flagged; unit slips are factors
of 60 or 3600 and land far outside.

Where the impeller diameter is not stated, a tip speed of 250 m/s (middle of the typical
range) at the highest tested speed is assumed to set it; the flow coefficient then still
catches a flow-unit slip, while the tip speed itself cannot be checked.
"""

from __future__ import annotations

import math
import warnings

from trainopt.errors import TrainoptWarning
from trainopt.machines.maps.compressor_map import CompressorMap

TYPICAL_FLOW_COEFFICIENT = (0.01, 0.15)
"""Typical flow coefficient range of centrifugal compressor stages [-] (common practice)."""

TYPICAL_TIP_SPEED = (150.0, 350.0)
"""Typical impeller tip speed range [m/s] (common practice)."""

ASSUMED_TIP_SPEED = 250.0
"""Tip speed [m/s] at the highest tested speed assumed when no impeller diameter is given."""

FLOW_COEFFICIENT_WARN = (TYPICAL_FLOW_COEFFICIENT[0] / 3, TYPICAL_FLOW_COEFFICIENT[1] * 3)
"""Flow coefficients outside this band [-] are warned about."""

TIP_SPEED_WARN = (TYPICAL_TIP_SPEED[0] / 2, TYPICAL_TIP_SPEED[1] * 1.5)
"""Tip speeds outside this band [m/s] are warned about."""

_FLOW_SLIPS = (
    (3600.0, "flows in m3/s written under an m3/h label (3600 times too small)"),
    (60.0, "flows in m3/s written under an m3/min label (60 times too small)"),
    (1 / 3600.0, "flows in m3/h written under an m3/s label (3600 times too large)"),
    (1 / 60.0, "flows in m3/min written under an m3/s label (60 times too large)"),
)
_SPEED_SLIPS = (
    (60.0, "speeds in 1/s (rev/s) written under an rpm label (60 times too small)"),
    (60.0 / (2 * math.pi), "speeds in rad/s written under an rpm label"),
    (1 / 60.0, "speeds in rpm written under a 1/s label (60 times too large)"),
)


class MapUnitWarning(TrainoptWarning):
    """A map's flow coefficient or tip speed is far outside what centrifugal compressors have."""


def flow_coefficient_and_tip_speed(
    compressor_map: CompressorMap, impeller_diameter: float | None = None
) -> tuple[float, float, float]:
    """The map's flow coefficient and tip speed at its highest tested speed.

    Parameters
    ----------
    compressor_map : CompressorMap
        The map.
    impeller_diameter : float, optional
        Impeller outer diameter [m]; by default set by :data:`ASSUMED_TIP_SPEED`.

    Returns
    -------
    flow_coefficient : float
        ``phi = Q / (pi/4 D² u2)`` [-] at the middle of the speed line (the geometric mean
        of its surge and stonewall flows).
    tip_speed : float
        ``u2 = pi D N_max`` [m/s].
    diameter : float
        The diameter used [m].
    """
    m = compressor_map
    n = m.speed_max
    if impeller_diameter is None:
        diameter = ASSUMED_TIP_SPEED / (math.pi * n)
    else:
        diameter = float(impeller_diameter)
    tip = math.pi * diameter * n
    q_surge = float(m.surge_flow_at_speed(n, warn=False))
    q_stonewall = float(m.stonewall_flow_at_speed(n, warn=False))
    flow = math.sqrt(q_surge * q_stonewall)
    return flow / (math.pi / 4 * diameter**2 * tip), tip, diameter


def check_map_units(
    compressor_map: CompressorMap, field: str, impeller_diameter: float | None = None
) -> None:
    """Warn (:class:`MapUnitWarning`) when the map looks written in a wrong unit.

    Parameters
    ----------
    compressor_map : CompressorMap
        The map.
    field : str
        Where the map came from, for the message.
    impeller_diameter : float, optional
        Impeller outer diameter [m], if stated in the map file.
    """
    phi, tip, diameter = flow_coefficient_and_tip_speed(compressor_map, impeller_diameter)
    low, high = FLOW_COEFFICIENT_WARN
    assumed = (
        ""
        if impeller_diameter is not None
        else (
            f", impeller diameter {diameter:.3f} m assumed from a {ASSUMED_TIP_SPEED:.0f} m/s tip "
            "speed; state 'impeller_diameter' in the map file to check it"
        )
    )
    if impeller_diameter is not None and not TIP_SPEED_WARN[0] <= tip <= TIP_SPEED_WARN[1]:
        slip = _likely(tip, _SPEED_SLIPS, TYPICAL_TIP_SPEED)
        warnings.warn(
            f"{field}: tip speed {tip:.3g} m/s at the highest tested speed "
            f"({compressor_map.speed_max * 60:.0f} rpm, impeller {diameter:.3f} m) is far "
            f"outside the {TYPICAL_TIP_SPEED[0]:.0f}-{TYPICAL_TIP_SPEED[1]:.0f} m/s of "
            f"centrifugal compressors{slip}; check the speed unit and the diameter",
            MapUnitWarning,
            stacklevel=3,
        )
        return
    if not low <= phi <= high:
        slip = _likely(phi, _FLOW_SLIPS, TYPICAL_FLOW_COEFFICIENT)
        warnings.warn(
            f"{field}: flow coefficient {phi:.3g} at the highest tested speed is far outside "
            f"the {TYPICAL_FLOW_COEFFICIENT[0]:g}-{TYPICAL_FLOW_COEFFICIENT[1]:g} of "
            f"centrifugal compressors{slip}{assumed}; check the flow unit in the table header",
            MapUnitWarning,
            stacklevel=3,
        )


def _likely(value: float, slips, typical) -> str:
    for factor, words in slips:
        if typical[0] <= value * factor <= typical[1]:
            return f": likely {words}"
    return ""
