"""A station result as the JSON text that ``--json`` prints and the web API returns."""

from __future__ import annotations

import json

from trainopt.station.result import StationResult


def result_json(result: StationResult) -> str:
    """The JSON text of a result (``docs/results.md`` defines every key), newline-ended.

    One function for the command line (``trainopt optimize --json``, ``trainopt evaluate
    --json``) and the web API (``/api/optimize``, ``/api/evaluate``), so both print the
    same text for the same inputs.
    """
    return json.dumps(result.to_dict(), indent=2, default=str) + "\n"
