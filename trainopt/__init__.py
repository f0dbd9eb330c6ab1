"""trainopt: least-power load sharing and margins for centrifugal compressor stations.

Advisory only: it never replaces the anti-surge controller, the vendor's data or an
engineer's judgement.

The Python API the command line is built on:

- :func:`load_case` reads and validates a station case file;
- :func:`optimize` finds the least-power (or fuel, or cost) split of a demand;
- :func:`evaluate` reports a split the user gives.
"""

from trainopt.case.loading import Case, load_case
from trainopt.errors import InfeasibleError, InputError, PhysicsError, TrainoptError
from trainopt.station.split import evaluate, optimize

__all__ = [
    "Case",
    "InfeasibleError",
    "InputError",
    "PhysicsError",
    "TrainoptError",
    "evaluate",
    "load_case",
    "optimize",
]
__version__ = "0.1.0"
