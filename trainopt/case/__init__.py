"""The case: a station described in a YAML file, validated once and turned into SI.

- :mod:`~trainopt.case.schema`: every key with its type, unit, default and description;
- :mod:`~trainopt.case.loading`: :func:`~trainopt.case.loading.load_case` and the SI
  :class:`~trainopt.case.loading.Case`;
- :mod:`~trainopt.case.gas_file`: gas composition files.

May import: :mod:`trainopt.machines`, :mod:`trainopt.physics`, :mod:`trainopt.errors`. Never
the solver, the station, studies or edges.
"""
