"""Compressor units and trains: sections on one shaft, coolers, a driver and limits.

A :class:`Train` is one or more compressor sections in series on one shaft (fixed speed
ratios, one driver), with an interstage cooler after each section but the last and a
recycle loop per section. A plain unit is a train of one section. Speeds are stated at the
shaft of the first section; section ``k`` turns at ``speed_ratio[k]`` times that.

Series sections may instead each have their own driver (a :class:`SectionDrive`): then
the train has no shared shaft, each section's speed is free within its own range, and
the interstage pressure is free too (see ``docs/series.md``).

Speed limits follow the API 617 definitions as commonly quoted (common practice):
maximum continuous speed = 105 % of rated speed, trip speed = 110 % of maximum continuous
speed (API 617, 8th edition, 2014, clause 1.5 definitions).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum

import numpy as np

from trainopt.errors import InputError
from trainopt.machines.maps.compressor_map import DEFAULT_CONTROL_LINE_OFFSET
from trainopt.machines.maps.least_flow import (
    ControlLine,
    LeastFlowRule,
    control_line,
    parse_least_flow_rule,
)

MAX_CONTINUOUS_SPEED_FRACTION = 1.05
"""Maximum continuous speed over rated speed [-] (API 617 practice, common practice)."""

TRIP_SPEED_FRACTION = 1.10
"""Trip speed over maximum continuous speed [-] (API 617 practice, common practice)."""

DEFAULT_SURGE_CONTROL_OFFSET = DEFAULT_CONTROL_LINE_OFFSET
"""Surge control line offset as a fraction of surge flow at the same head [-] (common practice)."""

DEFAULT_MECHANICAL_LOSS = 0.01
"""Compressor bearing and seal losses as a fraction of gas power [-] (common practice, ~1 %)."""


class UnitStatus(Enum):
    """Whether the optimiser may start, must run, or must leave a unit stopped."""

    AVAILABLE = "available"
    OFFLINE = "offline"
    MUST_RUN = "must_run"


@dataclass(frozen=True)
class Cooler:
    """An interstage (or after-) cooler.

    Parameters
    ----------
    outlet_temperature : float
        Gas temperature leaving the cooler [K]; the gas is never heated by it.
    pressure_drop : float
        Gas-side pressure drop [Pa].
    """

    outlet_temperature: float
    pressure_drop: float = 0.0

    def __post_init__(self):
        if not self.outlet_temperature > 0:
            raise InputError("cooler.outlet_temperature", "must be a positive temperature")
        if self.pressure_drop < 0:
            raise InputError("cooler.pressure_drop", f"{self.pressure_drop:g} Pa is negative")


@dataclass(frozen=True)
class SectionDrive:
    """A section's own driver, for series sections that do not share a shaft.

    Parameters
    ----------
    driver : object
        A driver from :mod:`trainopt.machines.drivers`.
    speed_min, speed_max : float
        The section's speed range [1/s].
    max_power : float or None
        Extra shaft-power limit [W] below the driver's own.
    """

    driver: object
    speed_min: float
    speed_max: float
    max_power: float | None = None

    def __post_init__(self):
        if not 0 < self.speed_min < self.speed_max:
            raise InputError("section.speed_min",
                             f"minimum speed {self.speed_min * 60:.0f} rpm is not below "
                             f"maximum {self.speed_max * 60:.0f} rpm", "give speed_min < speed_max")


@dataclass(frozen=True)
class Section:
    """One compressor section: a fitted map and its own limits.

    Parameters
    ----------
    name : str
        Section name (unique within its train).
    compressor_map : CompressorMap
        The fitted map (see :mod:`trainopt.machines.maps`).
    speed_ratio : float
        Section speed over the train's reference shaft speed [-].
    surge_control_offset : float
        Surge control line offset as a fraction of surge flow [-].
    max_discharge_temperature : float or None
        Highest allowed discharge temperature [K].
    cooler : Cooler or None
        Cooler after this section (to the next section's suction).
    drive : SectionDrive or None
        The section's own driver; None on a shared shaft.
    least_flow_rule : LeastFlowRule
        Which line sets the least flow before the control-line offset: the surge line
        (default), the speed-line peak, or the larger (docs/maps.md).
    """

    name: str
    compressor_map: object
    speed_ratio: float = 1.0
    surge_control_offset: float = DEFAULT_SURGE_CONTROL_OFFSET
    max_discharge_temperature: float | None = None
    cooler: Cooler | None = None
    drive: SectionDrive | None = None
    least_flow_rule: LeastFlowRule = LeastFlowRule.SURGE_LINE

    def control_line(self, head, *, extend: bool = False) -> ControlLine:
        """The section's surge control line at head [J/kg], under its least-flow rule.

        See :func:`trainopt.machines.maps.least_flow.control_line`: the control line flow
        [m³/s], the surge and peak flows, which line binds and whether it was extrapolated.
        """
        return control_line(self.compressor_map, head, self.surge_control_offset,
                            self.least_flow_rule, extend=extend)

    def control_line_flow(self, head, surge_flow=None):
        """Surge control line flow [m³/s] at head [J/kg] under the section's least-flow rule.

        ``surge_flow`` [m³/s], if given, is the surge flow already found at that head (so the
        default rule costs nothing more).
        """
        if self.least_flow_rule is LeastFlowRule.SURGE_LINE and surge_flow is not None:
            return np.asarray(surge_flow, float) * (1.0 + self.surge_control_offset)
        line = self.control_line(head, extend=True)
        if surge_flow is None or self.least_flow_rule is LeastFlowRule.SPEED_LINE_PEAK:
            return line.flow
        return (1.0 + self.surge_control_offset) * np.fmax(surge_flow, line.peak_flow)

    def __post_init__(self):
        try:
            object.__setattr__(self, "least_flow_rule",
                               parse_least_flow_rule(self.least_flow_rule))
        except ValueError:
            raise InputError(f"sections.{self.name}.least_flow_rule",
                             f"{self.least_flow_rule!r} is not a least-flow rule",
                             "use surge_line, speed_line_peak or larger") from None
        if not self.speed_ratio > 0:
            raise InputError(f"sections.{self.name}.speed_ratio",
                             f"{self.speed_ratio:g} is not a positive ratio",
                             "give section speed / shaft speed, e.g. 1.0")
        if not 0.0 <= self.surge_control_offset < 1.0:
            raise InputError(f"sections.{self.name}.surge_control_offset",
                             f"{self.surge_control_offset:g} is outside 0 to 1",
                             "give a fraction of surge flow such as '10 %'")


@dataclass(frozen=True)
class Train:
    """A driver and one or more sections in series on its shaft.

    Parameters
    ----------
    name : str
        Unit or train name.
    sections : tuple of Section
        In flow order.
    driver : object or None
        A driver from :mod:`trainopt.machines.drivers`; None when every section has its own
        (:class:`SectionDrive`).
    speed_min, speed_max : float
        Shaft speed range at the first section [1/s] (the first section's own range when
        the sections are separately driven).
    max_power : float or None
        Extra shaft-power limit [W] below the driver's own.
    mechanical_loss : float
        Compressor bearing and seal losses as a fraction of gas power [-].
    status : UnitStatus
    group : str or None
        Units with the same group are identical (the optimiser breaks their symmetry).
    """

    name: str
    sections: tuple[Section, ...]
    driver: object
    speed_min: float
    speed_max: float
    max_power: float | None = None
    mechanical_loss: float = DEFAULT_MECHANICAL_LOSS
    status: UnitStatus = UnitStatus.AVAILABLE
    group: str | None = None
    notes: dict = field(default_factory=dict, compare=False)

    def __post_init__(self):
        if not self.sections:
            raise InputError(f"units.{self.name}.sections", "a train needs at least one section")
        if not 0 < self.speed_min < self.speed_max:
            raise InputError(f"units.{self.name}.speed",
                             f"minimum speed {self.speed_min * 60:.0f} rpm is not below maximum "
                             f"{self.speed_max * 60:.0f} rpm",
                             "give speed_min < speed_max")
        names = [s.name for s in self.sections]
        if len(set(names)) != len(names):
            raise InputError(f"units.{self.name}.sections", "section names repeat")
        own = [s.drive is not None for s in self.sections]
        if any(own) and (self.driver is not None or not all(own)):
            raise InputError(f"units.{self.name}.driver",
                             "some sections have their own driver and some share the shaft",
                             "give a driver to every section and none to the unit, or one "
                             "driver to the unit and none to the sections")
        if self.driver is None and not any(own):
            raise InputError(f"units.{self.name}.driver", "is missing", "give the driver")

    @property
    def separately_driven(self) -> bool:
        """True when every section has its own driver (no shared shaft)."""
        return self.driver is None

    @property
    def is_single_section(self) -> bool:
        """True for a plain unit of one section."""
        return len(self.sections) == 1


def speed_limits_from_rated(rated_speed: float) -> tuple[float, float]:
    """Maximum continuous and trip speed [1/s] from a rated speed [1/s] (API 617 practice).

    Examples
    --------
    >>> mcs, trip = speed_limits_from_rated(10_000 / 60)
    >>> round(mcs * 60), round(trip * 60)
    (10500, 11550)
    """
    mcs = MAX_CONTINUOUS_SPEED_FRACTION * rated_speed
    return mcs, TRIP_SPEED_FRACTION * mcs
