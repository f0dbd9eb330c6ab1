"""A gas tabulated once per case, and compression computed on it in numpy arrays.

:func:`trainopt.physics.compression.compress` takes about 4 ms a call and its inverse
``compress_to_head`` about 25 ms, far too slow inside the searches of series trains
(thousands of operating points per train). A :class:`GasTable` evaluates the gas once
on a grid of pressure and temperature (CoolProp, gas phase imposed, about 0.3 ms a
state), fits bicubic splines in (ln p, T) to enthalpy, entropy and ln(specific volume),
and then does the same compression thermodynamics as :mod:`trainopt.physics.compression`
(Schultz's polytropic head, or the isentropic basis) on whole arrays at once.

Accuracy: against :func:`trainopt.physics.compression.compress` on a lean pipeline gas (AGA 8
Gulf Coast) with a table from 20 to 150 bar and -5 to 230 degC on the default grid, the
head and the work differ by at most 3.3e-6 relative, the discharge temperature by 0.3 mK
and the density by 2.5e-6 relative (``tests/physics/test_gas_table.py`` measures it on random
duties); the departure grows as the fourth power of the grid step. Speed: the inverse,
:meth:`GasTable.compress_to_head`, takes about 2 ms for a few points and 5-11 us a point
for ten thousand, against 25 ms a point on CoolProp states.

Inside the table only: states outside its pressure and temperature ranges come back as
NaN (or, for a discharge pressure beyond the top of the table, ``inf``), never as an
extrapolated number.

References
----------
.. [1] Schultz, J. M. (1962). The polytropic analysis of centrifugal compressors.
   Journal of Engineering for Power 84(1), 69-82. doi:10.1115/1.3673381
.. [2] ASME PTC 10-1997, Performance Test Code on Compressors and Exhausters, appendix G.
.. [3] de Boor, C. (2001). A Practical Guide to Splines, revised edition. Springer
   (tensor-product cubic splines; error of order h^4 for smooth functions).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.interpolate import RectBivariateSpline

from trainopt.errors import InputError
from trainopt.physics.compression import HeadBasis
from trainopt.physics.gas import Gas

DEFAULT_PRESSURE_POINTS = 16
"""Grid points in ln(pressure) [-]."""

DEFAULT_TEMPERATURE_STEP = 10.0
"""Grid step in temperature [K]."""

_NEWTON_STEPS = 8
_PRESSURE_PASSES = 30
_H, _S, _LNV = 0, 1, 2


@dataclass(frozen=True)
class TableCompression:
    """Compression results on a gas table (arrays of one broadcast shape).

    Attributes
    ----------
    suction_pressure, discharge_pressure : numpy.ndarray
        [Pa]; ``inf`` where the discharge pressure lies above the table.
    suction_temperature, discharge_temperature : numpy.ndarray
        [K].
    suction_density : numpy.ndarray
        [kg/m³].
    head : numpy.ndarray
        Head on the requested basis [J/kg].
    specific_work : numpy.ndarray
        Actual enthalpy rise h2 - h1 [J/kg].
    """

    suction_pressure: np.ndarray
    suction_temperature: np.ndarray
    suction_density: np.ndarray
    discharge_pressure: np.ndarray
    discharge_temperature: np.ndarray
    head: np.ndarray
    specific_work: np.ndarray


class GasTable:
    """Enthalpy, entropy and specific volume of a gas on a (p, T) grid, as splines.

    Parameters
    ----------
    gas : Gas
        The gas; its states are taken with the gas phase imposed.
    pressure_range : tuple of float
        Lowest and highest pressure [Pa] of the table.
    temperature_range : tuple of float
        Lowest and highest temperature [K] of the table.
    pressure_points : int, optional
        Grid points in ln p [-].
    temperature_step : float, optional
        Largest grid step in temperature [K].

    Notes
    -----
    Building takes ``pressure_points x (temperature span / step + 1)`` CoolProp states
    (about 0.3 ms each with the phase imposed; 16 x 24 states take about 0.2 s).
    Interpolation is the not-a-knot tensor-product cubic spline in (ln p, T) [3]_ of
    enthalpy, entropy and ln v, stored as one bicubic polynomial per grid cell so that a
    single lookup gives all three and their temperature derivatives.

    Examples
    --------
    >>> from trainopt.physics.gas import Gas
    >>> nitrogen = Gas.from_composition({"nitrogen": 1.0})
    >>> table = GasTable(nitrogen, (0.5e5, 20e5), (250.0, 600.0))
    >>> c = table.compress(1e5, 300.0, 3e5, 0.8, HeadBasis.POLYTROPIC)
    >>> round(float(c.head) / 1e3, 1)
    119.8
    """

    def __init__(self, gas: Gas, pressure_range: tuple[float, float],
                 temperature_range: tuple[float, float],
                 pressure_points: int = DEFAULT_PRESSURE_POINTS,
                 temperature_step: float = DEFAULT_TEMPERATURE_STEP):
        p_lo, p_hi = (float(x) for x in pressure_range)
        t_lo, t_hi = (float(x) for x in temperature_range)
        if not 0 < p_lo < p_hi:
            raise InputError("gas table pressure range", f"{p_lo:g} to {p_hi:g} Pa is empty",
                             "give a lowest pressure below the highest")
        if not 0 < t_lo < t_hi:
            raise InputError("gas table temperature range", f"{t_lo:g} to {t_hi:g} K is empty",
                             "give a lowest temperature below the highest")
        self.gas = gas
        self.pressure_range = (p_lo, p_hi)
        self.temperature_range = (t_lo, t_hi)
        lnp = np.linspace(np.log(p_lo), np.log(p_hi), max(int(pressure_points), 4))
        temps = np.linspace(t_lo, t_hi, max(int(np.ceil((t_hi - t_lo) / temperature_step)) + 1, 4))
        h = np.empty((lnp.size, temps.size))
        s, lnv = np.empty_like(h), np.empty_like(h)
        for i, x in enumerate(lnp):
            for j, t in enumerate(temps):
                st = gas.state(float(np.exp(x)), float(t))
                h[i, j], s[i, j], lnv[i, j] = st.enthalpy, st.entropy, -np.log(st.density)
        self.states = h.size
        self._bounds = (lnp[0], lnp[-1], temps[0], temps[-1])
        self._steps = (lnp[1] - lnp[0], temps[1] - temps[0])
        self._coef = _patches(lnp, temps, (h, s, lnv))
        # Cell-major, ln-p power first: (cells, 4, 3 properties x 4 temperature powers).
        self._flat = np.ascontiguousarray(self._coef.transpose(0, 1, 3, 2, 4).reshape(
            -1, 4, 12))

    # properties ----------------------------------------------------------------------

    def _inside(self, lnp, t) -> np.ndarray:
        x0, x1, t0, t1 = self._bounds
        slack = 1e-12
        return (lnp >= x0 - slack) & (lnp <= x1 + slack) & (t >= t0 - 1e-9) & (t <= t1 + 1e-9)

    def _eval(self, lnp, t) -> tuple[np.ndarray, np.ndarray]:
        """h, s, ln v and their T-derivatives at (ln p, T): two arrays of shape (3, ...).

        Each grid cell holds its bicubic polynomial (the spline's own piece), so one
        gather and two contractions give all three properties and their slopes.
        """
        x0, x1, t0, t1 = self._bounds
        dx, dy = self._steps
        x = np.asarray(lnp, float)
        y = np.asarray(t, float)
        if x.shape != y.shape:
            x, y = np.broadcast_arrays(x, y)
        shape = x.shape
        x, y = x.ravel(), y.ravel()
        bad = ~(np.isfinite(x) & np.isfinite(y))
        any_bad = bad.any()
        if any_bad:
            x, y = np.where(bad, x0, x), np.where(bad, t0, y)
        fx = (np.minimum(np.maximum(x, x0), x1) - x0) / dx
        fy = (np.minimum(np.maximum(y, t0), t1) - t0) / dy
        i = np.minimum(fx.astype(np.intp), self._coef.shape[0] - 1)
        j = np.minimum(fy.astype(np.intp), self._coef.shape[1] - 1)
        u, w = fx - i, fy - j
        one = np.ones_like(u)
        cu = np.matmul(np.stack((one, u, u * u, u * u * u), axis=1)[:, None, :],
                       self._flat[i * self._coef.shape[1] + j])[:, 0, :].reshape(-1, 3, 4)
        value = (cu * np.stack((one, w, w * w, w * w * w), axis=1)[:, None, :]).sum(axis=2).T
        slope = (cu[:, :, 1:] * np.stack((one, 2.0 * w, 3.0 * w * w), axis=1)[:, None, :]
                 ).sum(axis=2).T / dy
        if any_bad:
            value[:, bad] = np.nan
            slope[:, bad] = np.nan
        return value.reshape((3,) + shape), slope.reshape((3,) + shape)

    def properties(self, pressure, temperature) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Enthalpy [J/kg], entropy [J/(kg K)] and density [kg/m³] at (p [Pa], T [K]).

        NaN outside the table.
        """
        lnp, t = np.log(np.asarray(pressure, float)), np.asarray(temperature, float)
        inside = self._inside(lnp, t)
        (h, s, lnv), _ = self._eval(lnp, t)
        return (np.where(inside, h, np.nan), np.where(inside, s, np.nan),
                np.where(inside, np.exp(-lnv), np.nan))

    def density(self, pressure, temperature) -> np.ndarray:
        """Density [kg/m³] at (p [Pa], T [K]); NaN outside the table."""
        return self.properties(pressure, temperature)[2]

    def enthalpy(self, pressure, temperature) -> np.ndarray:
        """Enthalpy [J/kg] at (p [Pa], T [K]); NaN outside the table."""
        return self.properties(pressure, temperature)[0]

    def _temperature_at(self, which: int, lnp, target, guess) -> np.ndarray:
        """Temperature where property ``which`` (0 h, 1 s) equals ``target``: Newton on T."""
        t = np.asarray(guess, float).copy()
        for _ in range(_NEWTON_STEPS):
            value, slope = self._eval(lnp, t)
            step = (target - value[which]) / slope[which]
            t = t + step
            if not np.any(np.abs(step) > 1e-9):
                break
        return t

    def temperature_from_enthalpy(self, pressure, enthalpy, guess) -> np.ndarray:
        """Temperature [K] where the gas has an enthalpy [J/kg] at a pressure [Pa].

        Newton steps on T with ``dh/dT`` of the spline, from ``guess`` [K]; NaN where the
        answer leaves the table.
        """
        lnp = np.log(np.asarray(pressure, float))
        t = self._temperature_at(_H, lnp, np.asarray(enthalpy, float), guess)
        return np.where(self._inside(lnp, t), t, np.nan)

    # compression ---------------------------------------------------------------------

    def _suction(self, p1, t1):
        lnp1 = np.log(p1)
        (h1, s1, lnv1), slope = self._eval(lnp1, t1)
        return lnp1, h1, s1, np.exp(lnv1), slope[_H]

    def _isentropic(self, lnp2, s1, guess):
        """Isentropic discharge temperature [K], enthalpy [J/kg], volume [m³/kg] at p2."""
        t = self._temperature_at(_S, lnp2, s1, guess)
        value, _ = self._eval(lnp2, t)
        return t, value[_H], np.exp(value[_LNV])

    def compress(self, suction_pressure, suction_temperature, discharge_pressure, efficiency,
                 basis: HeadBasis) -> TableCompression:
        """Head and discharge state to reach a discharge pressure at an efficiency.

        Parameters
        ----------
        suction_pressure : array_like
            Absolute suction pressure p1 [Pa].
        suction_temperature : array_like
            Suction temperature T1 [K].
        discharge_pressure : array_like
            Absolute discharge pressure p2 [Pa], above p1.
        efficiency : array_like
            Efficiency on ``basis`` [-].
        basis : HeadBasis
            Polytropic (Schultz) or isentropic.

        Returns
        -------
        TableCompression
            NaN where a state leaves the table.

        Notes
        -----
        The equations of :func:`trainopt.physics.compression.compress` (ASME PTC 10-1997 appendix
        G; Schultz 1962): ``n_s = ln(p2/p1)/ln(v1/v2s)``,
        ``f = (h2s - h1)/[n_s/(n_s - 1)(p2 v2s - p1 v1)]``, ``n = ln(p2/p1)/ln(v1/v2)``,
        ``H_p = f n/(n - 1)(p2 v2 - p1 v1)``; on the polytropic basis the discharge
        temperature is the root of ``H_p(T2) = eta_p (h(p2, T2) - h1)`` (Newton steps with
        the exact derivative of the tabulated model, to 1e-9 K), on the isentropic basis
        ``h2 = h1 + (h2s - h1)/eta_s``.
        """
        p1, t1, p2, eta = np.broadcast_arrays(*(np.asarray(a, float) for a in (
            suction_pressure, suction_temperature, discharge_pressure, efficiency)))
        lnp1, h1, s1, v1, _ = self._suction(p1, t1)
        lnp2 = np.log(p2)
        t2s, h2s, v2s = self._isentropic(lnp2, s1, t1 * (p2 / p1) ** 0.25)
        isentropic_head = h2s - h1
        start = t1 + (t2s - t1) / eta
        if basis is HeadBasis.ISENTROPIC:
            t2 = self._temperature_at(_H, lnp2, h1 + isentropic_head / eta, start)
            head, work = isentropic_head, isentropic_head / eta
        else:
            factor = _schultz_factor(p1, v1, h1, p2, v2s, h2s)
            t2 = self._polytropic_discharge(lnp2, p1, v1, h1, factor, eta, start)
            work = self._eval(lnp2, t2)[0][_H] - h1
            head = eta * work
        ok = self._inside(lnp1, t1) & self._inside(lnp2, t2) & (p2 > p1)
        return TableCompression(
            p1, t1, np.where(ok, 1.0 / v1, np.nan), np.where(ok, p2, np.nan),
            np.where(ok, t2, np.nan), np.where(ok, head, np.nan), np.where(ok, work, np.nan))

    def _polytropic_discharge(self, lnp2, p1, v1, h1, factor, eta, guess) -> np.ndarray:
        """Discharge temperature [K] with ``H_p(T2) = eta (h2 - h1)`` (Newton steps).

        With ``n = L / ln(v1/v2)``, ``L = ln(p2/p1)``: ``dn/dv2 = n² / (L v2)`` and
        ``dH_p/dv2 = f [n/(n-1) p2 - n² (p2 v2 - p1 v1) / ((n-1)² L v2)]``.
        """
        p2 = np.exp(lnp2)
        big_l = lnp2 - np.log(p1)
        t = np.asarray(guess, float).copy()
        for _ in range(_NEWTON_STEPS):
            value, slope = self._eval(lnp2, t)
            v2 = np.exp(value[_LNV])
            with np.errstate(divide="ignore", invalid="ignore"):
                n = big_l / np.log(v1 / v2)
                head = factor * n / (n - 1.0) * (p2 * v2 - p1 * v1)
                dh_dv = factor * (n / (n - 1.0) * p2
                                  - n * n * (p2 * v2 - p1 * v1) / ((n - 1.0) ** 2 * big_l * v2))
                derivative = dh_dv * v2 * slope[_LNV] - eta * slope[_H]
                step = -(head - eta * (value[_H] - h1)) / derivative
            step = np.where(np.isfinite(step), step, 0.0)
            t = t + step
            if not np.any(np.abs(step) > 1e-9):
                break
        return t

    def compress_to_head(self, suction_pressure, suction_temperature, head, efficiency,
                         basis: HeadBasis) -> TableCompression:
        """The discharge that a head and efficiency reach (inverse of :meth:`compress`).

        Parameters
        ----------
        suction_pressure : array_like
            [Pa].
        suction_temperature : array_like
            [K].
        head : array_like
            Head on ``basis`` [J/kg]; zero or less gives no pressure rise.
        efficiency : array_like
            Efficiency on ``basis`` [-].
        basis : HeadBasis

        Returns
        -------
        TableCompression
            ``discharge_pressure`` is ``inf`` where it would lie above the table, NaN
            where the suction lies outside it.

        Notes
        -----
        The actual discharge enthalpy is known, ``h2 = h1 + H/eta``; the discharge
        pressure is the root in ln p2 of ``H(p2) = H`` (Schultz's head at the state
        (p2, h2) on the polytropic basis, ``h(p2, s1) - h1`` on the isentropic basis),
        to 1e-9 in ln p2 (see :meth:`_discharge_log_ratio`).
        """
        p1, t1, head, eta = np.broadcast_arrays(*(np.asarray(a, float) for a in (
            suction_pressure, suction_temperature, head, efficiency)))
        lnp1, h1, s1, v1, cp1 = self._suction(p1, t1)
        positive = head > 0
        head_pos = np.where(positive, head, 1.0)
        eta = np.clip(eta, 0.05, 1.0)
        h2 = h1 + head_pos / eta
        upper = self._bounds[1] - lnp1
        x, t2 = self._discharge_log_ratio(lnp1, h1, s1, v1, cp1, t1, head_pos, h2, upper,
                                          basis)
        lnp2 = lnp1 + x
        if basis is HeadBasis.ISENTROPIC:
            t2 = self._temperature_at(_H, lnp2, h2, t2)
        above = x > upper + 1e-12
        ok = self._inside(lnp1, t1)
        p2 = np.where(above, np.inf, np.where(positive, np.exp(lnp2), p1))
        t2 = np.where(positive, t2, t1)
        work = np.where(positive, head_pos / eta, 0.0)
        inside = ok & (above | ~positive | self._inside(lnp2, t2))
        return TableCompression(
            p1, t1, np.where(ok, 1.0 / v1, np.nan), np.where(inside, p2, np.nan),
            np.where(inside & ~above, t2, np.nan), np.where(ok, np.where(positive, head, 0.0),
                                                            np.nan),
            np.where(ok, work, np.nan))

    def _discharge_log_ratio(self, lnp1, h1, s1, v1, cp1, t1, head, h2, upper, basis):
        """ln(p2/p1) reaching ``head``, and T2 [K]; ``upper + 1`` above the table.

        Each pass takes one Newton step on each of the isentropic and the actual discharge
        temperatures (the states at the new temperatures to first order in the step) and
        one step in ln p2 with the slope ``dH/d ln p2`` taken as the log-mean of ``p v``
        over the compression times Schultz's factor (exact for an ideal gas at fixed
        discharge enthalpy, a fraction of a per cent off for a real gas, so the steps
        shrink about a hundredfold a pass); four or five passes reach 1e-9 in ln p2.
        """
        p1 = np.exp(lnp1)
        pv1 = p1 * v1
        t2s, t2 = t1 + head / cp1, t1 + (h2 - h1) / cp1
        # Ideal-gas polytropic estimate, (n - 1)/n = (p1 v1 / T1) / (cp1 eta).
        sigma = np.clip(pv1 / t1 / cp1 * (h2 - h1) / head, 0.02, 0.9)
        x = np.minimum(np.log1p(head * sigma / pv1) / sigma, upper)
        residual = np.zeros_like(x)
        for _ in range(_PRESSURE_PASSES):
            lnp2 = lnp1 + x
            p2 = np.exp(lnp2)
            value, slope = self._eval(lnp2, t2s)
            step_s = (s1 - value[_S]) / slope[_S]
            t2s = t2s + step_s
            h2s = value[_H] + slope[_H] * step_s
            v2s = np.exp(value[_LNV] + slope[_LNV] * step_s)
            if basis is HeadBasis.ISENTROPIC:
                residual = h2s - h1 - head
                rate = p2 * v2s
                t_step = np.abs(step_s)
            else:
                value, slope = self._eval(lnp2, t2)
                step = (h2 - value[_H]) / slope[_H]
                t2 = t2 + step
                v2 = np.exp(value[_LNV] + slope[_LNV] * step)
                factor = _schultz_factor(p1, v1, h1, p2, v2s, h2s)
                residual = _schultz_head(factor, p1, v1, p2, v2) - head
                pv2 = p2 * v2
                with np.errstate(divide="ignore", invalid="ignore"):
                    mean = np.where(np.abs(pv2 / pv1 - 1) > 1e-9,
                                    (pv2 - pv1) / np.log(pv2 / pv1), pv1)
                rate = np.where(np.isfinite(factor), factor, 1.0) * mean
                t_step = np.maximum(np.abs(step_s), np.abs(step))
            x_step = -residual / rate
            x_step = np.where(np.isfinite(x_step), x_step, 0.0)
            x = np.minimum(x + x_step, upper)
            if not (np.any(np.abs(x_step) > 1e-9) or np.any(t_step > 1e-5)):
                break
        # A root above the table: the head is still short at the top.
        return np.where((x >= upper) & (residual < 0), upper + 1.0, x), t2


def _patches(x: np.ndarray, y: np.ndarray, tables) -> np.ndarray:
    """Bicubic coefficients per grid cell of the interpolating splines of some tables.

    Returns an array of shape ``(len(x) - 1, len(y) - 1, len(tables), 4, 4)``: in cell
    ``(i, j)`` the value is ``sum_ab c[a, b] u**a w**b`` with ``u = (x - x_i)/dx`` and
    ``w = (y - y_j)/dy``. A not-a-knot cubic spline is one polynomial within each data
    interval, so sampling it at 4 x 4 points of the cell and solving for the 16
    coefficients reproduces it to rounding error.
    """
    nodes = np.arange(4) / 3.0
    inverse = np.linalg.inv(nodes[:, None] ** np.arange(4))
    xs = x[0] + (x[1] - x[0]) * np.arange(3 * (x.size - 1) + 1) / 3.0
    ys = y[0] + (y[1] - y[0]) * np.arange(3 * (y.size - 1) + 1) / 3.0
    out = np.empty((x.size - 1, y.size - 1, len(tables), 4, 4))
    ix = 3 * np.arange(x.size - 1)[:, None] + np.arange(4)
    iy = 3 * np.arange(y.size - 1)[:, None] + np.arange(4)
    for k, z in enumerate(tables):
        grid = RectBivariateSpline(x, y, z)(xs, ys)
        cells = grid[ix[:, None, :, None], iy[None, :, None, :]]
        out[:, :, k] = np.einsum("ak,ijkl,bl->ijab", inverse, cells, inverse)
    return out


def _schultz_factor(p1, v1, h1, p2, v2s, h2s) -> np.ndarray:
    """Schultz's factor f [-] from the suction and isentropic discharge states."""
    with np.errstate(divide="ignore", invalid="ignore"):
        ns = np.log(p2 / p1) / np.log(v1 / v2s)
        return (h2s - h1) / (ns / (ns - 1.0) * (p2 * v2s - p1 * v1))


def _schultz_head(factor, p1, v1, p2, v2) -> np.ndarray:
    """Schultz's polytropic head [J/kg] ``f n/(n-1) (p2 v2 - p1 v1)``."""
    with np.errstate(divide="ignore", invalid="ignore"):
        n = np.log(p2 / p1) / np.log(v1 / v2)
        return factor * n / (n - 1.0) * (p2 * v2 - p1 * v1)
