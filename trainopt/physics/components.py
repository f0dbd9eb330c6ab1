"""The gas components trainopt knows, their CoolProp names, and the one door to CoolProp.

CoolProp is imported by :func:`coolprop` only, at the first question no disk memo can
answer (:mod:`trainopt.physics.state_memo`): loading it parses CoolProp's whole fluid
library, 1.5-1.7 s on the project's two-core machine (regression value (own output)).
"""

from __future__ import annotations

from functools import lru_cache

_COMPONENTS = {
    "methane": ("Methane", "C1 CH4"),
    "ethane": ("Ethane", "C2 C2H6"),
    "propane": ("Propane", "C3 C3H8"),
    "isobutane": ("IsoButane", "iC4 i-butane i-C4"),
    "n-butane": ("n-Butane", "nC4 butane n-C4"),
    "isopentane": ("Isopentane", "iC5 i-pentane i-C5"),
    "n-pentane": ("n-Pentane", "nC5 pentane n-C5"),
    "n-hexane": ("n-Hexane", "C6 nC6 hexane n-C6"),
    "n-heptane": ("n-Heptane", "C7 nC7 heptane n-C7"),
    "n-octane": ("n-Octane", "C8 nC8 octane n-C8"),
    "n-nonane": ("n-Nonane", "C9 nC9 nonane n-C9"),
    "n-decane": ("n-Decane", "C10 nC10 decane n-C10"),
    "nitrogen": ("Nitrogen", "N2"),
    "carbon dioxide": ("CarbonDioxide", "CO2"),
    "hydrogen sulfide": ("HydrogenSulfide", "H2S"),
    "hydrogen": ("Hydrogen", "H2"),
    "oxygen": ("Oxygen", "O2"),
    "carbon monoxide": ("CarbonMonoxide", "CO"),
    "water": ("Water", "H2O"),
    "helium": ("Helium", "He"),
    "argon": ("Argon", "Ar"),
}
COOLPROP_NAME = {name: cp_name for name, (cp_name, _) in _COMPONENTS.items()}
"""trainopt's component name to CoolProp's fluid name."""

COMPONENT_NAMES = tuple(_COMPONENTS)
"""Component names trainopt accepts (aliases such as ``C1``, ``CO2``, ``iC4`` also work)."""

ALIAS = {name: name for name in _COMPONENTS}
for _name, (_cp, _aliases) in _COMPONENTS.items():
    ALIAS[_cp.lower()] = _name
    for _alias in _aliases.split():
        ALIAS[_alias.lower()] = _name

SUPERCRITICAL_TRACES = ("hydrogen", "helium", "argon", "oxygen", "carbon monoxide", "water")
"""Components that do not condense at compressor conditions (left out of the dew point)."""


@lru_cache(maxsize=1)
def coolprop():
    """The ``CoolProp.CoolProp`` module, imported at the first call."""
    import CoolProp.CoolProp as CP

    return CP


def coolprop_fluids(names) -> str:
    """CoolProp's ``&``-joined fluid string for component names."""
    return "&".join(COOLPROP_NAME[n] for n in names)


def identity(backend: str, names, fractions) -> dict:
    """JSON-ready description of a mixture (fractions to 17 digits), for cache keys."""
    return {"backend": backend, "names": list(names),
            "fractions": [f"{x:.17g}" for x in fractions]}


@lru_cache(maxsize=64)
def abstract_state(backend: str, names: tuple[str, ...], fractions: tuple[float, ...]):
    """A CoolProp AbstractState of a mixture, one per composition and process."""
    state = coolprop().AbstractState(backend, coolprop_fluids(names))
    if len(names) > 1:
        state.set_mole_fractions(list(fractions))
    return state
