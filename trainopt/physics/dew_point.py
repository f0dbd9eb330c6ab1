"""The hydrocarbon dew point of a gas: CoolProp's traced phase envelope, refined by a flash.

The envelope is traced once per composition and kept on disk
(:mod:`trainopt.physics.envelope_cache`); dew temperatures found at a pressure are kept in a
:class:`~trainopt.physics.state_memo.DiskMemo`, so a rerun does not load CoolProp.
Hydrogen, helium, argon, oxygen, carbon monoxide and water are left out: they do not
condense at compressor conditions, and the tracer fails with them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from trainopt.physics.components import SUPERCRITICAL_TRACES, coolprop, coolprop_fluids, identity
from trainopt.physics.envelope_cache import cached_envelope
from trainopt.physics.state_memo import DiskMemo, coolprop_version, memo_for


@dataclass(frozen=True)
class PhaseEnvelope:
    """Dew and bubble curve of a mixture, from CoolProp's phase-envelope tracer.

    Attributes
    ----------
    temperature, pressure : numpy.ndarray
        Points along the envelope [K], [Pa].
    cricondentherm : float
        Highest temperature of the envelope [K].
    cricondenbar : float
        Highest pressure of the envelope [Pa].
    method : str
        How the envelope was found (whole composition, or without supercritical traces).
    """

    temperature: np.ndarray
    pressure: np.ndarray
    cricondentherm: float
    cricondenbar: float
    method: str

    def dew_temperature(self, pressure: float) -> float:
        """Highest envelope temperature at a pressure [K]; NaN above the cricondenbar."""
        p, t = self.pressure, self.temperature
        crossings = []
        for i in range(len(p) - 1):
            lo, hi = sorted((p[i], p[i + 1]))
            if lo <= pressure <= hi and hi > lo:
                w = (pressure - p[i]) / (p[i + 1] - p[i])
                crossings.append(t[i] + w * (t[i + 1] - t[i]))
        return max(crossings) if crossings else math.nan


def hydrocarbon_part(names, fractions):
    """The hydrocarbon part used for the dew-point check, renormalised."""
    kept = [(n, x) for n, x in zip(names, fractions, strict=True) if n not in SUPERCRITICAL_TRACES]
    total = sum(x for _, x in kept)
    return tuple(n for n, _ in kept), tuple(x / total for _, x in kept)


@lru_cache(maxsize=64)
def _dew_state(names: tuple[str, ...], fractions: tuple[float, ...]):
    state = coolprop().AbstractState("HEOS", coolprop_fluids(names))
    state.set_mole_fractions(list(fractions))
    return state


@lru_cache(maxsize=64)
def envelope(names: tuple[str, ...], fractions: tuple[float, ...]) -> PhaseEnvelope | None:
    """The traced envelope, from the disk cache when this composition was traced before."""
    if len(names) < 2:
        return None

    def trace():
        state = _dew_state(names, fractions)
        try:
            state.build_phase_envelope("")
            data = state.get_phase_envelope_data()
        except ValueError:
            return None
        return (list(data.T), list(data.p)) if len(data.T) >= 4 else None

    traced = cached_envelope(names, fractions, coolprop_version(), trace)
    if traced is None:
        return None
    t, p = np.asarray(traced[0], float), np.asarray(traced[1], float)
    return PhaseEnvelope(t, p, float(t.max()), float(p.max()), _DEW_METHOD)


_DEW_METHOD = ("hydrocarbon dew point: CoolProp HEOS (GERG-2008 parameters) on the composition "
               "without " + ", ".join(SUPERCRITICAL_TRACES) + ", renormalised")


@lru_cache(maxsize=64)
def _dew_memo(names: tuple[str, ...], fractions: tuple[float, ...]) -> DiskMemo:
    return memo_for("dew", identity("HEOS", names, fractions), 1, 2)


def dew_temperature(names: tuple[str, ...], fractions: tuple[float, ...], pressure: float
                     ) -> tuple[float, bool]:
    """Dew temperature [K] at a pressure and whether the check could be made.

    Answers are kept in a :class:`~trainopt.physics.state_memo.DiskMemo` per mixture.
    """
    if len(names) < 2:
        return math.nan, True
    memo = _dew_memo(names, fractions)
    known = memo.get((float(pressure),))
    if known is not None:
        return known[0], bool(known[1])
    t, checked = _flash_and_envelope(names, fractions, pressure)
    memo.put((float(pressure),), (t, float(checked)))
    return t, checked


def _flash_and_envelope(names: tuple[str, ...], fractions: tuple[float, ...], pressure: float
                         ) -> tuple[float, bool]:
    """Dew temperature [K] at a pressure from CoolProp, and whether the check could be made.

    The pressure-quality flash alone can land on the lower dew branch of the retrograde
    region (for the demo gas at 60 bar it gives -66 degC where the upper dew point is
    -31 degC, and a gas at -40 degC there is two-phase), or report a dew point above the
    cricondenbar. So the traced envelope, built once per composition, decides; the flash
    only refines it where it is higher than the envelope's linear interpolation.
    """
    t_flash = math.nan
    state = _dew_state(names, fractions)
    try:
        state.update(coolprop().PQ_INPUTS, pressure, 1.0)
        if 50.0 < state.T() < 600.0:
            t_flash = state.T()
    except ValueError:
        pass
    traced = envelope(names, fractions)
    if traced is None:
        return t_flash, not math.isnan(t_flash)
    if pressure > traced.cricondenbar:
        return math.nan, True
    t = float(np.fmax(t_flash, traced.dew_temperature(pressure)))
    return t, not math.isnan(t)
