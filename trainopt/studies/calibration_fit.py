"""Robust fit of a unit's degradation factors to its measured points, with uncertainty.

The model of a worn unit (:mod:`trainopt.machines.degradation`) at a measured point of flow
Q, speed N and Mach ratio s = a_test / a:

    H = f_H H_map(s Q / f_Q, s N) / s²,    eta = f_eta eta_map(s Q / f_Q, s N)

The residuals are the relative head miss ``H / H_model - 1`` and the relative efficiency miss
``eta_model / eta - 1`` (that is ``eta_model (h2 - h1) / H - 1``: the measured temperature rise
in the numerator, where its noise averages out; in a denominator, 0.7 K of noise on a 25 K
rise would bias the efficiency factor by about +0.08 %), each over its effective standard
deviation: a base scale (1.4826 x the median absolute deviation of the points on
the flatter half of their speed lines) combined with the flow meter's uncertainty times the
local slope of the speed line, ``sqrt(a² + (d ln H/d ln Q · u_Q)²)`` (effective variance,
Orear 1982). Without it the points near stonewall, where a 1 % flow error moves the
predicted head by 3 %, would dominate the fit and bias the head factor by about the flow
variance times the slope squared. :func:`scipy.optimize.least_squares` minimises them
with the soft-L1 loss, so a point several scales away pulls with a bounded force (a robust
fit). The standard errors come from the Jacobian at the solution, weighted by the loss (the Gauss-
Newton covariance ``s² (Jᵀ W J)⁻¹`` of iteratively reweighted least squares, with
``s² = Σ w r² / (m - p)``).

They assume independent points. Hourly rows of one steady spell are not quite independent,
and a sensor's bias is not noise at all: the standard error says how well the data fix the
factors *given* the sensors, not how right the sensors are.

References
----------
.. [1] Huber, P. J., Ronchetti, E. M. (2009). Robust Statistics, 2nd ed. Wiley, ch. 7
   (M-estimators of regression and their asymptotic covariance).
.. [3] Orear, J. (1982). Least squares when both variables have uncertainties. American
   Journal of Physics 50(10), 912-916. doi:10.1119/1.12972
.. [2] SciPy ``least_squares`` documentation, "loss" (soft_l1: rho(z) = 2 (sqrt(1 + z) - 1)).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.optimize import least_squares

SOFT_L1_SCALE = 2.0
"""Residual size [scales] where the soft-L1 loss turns from quadratic to linear [-]."""

SEPARATION_CORRELATION = 0.95
"""Estimates of head_factor and flow_factor more correlated than this cannot be told
apart by the data [-]; flow_factor is then held at 1."""

FLOW_UNCERTAINTY = 0.01
"""Relative standard uncertainty of a unit's flow meter [-] (assumed, about 1 % for an
orifice or the anti-surge flow element; state your own)."""

ONE_SPEED_SPREAD = 0.02
"""Points whose speeds span less than this fraction of their median are 'at one speed'."""


@dataclass(frozen=True)
class FactorFit:
    """Factors of one unit fitted to a set of points.

    Attributes
    ----------
    head_factor, efficiency_factor, flow_factor : float
        [-].
    head_factor_se, efficiency_factor_se, flow_factor_se : float
        Standard errors [-]; NaN for a factor held fixed.
    points : int
        Points used.
    head_scale, efficiency_scale : float
        Base residual scales (without the flow meter's part): relative head and relative
        efficiency [-].
    note : str
        What the data could not tell apart, or ''.
    """

    head_factor: float
    efficiency_factor: float
    flow_factor: float
    head_factor_se: float
    efficiency_factor_se: float
    flow_factor_se: float
    points: int
    head_scale: float
    efficiency_scale: float
    note: str = ""

    def as_row(self) -> dict:
        """The fit as a flat dict (a table row)."""
        return {k: getattr(self, k) for k in self.__dataclass_fields__}


def _robust_scale(x: np.ndarray, floor: float) -> float:
    x = x[np.isfinite(x)]
    return max(1.4826 * float(np.median(np.abs(x - np.median(x)))), floor)


def predict(cmap, points: pd.DataFrame, head_factor: float, efficiency_factor: float,
            flow_factor: float) -> tuple[np.ndarray, np.ndarray]:
    """Head [J/kg] and efficiency [-] of the worn model at the points."""
    r = points["sound_speed_ratio"].to_numpy(float)
    q = points["volume_flow"].to_numpy(float) * r / flow_factor
    n = points["speed"].to_numpy(float) * r
    return (head_factor * cmap.head(q, n, warn=False) / r**2,
            efficiency_factor * cmap.efficiency(q, n, warn=False))


def fit_factors(cmap, points: pd.DataFrame, *, fit_flow: bool = False,
                flow_uncertainty: float = FLOW_UNCERTAINTY) -> FactorFit:
    """Fit head, efficiency and (optionally) flow factors of one unit.

    Parameters
    ----------
    cmap : CompressorMap
        The unit's as-new map.
    points : pandas.DataFrame
        ``volume_flow`` [m³/s], ``speed`` [1/s], ``sound_speed_ratio`` [-], ``head``
        [J/kg], ``efficiency`` [-] (see :class:`~trainopt.studies.field_points.FieldPoints`).
    fit_flow : bool
        Fit flow_factor too; it is held at 1 again, with a note, where the data cannot
        separate it from head_factor.
    flow_uncertainty : float
        Relative standard uncertainty of the flow meter [-], for the effective variance.

    Returns
    -------
    FactorFit
    """
    head = points["head"].to_numpy(float)
    eta = points["efficiency"].to_numpy(float)
    h0, e0 = predict(cmap, points, 1.0, 1.0, 1.0)
    step = 1e-4
    h1, e1 = predict(cmap, points, 1.0, 1.0, 1.0 / (1.0 + step))  # flow up by `step`
    head_slope = (h1 / h0 - 1.0) / step                 # d ln H / d ln Q [-]
    eff_slope = (e1 / e0 - 1.0) / step                  # d ln eta / d ln Q [-]
    flat = np.abs(head_slope) <= np.median(np.abs(head_slope))
    head_ratio, eff_ratio = head / h0, eta / e0
    base_head = _robust_scale(head_ratio[flat] / np.median(head_ratio), 1e-4)
    base_eff = _robust_scale(e0[flat] / eta[flat] / np.median(1.0 / eff_ratio), 1e-4)
    head_scale = np.hypot(base_head, head_slope * flow_uncertainty)
    eff_scale = np.hypot(base_eff, eff_slope * flow_uncertainty)
    speeds = points["speed"].to_numpy(float)
    one_speed = np.ptp(speeds) < ONE_SPEED_SPREAD * np.median(speeds)
    note = (f"all points near one speed ({np.median(speeds) * 60:.0f} rpm): the factors "
            "hold near that speed" if one_speed else "")

    def residuals(x):
        fq = x[2] if len(x) == 3 else 1.0
        h, e = predict(cmap, points, x[0], x[1], fq)
        # e / eta = e (h2 - h1) / H: the measured temperature rise in the numerator, so its
        # noise does not bias the fit (eta itself has it in the denominator)
        return np.concatenate([(head / h - 1.0) / head_scale, (e / eta - 1.0) / eff_scale])

    x0 = [float(np.median(head / h0)), float(np.median(eta / e0))] + ([1.0] if fit_flow else [])
    fit = least_squares(residuals, x0, loss="soft_l1", f_scale=SOFT_L1_SCALE,
                        x_scale=0.05, bounds=(0.3, 2.0))
    cov = _covariance(residuals, fit.x)
    se = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    if fit_flow:
        corr = cov[0, 2] / np.sqrt(cov[0, 0] * cov[2, 2]) if cov[0, 0] * cov[2, 2] > 0 else 1.0
        if not abs(corr) < SEPARATION_CORRELATION or one_speed:
            why = ("all points near one speed" if one_speed else
                   f"their estimates are {abs(corr):.2f} correlated")
            refit = fit_factors(cmap, points, flow_uncertainty=flow_uncertainty)
            text = (f"head_factor and flow_factor cannot be separated ({why}); flow_factor "
                    "held at 1")
            return FactorFit(**{**refit.as_row(), "note": "; ".join(
                t for t in (text, refit.note) if t)})
        return FactorFit(fit.x[0], fit.x[1], fit.x[2], se[0], se[1], se[2], len(points),
                         base_head, base_eff, note)
    return FactorFit(fit.x[0], fit.x[1], 1.0, se[0], se[1], np.nan, len(points), base_head,
                     base_eff, note)


def _covariance(residuals, x: np.ndarray) -> np.ndarray:
    """``s² (Jᵀ W J)⁻¹`` with soft-L1 weights (see the module notes)."""
    r = residuals(x)
    jac = np.empty((r.size, x.size))
    for j in range(x.size):
        step = 1e-6 * max(abs(x[j]), 1.0)
        xp = x.copy()
        xp[j] += step
        jac[:, j] = (residuals(xp) - r) / step
    w = 1.0 / np.sqrt(1.0 + (r / SOFT_L1_SCALE) ** 2)
    dof = max(r.size - x.size, 1)
    s2 = float(np.sum(w * r * r) / dof)
    try:
        return s2 * np.linalg.inv(jac.T @ (w[:, None] * jac))
    except np.linalg.LinAlgError:
        return np.full((x.size, x.size), np.inf)
