"""Start-up: ``import trainopt`` and the command line load no heavy library until needed.

Each check runs in a fresh interpreter (``python -c``) and reads ``sys.modules`` there, so
what other tests imported does not count. The heavy libraries are those measured to cost
most of the former start-up (measured before the lazy start; regression values (own output)):
CoolProp, Pyomo, matplotlib and pandas.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

import trainopt

ROOT = Path(__file__).resolve().parents[2]
HEAVY = ("CoolProp", "pyomo", "matplotlib", "pandas")


def _loaded_after(code: str) -> list[str]:
    probe = (f"{code}\nimport json, sys\n"
             f"print(json.dumps([m for m in {HEAVY!r} if m in sys.modules]))")
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                         env=env, check=True, cwd=ROOT)
    return json.loads(out.stdout.strip().splitlines()[-1])


@pytest.mark.parametrize("code", [
    "import trainopt",
    "import trainopt\nfrom trainopt.cli.app import app",
    "from trainopt.cli.app import app\nimport typer\n"
    "app(['--help'], prog_name='trainopt', standalone_mode=False)",
])
def test_start_up_loads_no_heavy_library(code):
    assert _loaded_after(code) == []


def test_first_use_loads_the_name_and_keeps_the_public_list():
    # the names before the layout change, plus the schedule and calibration studies
    assert trainopt.__all__ == ["Case", "InfeasibleError", "InputError", "PhysicsError",
                                "TrainoptError", "calibrate", "evaluate", "load_case",
                                "optimize", "schedule"]
    from trainopt.station.split import optimize
    from trainopt.studies.calibration import calibrate
    from trainopt.studies.schedule import schedule

    assert trainopt.optimize is optimize
    assert trainopt.schedule is schedule
    assert trainopt.calibrate is calibrate
    assert set(trainopt.__all__) <= set(dir(trainopt))
    with pytest.raises(AttributeError, match="no attribute 'nothing'"):
        trainopt.nothing  # noqa: B018


def test_a_command_loads_what_it_needs():
    loaded = _loaded_after("from trainopt.cli.app import app\n"
                           "app(['gas', '--help'], prog_name='trainopt', standalone_mode=False)\n"
                           "import trainopt\ntrainopt.load_case")
    assert "pandas" in loaded
    # CoolProp waits for the first gas state no disk memo holds (tests/physics/test_state_memo.py)
    assert "CoolProp" not in loaded
