"""A vectorised bracketed root finder for the map's inverse evaluations."""

from __future__ import annotations

import numpy as np

RANGE_TOLERANCE = 1e-9
"""Relative slack [-] below which a query counts as on the edge of the tested range."""


def solve_monotone(func, lo, hi, scale, *, iterations: int = 200) -> np.ndarray:
    """Vectorised root of a function monotone on each bracket ``[lo, hi]``.

    Illinois variant of regula falsi (Dowell, M., Jarratt, P. 1971, BIT 11:168-174),
    superlinear and bracketed; it stops where ``|func| <= 1e-13 scale`` or the bracket has
    shrunk to rounding. Returns NaN where the bracket is NaN or ``func`` has the same sign
    at both ends; a bracket end within ``RANGE_TOLERANCE * scale`` of a root (a root on the
    edge of the tested domain, where the bracket itself came from a root) is the root.
    ``scale`` is the size of the values ``func`` compares (e.g. the target head).
    """
    lo, hi = np.broadcast_arrays(np.asarray(lo, float), np.asarray(hi, float))
    lo, hi = lo.copy(), hi.copy()
    scale = np.broadcast_to(np.maximum(np.abs(scale), 1e-300), lo.shape)
    ftol = 1e-13 * scale
    f_lo, f_hi = func(lo), func(hi)
    root = np.full(lo.shape, np.nan)
    done = ~(np.isfinite(f_lo) & np.isfinite(f_hi))
    for end, f_end in ((lo, f_lo), (hi, f_hi)):
        hit = ~done & (np.abs(f_end) <= RANGE_TOLERANCE * scale)
        root[hit], done = end[hit], done | hit
    done |= np.sign(f_lo) == np.sign(f_hi)
    side = np.zeros(lo.shape, dtype=int)
    for _ in range(iterations):
        if done.all():
            break
        with np.errstate(divide="ignore", invalid="ignore"):
            x = (lo * f_hi - hi * f_lo) / (f_hi - f_lo)
        x = np.where(
            np.isfinite(x) & (x >= np.minimum(lo, hi)) & (x <= np.maximum(lo, hi)),
            x,
            0.5 * (lo + hi),
        )
        x = np.where(done, lo, x)
        f_x = func(x)
        same_as_lo = np.sign(f_x) == np.sign(f_lo)
        move_lo, move_hi = ~done & same_as_lo, ~done & ~same_as_lo
        f_hi = np.where(move_lo & (side == -1), 0.5 * f_hi, f_hi)
        f_lo = np.where(move_hi & (side == 1), 0.5 * f_lo, f_lo)
        lo, f_lo = np.where(move_lo, x, lo), np.where(move_lo, f_x, f_lo)
        hi, f_hi = np.where(move_hi, x, hi), np.where(move_hi, f_x, f_hi)
        side = np.where(move_lo, -1, np.where(move_hi, 1, side))
        converged = ~done & ((np.abs(f_x) <= ftol) | (np.abs(hi - lo) <= 4e-16 * np.abs(x)))
        root[converged] = x[converged]
        done |= converged
    return root
