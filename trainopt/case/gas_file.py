"""Reading a gas composition from a YAML file (a gas file or the ``gas`` key of a case)."""

from __future__ import annotations

from pathlib import Path

import yaml

from trainopt.errors import InputError
from trainopt.physics.gas import EquationOfState, Gas


def read_yaml(path: str | Path) -> dict:
    """Read a YAML mapping, with errors that name the file, line and column.

    Parameters
    ----------
    path : str or Path
        The file.

    Returns
    -------
    dict
        Its top-level mapping.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(str(path), "file not found", "check the path")
    try:
        data = yaml.safe_load(path.read_text(encoding="utf-8"))
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark
        where = f"{path}:{mark.line + 1}:{mark.column + 1}" if mark else str(path)
        raise InputError(where, f"not valid YAML ({exc.problem})") from None
    except (yaml.YAMLError, UnicodeDecodeError) as exc:
        raise InputError(str(path), f"not a YAML text file ({exc})") from None
    if not isinstance(data, dict):
        raise InputError(str(path), "expected a YAML mapping at the top level")
    return data


def load_gas(path: str | Path, equation_of_state: EquationOfState = EquationOfState.GERG2008
             ) -> Gas:
    """Read a gas from a YAML file holding ``composition`` or ``gas: {composition: ...}``.

    Parameters
    ----------
    path : str or Path
        A gas file or a case file.
    equation_of_state : EquationOfState, optional

    Returns
    -------
    Gas
    """
    data = read_yaml(path)
    if "gas" in data and isinstance(data["gas"], dict):
        data, prefix = data["gas"], f"{path}: gas.composition"
    else:
        prefix = f"{path}: composition"
    if "composition" not in data:
        raise InputError(str(path), "no 'composition' mapping found",
                         "give composition: {methane: 0.9, ethane: 0.06, ...}")
    return Gas.from_composition(data["composition"], equation_of_state, prefix)
