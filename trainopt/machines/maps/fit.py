"""Fitting a smooth map to measured points, in fan-law reduced coordinates.

Each point is reduced to a flow coefficient ``phi = (Q / N) / (Q_ref / N_ref)`` and a head
coefficient ``psi = (H / N²) / (H_ref / N_ref²)``, with ``r = N / N_ref``. The head coefficient
is a polynomial in ``phi`` whose coefficients depend mildly on speed through a few powers of
``r`` (:class:`SpeedDependence`); efficiency likewise; the surge and stonewall flow
coefficients are functions of ``r`` alone. All are linear least squares. Why this form is
chosen, and what it costs, is in docs/maps.md.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum
from functools import partial
from pathlib import Path

import numpy as np
import pandas as pd

from trainopt.errors import InputError
from trainopt.machines.maps.compressor_map import (
    CompressorMap,
    Monomials,
    SpeedCurve,
)
from trainopt.machines.maps.plausibility import check_map_units
from trainopt.machines.maps.shape import check_map_shape
from trainopt.machines.maps.table import MapTable, PointKind, read_map_source

MAX_FLOW_DEGREE = 3
"""Highest power of the flow coefficient used by default (a cubic along each line)."""


class SpeedDependence(Enum):
    """How the reduced-coordinate curves may change with speed.

    ``FAN_LAW``: not at all (``c``), exact fan laws, needs one speed line.
    ``TWO_TERM``: ``c0 + c1 r``, needs two speed lines.
    ``THREE_TERM``: ``c_-1 / r + c0 + c1 r``, needs three speed lines.
    """

    FAN_LAW = "fan_law"
    TWO_TERM = "two_term"
    THREE_TERM = "three_term"

    @property
    def speed_powers(self) -> tuple[int, ...]:
        """Powers of ``r = N / N_ref`` in each coefficient."""
        return {"fan_law": (0,), "two_term": (0, 1), "three_term": (-1, 0, 1)}[self.value]

    @property
    def min_speed_lines(self) -> int:
        """Fewest speed lines that determine the fit."""
        return len(self.speed_powers)


@dataclass(frozen=True, eq=False)
class MapFit:
    """A fitted map with its residuals.

    Parameters
    ----------
    map : CompressorMap
        The fitted map.
    points : pandas.DataFrame
        One row per measured point: ``line`` (CSV line), ``kind``, ``speed`` [1/s],
        ``flow`` [m³/s], ``head`` and ``head_fit`` [J/kg], ``head_error`` (fit / measured
        - 1) [-], ``efficiency`` and ``efficiency_fit`` [-], ``efficiency_error``
        (fit - measured) [-].
    lines : pandas.DataFrame
        One row per speed line: ``speed`` [1/s], ``points``, ``head_rms`` and ``head_max``
        (relative) [-], ``efficiency_rms`` and ``efficiency_max`` (absolute) [-], measured and
        fitted ``surge_flow`` / ``stonewall_flow`` [m³/s] and their relative errors [-].
    speed_dependence : SpeedDependence
        Speed dependence used.
    head_degree, efficiency_degree : int
        Degree in the flow coefficient of the head and efficiency fits.
    conversion : pandas.DataFrame or None
        Heads converted from pressure ratio or discharge pressure, per point (see
        :attr:`MapTable.conversion`); None when the table gave head.
    conversion_note : str
        How the heads were converted; empty when the table gave head.
    """

    map: CompressorMap
    points: pd.DataFrame
    lines: pd.DataFrame
    speed_dependence: SpeedDependence
    head_degree: int
    efficiency_degree: int
    conversion: pd.DataFrame | None = None
    conversion_note: str = ""

    def summary(self) -> dict[str, float]:
        """Overall residuals: RMS and maximum magnitude of each error column [-]."""
        p, lines = self.points, self.lines
        result = {}
        for name, column in (
            ("head", p.head_error),
            ("efficiency", p.efficiency_error),
            ("surge_flow", lines.surge_error),
            ("stonewall_flow", lines.stonewall_error),
        ):
            values = column.dropna().to_numpy(dtype=float)
            result[f"{name}_rms"] = float(np.sqrt(np.mean(values**2)))
            result[f"{name}_max"] = float(np.max(np.abs(values)))
        return result


def fit_map(
    table: MapTable,
    speed_dependence: SpeedDependence | None = None,
    *,
    head_degree: int | None = None,
    efficiency_degree: int | None = None,
) -> MapFit:
    """Fit a smooth map to a table of measured points.

    Parameters
    ----------
    table : MapTable
        Validated points (see :func:`~trainopt.machines.maps.table.read_map_source`).
    speed_dependence : SpeedDependence, optional
        Overrides the metadata's ``fit.speed_dependence``; by default the richest one the
        number of speed lines allows (three-term from three lines on).
    head_degree, efficiency_degree : int, optional
        Degree in the flow coefficient; by default one less than the fewest points
        (efficiency values) on a line, at most 3.

    Returns
    -------
    MapFit
        The map and its residuals per point and per speed line.

    Raises
    ------
    InputError
        If there are too few speed lines for the chosen speed dependence, the points do not
        determine the fit, or the fitted map breaks the physics in its tested range.

    Notes
    -----
    ``psi(phi, r) = sum_j sum_k b_jk phi^j r^k`` by least squares on the relative head error,
    ``eta(phi, r) = sum_j sum_k e_jk phi^j r^k`` on the absolute efficiency error,
    ``phi_surge(r) = sum_k s_k r^k`` (and the stonewall likewise) on the relative flow error.
    ``H = N² psi`` and ``Q = N phi`` give the fan laws exactly when only ``k = 0`` is used.
    """
    lines = table.speed_lines
    choice, where = _speed_dependence(table, speed_dependence)
    if len(lines) < choice.min_speed_lines:
        raise InputError(
            where,
            f"the {choice.value} speed dependence needs at least "
            f"{choice.min_speed_lines} speed lines; {table.path} has {len(lines)}",
            f"give more speed lines or choose {list(SpeedDependence)[len(lines) - 1].value}",
        )
    fewest = min(len(line) for line in lines)
    fewest_eff = min(int(line.efficiency.notna().sum()) for line in lines)
    head_degree = min(MAX_FLOW_DEGREE, fewest - 1) if head_degree is None else head_degree
    if efficiency_degree is None:
        efficiency_degree = min(MAX_FLOW_DEGREE, fewest_eff - 1)

    p = table.points
    speed_ref, flow_ref, head_ref = p.speed.max(), p.flow.max(), p["head"].max()
    r = p.speed.to_numpy() / speed_ref
    phi = p.flow.to_numpy() / flow_ref / r
    psi = p["head"].to_numpy() / head_ref / r**2
    powers = choice.speed_powers
    where_points = f"{table.path}:{table.header_line}:flow"

    fit = partial(
        _fit_monomials, powers=powers, speed_ref=speed_ref, flow_ref=flow_ref, where=where_points
    )
    head_surface = fit(phi, r, psi, head_degree, 1 / psi, 2, head_ref, "head")
    has = p.efficiency.notna().to_numpy()
    efficiency = p.efficiency.to_numpy()[has]
    eff_surface = fit(phi[has], r[has], efficiency, efficiency_degree, None, 0, 1.0, "efficiency")
    boundaries = []
    for kind, position in ((PointKind.SURGE, 0), (PointKind.STONEWALL, -1)):
        ends = pd.DataFrame([_boundary_point(line, kind, position) for line in lines])
        r_b = ends.speed.to_numpy() / speed_ref
        phi_b = ends.flow.to_numpy() / flow_ref / r_b
        flow = fit(phi_b, r_b, phi_b, 0, 1 / phi_b, 1, flow_ref, f"{kind.value} line")
        boundaries.append(SpeedCurve(flow))
    compressor_map = CompressorMap(
        name=table.name,
        basis=table.basis,
        head_surface=head_surface,
        efficiency_surface=eff_surface,
        surge_line=boundaries[0],
        stonewall_line=boundaries[1],
        speed_range=(float(p.speed.min()), float(p.speed.max())),
        source=table.path,
    )
    check_map_shape(
        compressor_map,
        f"{table.path}: fitted with {choice.value} speed "
        f"dependence, degrees {head_degree} (head) and {efficiency_degree} (efficiency)",
    )
    check_map_units(compressor_map, table.path, table.impeller_diameter)
    points, line_table = _residuals(compressor_map, table)
    return MapFit(
        compressor_map,
        points,
        line_table,
        choice,
        head_degree,
        efficiency_degree,
        table.conversion,
        table.conversion_note,
    )


def fit_map_file(path: str | Path) -> MapFit:
    """Read a map file of measured points and fit it (see :func:`fit_map`)."""
    source = read_map_source(path)
    if isinstance(source, CompressorMap):
        raise InputError(
            str(path), "holds published coefficients, not points to fit", "use load_map to read it"
        )
    return fit_map(source)


def load_map(path: str | Path) -> CompressorMap:
    """Read a map file: fit its points, or build it from its published coefficients.

    Parameters
    ----------
    path : str or Path
        YAML metadata file, or CSV table with its YAML metadata beside it.

    Returns
    -------
    CompressorMap
        The map, ready to evaluate.
    """
    source = read_map_source(path)
    return source if isinstance(source, CompressorMap) else fit_map(source).map


def fan_law_departure(
    compressor_map: CompressorMap,
    speeds=None,
    *,
    reference_speed: float | None = None,
    samples: int = 41,
) -> pd.DataFrame:
    """How far a map's speed lines depart from the fan-law scaling of one reference line.

    Parameters
    ----------
    compressor_map : CompressorMap
        The map.
    speeds : array_like, optional
        Speeds to compare [1/s]; by default nine across the tested range.
    reference_speed : float, optional
        Speed of the reference line [1/s]; by default the highest tested speed.
    samples : int
        Flow coefficients compared per line.

    Returns
    -------
    pandas.DataFrame
        Per speed: ``speed`` [1/s]; ``head_departure``, the largest
        ``H(phi N, N) / ((N/N0)² H(phi N0, N0)) - 1`` over the flow coefficients both lines
        test [-] (signed); ``efficiency_departure``, the largest
        ``eta(phi N, N) - eta(phi N0, N0)`` [-] (signed); ``surge_flow_departure`` and
        ``stonewall_flow_departure``, ``Q(N) / (Q(N0) N / N0) - 1`` [-]. All zero for a map
        that obeys the fan laws.
    """
    m = compressor_map
    n0 = m.speed_max if reference_speed is None else float(reference_speed)
    speeds = np.linspace(m.speed_min, m.speed_max, 9) if speeds is None else np.asarray(speeds)
    rows = []
    for n in np.atleast_1d(speeds):
        bounds = [
            m.surge_flow_at_speed([n0, n], warn=False) / [n0, n],
            m.stonewall_flow_at_speed([n0, n], warn=False) / [n0, n],
        ]
        phi = np.linspace(bounds[0].max(), bounds[1].min(), samples)
        head = m.head(phi * n, n, warn=False) / ((n / n0) ** 2 * m.head(phi * n0, n0, warn=False))
        eff = m.efficiency(phi * n, n, warn=False) - m.efficiency(phi * n0, n0, warn=False)
        rows.append(
            {
                "speed": n,
                "head_departure": _signed_max(head - 1),
                "efficiency_departure": _signed_max(eff),
                "surge_flow_departure": bounds[0][1] / bounds[0][0] - 1,
                "stonewall_flow_departure": bounds[1][1] / bounds[1][0] - 1,
            }
        )
    return pd.DataFrame(rows)


def _signed_max(values: np.ndarray) -> float:
    return float(values[np.argmax(np.abs(values))]) if values.size else float("nan")


def _speed_dependence(table: MapTable, chosen: SpeedDependence | None):
    if chosen is not None:
        return chosen, f"{table.path}:{table.header_line}:speed"
    if table.speed_dependence is not None:
        try:
            return SpeedDependence(str(table.speed_dependence)), table.speed_dependence_field
        except ValueError:
            raise InputError(
                table.speed_dependence_field,
                f"speed dependence {table.speed_dependence!r} is not known",
                f"use one of {', '.join(s.value for s in SpeedDependence)}",
            ) from None
    count = len(table.speed_lines)
    return list(SpeedDependence)[min(count, 3) - 1], f"{table.path}:{table.header_line}:speed"


def _fit_monomials(
    phi, r, target, degree, weight, value_power, scale, what, *, powers, speed_ref, flow_ref, where
) -> Monomials:
    """Least-squares ``target ≈ sum_j sum_k c_jk phi^j r^k`` as monomials in flow and speed.

    The value is ``scale * target * r**value_power`` (head: 2, efficiency: 0, a boundary
    flow: 1); with ``phi = q / r`` each term becomes ``q^j r^(value_power - j + k)``.
    """
    terms = [(j, k) for j in range(degree + 1) for k in powers]
    design = np.column_stack([phi**j * r ** float(k) for j, k in terms])
    w = np.ones_like(target) if weight is None else weight
    coefficients, _, rank, _ = np.linalg.lstsq(design * w[:, None], target * w, rcond=None)
    if rank < design.shape[1]:
        raise InputError(
            where,
            f"the points do not determine the {what} fit "
            f"({design.shape[1]} coefficients, rank {rank})",
            "give points at more distinct flows, or more speed lines",
        )
    return Monomials(
        tuple(coefficients),
        tuple(j for j, _ in terms),
        tuple(value_power - j + k for j, k in terms),
        flow_ref,
        speed_ref,
        scale,
    )


def _boundary_point(line: pd.DataFrame, kind: PointKind, position: int) -> pd.Series:
    """Return the line's surge or stonewall point, or its end point where none is marked."""
    marked = line[line.kind == kind]
    return marked.iloc[0] if len(marked) else line.iloc[position]


def _residuals(m: CompressorMap, table: MapTable) -> tuple[pd.DataFrame, pd.DataFrame]:
    p = table.points
    points = pd.DataFrame(
        {
            "line": p.line,
            "kind": [k.value or "line" for k in p.kind],
            "speed": p.speed,
            "flow": p.flow,
            "head": p["head"],
            "head_fit": m.head(p.flow, p.speed, warn=False),
            "efficiency": p.efficiency,
            "efficiency_fit": m.efficiency(p.flow, p.speed, warn=False),
        }
    )
    points["head_error"] = points.head_fit / points["head"] - 1
    points["efficiency_error"] = points.efficiency_fit - points.efficiency
    rows = []
    for line in table.speed_lines:
        errors = points.loc[line.index]
        speed = line.speed.iloc[0]
        row = {
            "speed": speed,
            "points": len(line),
            "head_rms": float(np.sqrt(np.mean(errors.head_error**2))),
            "head_max": float(errors.head_error.abs().max()),
            "efficiency_rms": float(np.sqrt(np.mean(errors.efficiency_error.dropna() ** 2))),
            "efficiency_max": float(errors.efficiency_error.abs().max()),
        }
        for name, kind, position, fitted in (
            ("surge", PointKind.SURGE, 0, m.surge_flow_at_speed(speed, warn=False)),
            ("stonewall", PointKind.STONEWALL, -1, m.stonewall_flow_at_speed(speed, warn=False)),
        ):
            measured = _boundary_point(line, kind, position).flow
            row.update(
                {
                    f"{name}_flow": measured,
                    f"{name}_flow_fit": float(fitted),
                    f"{name}_error": float(fitted / measured - 1),
                }
            )
        rows.append(row)
    return points.reset_index(drop=True), pd.DataFrame(rows)
