"""Natural-gas and process-gas mixtures: real-gas states through CoolProp.

A :class:`Gas` is built once per composition. It checks the composition, finds the
mixture's phase envelope once (the dew-point check), and then evaluates states with the
gas phase imposed, which is about 700 times faster than letting CoolProp find the phase
on every call (0.25 ms against 184 ms a state on an 8-component gas, measured on the
project's reference machine). Every state CoolProp gives is kept on disk
(:mod:`trainopt.physics.state_memo`): a later run asking for the same state does not load
CoolProp at all.

Two equations of state are offered (:class:`EquationOfState`): CoolProp's Helmholtz
mixture model with the GERG-2008 mixing parameters (the default and the reference), and
the Peng-Robinson cubic equation (about 100 times faster, with Z a few tenths of a per
cent to 2 % off at pipeline states; see ``docs/gas.md`` for the measured deviation).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from trainopt.errors import InputError, PhysicsError, TwoPhaseError
from trainopt.physics import dew_point
from trainopt.physics.choices import EquationOfState
from trainopt.physics.components import (
    ALIAS,
    COMPONENT_NAMES,
    COOLPROP_NAME,
    abstract_state,
    coolprop,
    identity,
)
from trainopt.physics.dew_point import PhaseEnvelope, hydrocarbon_part
from trainopt.physics.state_memo import memo_for
from trainopt.physics.units import REFERENCE_CONDITIONS, Flow, FlowBasis, ReferenceConditions

GAS_CONSTANT = 8.314462618
"""Molar gas constant [J/(mol K)] (CODATA 2018, exact)."""

DEW_POINT_MARGIN = 3.0
"""Least distance [K] a state must keep above the mixture's dew temperature."""

@dataclass(frozen=True)
class GasState:
    """Properties of a gas at one pressure and temperature (all SI, mass basis).

    Attributes
    ----------
    pressure : float
        Absolute pressure [Pa].
    temperature : float
        Temperature [K].
    density : float
        Mass density [kg/m³].
    compressibility : float
        Compressibility factor Z = p M / (rho R T) [-].
    enthalpy, entropy : float
        Specific enthalpy [J/kg] and entropy [J/(kg K)] on CoolProp's reference state.
    cp, cv : float
        Isobaric and isochoric specific heat capacity [J/(kg K)].
    speed_of_sound : float
        [m/s].
    isentropic_exponent : float
        Real-gas isentropic exponent kappa = rho w² / p [-] (ISO 20765-2 definition).
    molar_mass : float
        [kg/mol].
    """

    pressure: float
    temperature: float
    density: float
    compressibility: float
    enthalpy: float
    entropy: float
    cp: float
    cv: float
    speed_of_sound: float
    isentropic_exponent: float
    molar_mass: float


def _normalise(composition: dict, field_name: str) -> tuple[tuple[str, float], ...]:
    if not isinstance(composition, dict) or not composition:
        raise InputError(field_name, "expected a mapping of component to mole fraction",
                         "e.g. {methane: 0.9, ethane: 0.06, propane: 0.04}")
    fractions: dict[str, float] = {}
    for key, value in composition.items():
        name = ALIAS.get(str(key).strip().lower())
        if name is None:
            raise InputError(f"{field_name}.{key}", f"unknown component '{key}'",
                             f"use one of {', '.join(COMPONENT_NAMES)}")
        try:
            x = float(str(value).rstrip("%")) / (100.0 if str(value).endswith("%") else 1.0)
        except ValueError:
            raise InputError(f"{field_name}.{key}", f"'{value}' is not a mole fraction",
                             "give a number between 0 and 1, or a percentage such as '4.5 %'"
                             ) from None
        if not 0.0 <= x <= 1.0:
            raise InputError(f"{field_name}.{key}", f"mole fraction {x:g} is outside 0 to 1")
        fractions[name] = fractions.get(name, 0.0) + x
    total = sum(fractions.values())
    if abs(total - 1.0) > 0.02:
        raise InputError(field_name, f"mole fractions sum to {total:.4f}, more than 2 % off 1",
                         "check the analysis; trainopt normalises only small rounding errors")
    if abs(total - 1.0) > 0.001:
        warnings.warn(f"{field_name}: mole fractions sum to {total:.4f}; normalised to 1",
                      CompositionWarning, stacklevel=3)
    return tuple(sorted((k, v / total) for k, v in fractions.items() if v > 0.0))


class CompositionWarning(UserWarning):
    """The mole fractions did not sum to one and were normalised."""


class DewPointWarning(UserWarning):
    """The dew point of a gas could not be found; the state was taken as gas."""


class _Engine:
    """CoolProp's state for one gas, made at the first question its memo cannot answer."""

    def __init__(self, backend: str, names: tuple[str, ...], fractions: tuple[float, ...]):
        self.args = (backend, names, fractions)
        self.memo = memo_for("states", identity(backend, names, fractions), 2, 9)
        self._state = None

    def state(self):
        """The gas-phase AbstractState (CoolProp is imported here)."""
        if self._state is None:
            state = abstract_state(*self.args)
            state.specify_phase(coolprop().iphase_gas)
            self._state = state
        return self._state


@dataclass(frozen=True)
class Gas:
    """A gas mixture of fixed composition.

    Build it with :meth:`from_composition`; evaluate states with :meth:`state` (one)
    or :meth:`properties` (arrays).

    Attributes
    ----------
    components : tuple of (str, float)
        Component names and normalised mole fractions [-].
    equation_of_state : EquationOfState
        GERG-2008 parameters in CoolProp's Helmholtz mixture model, or Peng-Robinson.
    """

    components: tuple[tuple[str, float], ...]
    equation_of_state: EquationOfState = EquationOfState.GERG2008
    _engine: _Engine | None = field(default=None, repr=False, compare=False)

    @classmethod
    def from_composition(
        cls,
        composition: dict,
        equation_of_state: EquationOfState = EquationOfState.GERG2008,
        field_name: str = "gas.composition",
    ) -> Gas:
        """Build a gas from mole fractions.

        Parameters
        ----------
        composition : dict
            Component name (or alias such as ``C1``, ``CO2``) to mole fraction [-] or a
            percentage string (``"4.5 %"``). Normalised with a
            :class:`CompositionWarning` when the sum is off by more than 0.1 %;
            rejected beyond 2 %.
        equation_of_state : EquationOfState, optional
            Model for the states; GERG-2008 parameters by default.
        field_name : str, optional
            Where the composition came from, for error messages.

        Returns
        -------
        Gas
        """
        components = _normalise(composition, field_name)
        names = tuple(n for n, _ in components)
        fractions = tuple(x for _, x in components)
        engine = _Engine(equation_of_state.value, names, fractions)
        if not engine.memo.on_disk:  # a memo on disk means CoolProp built this gas before
            try:
                state = engine.state()
            except ValueError as exc:
                raise InputError(field_name, f"CoolProp cannot build this mixture ({exc})",
                                 "remove the components it names") from None
            engine.memo.set_fact("molar_mass", float(state.molar_mass()))
        return cls(components, equation_of_state, engine)

    @property
    def molar_mass(self) -> float:
        """Molar mass of the mixture [kg/mol]."""
        memo = self._engine.memo
        known = memo.fact("molar_mass")
        if known is None:
            known = float(self._engine.state().molar_mass())
            memo.set_fact("molar_mass", known)
        return known

    @property
    def envelope(self) -> PhaseEnvelope | None:
        """Phase envelope of the hydrocarbon part (slow the first time: 0.1-12 s)."""
        return dew_point.envelope(*hydrocarbon_part(*zip(*self.components, strict=True)))

    def dew_temperature(self, pressure: float) -> float:
        """Hydrocarbon dew temperature at a pressure [K]; NaN above the cricondenbar.

        Parameters
        ----------
        pressure : float
            Absolute pressure [Pa].

        Notes
        -----
        The upper dew branch of the traced phase envelope (CoolProp HEOS, GERG-2008
        parameters), refined by a pressure-quality flash at vapour quality 1 where that
        flash finds a higher temperature than the envelope's linear interpolation.
        Hydrogen, helium, argon, oxygen, carbon monoxide and water are left out: they do
        not condense at compressor conditions, and the tracer fails with them. The water
        dew point and hydrate formation are not checked.
        """
        t, _ = dew_point.dew_temperature(*hydrocarbon_part(*zip(*self.components, strict=True)),
                                round(pressure, -2))
        return t

    def check_gas_phase(self, pressure: float, temperature: float, where: str = "state") -> None:
        """Raise :class:`TwoPhaseError` if a state is inside or within 3 K of the dew curve.

        Parameters
        ----------
        pressure : float
            Absolute pressure [Pa].
        temperature : float
            Temperature [K].
        where : str, optional
            Name of the state for the message.
        """
        if len(self.components) == 1:
            name = self.components[0][0]
            t_crit = coolprop().PropsSI("Tcrit", COOLPROP_NAME[name])
            if temperature > t_crit:
                return
            t_sat = coolprop().PropsSI("T", "P", pressure, "Q", 1, COOLPROP_NAME[name])
            if temperature < t_sat + DEW_POINT_MARGIN:
                raise TwoPhaseError(f"{where}: {temperature - 273.15:.1f} degC is at or below the "
                                    f"saturation temperature {t_sat - 273.15:.1f} degC at "
                                    f"{pressure / 1e3:.0f} kPa")
            return
        names, fractions = hydrocarbon_part(*zip(*self.components, strict=True))
        t_dew, checked = dew_point.dew_temperature(names, fractions, round(pressure, -2))
        if not checked:
            warnings.warn(f"{where}: the dew point of this gas could not be found at "
                          f"{pressure / 1e3:.0f} kPa; the state is taken as gas",
                          DewPointWarning, stacklevel=2)
        if math.isnan(t_dew) or temperature >= t_dew + DEW_POINT_MARGIN:
            return
        raise TwoPhaseError(
            f"{where}: {temperature - 273.15:.1f} degC at {pressure / 1e3:.0f} kPa is inside or "
            f"within {DEW_POINT_MARGIN:g} K of the two-phase region; the hydrocarbon dew point at "
            f"this pressure is {t_dew - 273.15:.1f} degC; heat the gas or check the analysis"
        )

    def state(self, pressure: float, temperature: float) -> GasState:
        """Evaluate the gas at a pressure and temperature, gas phase imposed.

        Parameters
        ----------
        pressure : float
            Absolute pressure [Pa], > 0.
        temperature : float
            Temperature [K], > 0.

        Returns
        -------
        GasState

        Notes
        -----
        Call :meth:`check_gas_phase` once for states a user gives; states reached by
        compression (hotter at higher pressure) stay in the gas phase for natural gas.
        A state asked for before, in this process or an earlier one, comes from the gas's
        :class:`~trainopt.physics.state_memo.DiskMemo` (CoolProp's own numbers).
        """
        if not (pressure > 0.0 and temperature > 0.0):
            raise PhysicsError(f"state needs positive pressure and temperature, got "
                               f"{pressure:g} Pa and {temperature:g} K")
        key = (float(pressure), float(temperature))
        known = self._engine.memo.get(key)
        if known is not None:
            return GasState(pressure, temperature, *known)
        s = self._engine.state()
        try:
            s.update(coolprop().PT_INPUTS, pressure, temperature)
        except ValueError as exc:
            raise PhysicsError(f"CoolProp could not evaluate {pressure / 1e3:.1f} kPa, "
                               f"{temperature - 273.15:.1f} degC: {exc}") from None
        rho, w = s.rhomass(), s.speed_sound()
        values = (rho, s.compressibility_factor(), s.hmass(), s.smass(), s.cpmass(),
                  s.cvmass(), w, rho * w * w / pressure, s.molar_mass())
        self._engine.memo.put(key, values)
        return GasState(pressure, temperature, *values)

    def properties(self, pressure, temperature) -> dict[str, np.ndarray]:
        """Evaluate many states; arguments broadcast like numpy arrays.

        Parameters
        ----------
        pressure : array_like
            Absolute pressure [Pa].
        temperature : array_like
            Temperature [K].

        Returns
        -------
        dict of numpy.ndarray
            The fields of :class:`GasState`, each shaped like the broadcast inputs.
        """
        p, t = np.broadcast_arrays(np.asarray(pressure, float), np.asarray(temperature, float))
        names = GasState.__dataclass_fields__
        out = {name: np.empty(p.shape) for name in names}
        for index in np.ndindex(p.shape):
            st = self.state(float(p[index]), float(t[index]))
            for name in names:
                out[name][index] = getattr(st, name)
        return out

    def temperature_from_enthalpy(self, pressure: float, enthalpy: float, guess: float) -> float:
        """Temperature [K] at which the gas has a specific enthalpy [J/kg] at a pressure [Pa].

        Newton iteration on temperature with (p, T) updates and dh/dT = cp; this avoids
        CoolProp's slower pressure-enthalpy flash. Converges to 1e-9 K in 2-4 steps.
        """
        t = guess
        for _ in range(50):
            st = self.state(pressure, t)
            step = (enthalpy - st.enthalpy) / st.cp
            t += step
            if abs(step) < 1e-9:
                return t
        raise PhysicsError(f"enthalpy {enthalpy:g} J/kg not reached at {pressure:g} Pa")

    def temperature_from_entropy(self, pressure: float, entropy: float, guess: float) -> float:
        """Temperature [K] at which the gas has a specific entropy [J/(kg K)] at a pressure [Pa].

        Newton iteration on temperature with (p, T) updates and ds/dT = cp / T.
        """
        t = guess
        for _ in range(50):
            st = self.state(pressure, t)
            step = (entropy - st.entropy) * t / st.cp
            t += step
            if abs(step) < 1e-9:
                return t
        raise PhysicsError(f"entropy {entropy:g} J/(kg K) not reached at {pressure:g} Pa")

    def standard_density(self, reference: ReferenceConditions | str = "iso") -> float:
        """Real-gas density at reference conditions [kg/m³], gas phase imposed.

        Parameters
        ----------
        reference : ReferenceConditions or str
            Reference conditions or a key of :data:`trainopt.physics.units.REFERENCE_CONDITIONS`.

        Notes
        -----
        A standard cubic metre is the amount of gas that fills one cubic metre at the
        reference conditions as a real gas (ISO 13443:1996, ISO 6976:2016 clause 5).
        """
        ref = REFERENCE_CONDITIONS[reference] if isinstance(reference, str) else reference
        return self.state(ref.pressure, ref.temperature).density

    def mass_flow(self, flow: Flow, inlet: GasState | None = None) -> float:
        """Convert a flow in any basis to mass flow [kg/s].

        Parameters
        ----------
        flow : Flow
            Mass, actual-volume or standard-volume flow (see
            :func:`trainopt.physics.units.parse_flow`).
        inlet : GasState, optional
            State at which an actual volume flow is measured; required for that basis.
        """
        if flow.basis is FlowBasis.MASS:
            return flow.value
        if flow.basis is FlowBasis.STANDARD_VOLUME:
            return flow.value * self.standard_density(flow.reference)
        if inlet is None:
            raise InputError("flow", "an actual volume flow needs the inlet state",
                             "give a mass or standard volume flow instead")
        return flow.value * inlet.density
