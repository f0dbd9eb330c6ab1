"""Compressor maps: input, fitting, vectorised evaluation and margins.

Pictures of a map are an edge: :mod:`trainopt.report.map_picture`.

The public names are gathered here; see docs/maps.md for the file format, the fitting
method, the margin definitions and how a map is applied to other gas and suction conditions.
"""

from trainopt.machines.maps.coefficients import map_from_coefficients
from trainopt.machines.maps.compressor_map import (
    DEFAULT_CONTROL_LINE_OFFSET,
    CompressorMap,
    HeadBasis,
    MapRangeWarning,
)
from trainopt.machines.maps.fit import (
    MapFit,
    SpeedDependence,
    fan_law_departure,
    fit_map,
    fit_map_file,
    load_map,
)
from trainopt.machines.maps.least_flow import (
    ControlLine,
    LeastFlowRule,
    parse_least_flow_rule,
)
from trainopt.machines.maps.margins import (
    control_line_margin,
    speed_margins,
    stonewall_margin,
    surge_margin_at_head,
    surge_margin_at_speed,
)
from trainopt.machines.maps.plausibility import (
    MapUnitWarning,
    check_map_units,
    flow_coefficient_and_tip_speed,
)
from trainopt.machines.maps.table import (
    MapTable,
    PointKind,
    TestConditions,
    read_map_source,
)

__all__ = [
    "DEFAULT_CONTROL_LINE_OFFSET",
    "CompressorMap",
    "ControlLine",
    "LeastFlowRule",
    "HeadBasis",
    "MapFit",
    "MapRangeWarning",
    "MapTable",
    "MapUnitWarning",
    "PointKind",
    "SpeedDependence",
    "TestConditions",
    "check_map_units",
    "control_line_margin",
    "fan_law_departure",
    "fit_map",
    "fit_map_file",
    "flow_coefficient_and_tip_speed",
    "load_map",
    "map_from_coefficients",
    "parse_least_flow_rule",
    "read_map_source",
    "speed_margins",
    "stonewall_margin",
    "surge_margin_at_head",
    "surge_margin_at_speed",
]
