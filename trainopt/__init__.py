"""trainopt: least-power load sharing and margins for centrifugal compressor stations.

Advisory only: it never replaces the anti-surge controller, the vendor's data or an
engineer's judgement.

The Python API the command line is built on:

- :func:`load_case` reads and validates a station case file;
- :func:`optimize` finds the least-power (or fuel, or cost) split of a demand;
- :func:`evaluate` reports a split the user gives;
- :func:`schedule` plans which units run over a forecast (start costs, run-time rules);
- :func:`calibrate` fits each unit's wear factors to its steady operating history.

The names are loaded on first use (:func:`__getattr__`), so ``import trainopt`` and the
command line start without CoolProp, Pyomo, matplotlib or pandas.
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from trainopt.case.loading import Case, load_case
    from trainopt.errors import InfeasibleError, InputError, PhysicsError, TrainoptError
    from trainopt.station.split import evaluate, optimize
    from trainopt.studies.calibration import calibrate
    from trainopt.studies.schedule import schedule

__all__ = [
    "Case",
    "InfeasibleError",
    "InputError",
    "PhysicsError",
    "TrainoptError",
    "calibrate",
    "evaluate",
    "load_case",
    "optimize",
    "schedule",
]
__version__ = "0.1.0"

_HOME = {
    "Case": "trainopt.case.loading",
    "load_case": "trainopt.case.loading",
    "InfeasibleError": "trainopt.errors",
    "InputError": "trainopt.errors",
    "PhysicsError": "trainopt.errors",
    "TrainoptError": "trainopt.errors",
    "evaluate": "trainopt.station.split",
    "optimize": "trainopt.station.split",
    "calibrate": "trainopt.studies.calibration",
    "schedule": "trainopt.studies.schedule",
}
"""Public name -> the module that defines it."""


def __getattr__(name: str):
    """Load a public name from its module on first use, then keep it here."""
    home = _HOME.get(name)
    if home is None:
        raise AttributeError(f"module 'trainopt' has no attribute '{name}'")
    value = getattr(import_module(home), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
