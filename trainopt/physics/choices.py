"""The physics layer's named choices, as plain enumerations with no heavy imports.

The command line builds its option types from these at start-up, so this module imports
nothing but :mod:`enum`: CoolProp, SciPy and pint load only when a command computes.
They stay importable from where they are used: :class:`HeadBasis` and
:class:`PolytropicMethod` from :mod:`trainopt.physics.compression`,
:class:`EquationOfState` from :mod:`trainopt.physics.gas`.
"""

from __future__ import annotations

from enum import Enum


class HeadBasis(Enum):
    """Thermodynamic basis on which a head and its efficiency are stated."""

    POLYTROPIC = "polytropic"
    ISENTROPIC = "isentropic"


class PolytropicMethod(Enum):
    """How the polytropic head of a real gas is computed."""

    SCHULTZ = "schultz"
    PATH = "path"


class EquationOfState(Enum):
    """Equation of state used for gas states."""

    GERG2008 = "HEOS"
    PENG_ROBINSON = "PR"
