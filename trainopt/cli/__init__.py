"""The ``trainopt`` command: a thin layer over the Python API, one call per command.

- :mod:`~trainopt.cli.app`: the typer application, which registers each command group;
- :mod:`~trainopt.cli.station`: ``optimize`` and ``evaluate``;
- :mod:`~trainopt.cli.maps`: ``fit-map``; :mod:`~trainopt.cli.gas`: ``gas``;
- :mod:`~trainopt.cli.studies`: ``envelope`` and ``audit``;
- :mod:`~trainopt.cli.failure`: our errors as one line on stderr, exit status 2.

May import everything below it; nothing else in trainopt imports the CLI.
"""
