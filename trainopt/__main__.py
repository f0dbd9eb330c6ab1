"""``python -m trainopt``: the same as the ``trainopt`` command."""

from trainopt.cli.app import app

app(prog_name="trainopt")
