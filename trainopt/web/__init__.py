"""A local web page and JSON API for the shift engineer: what-if on today's station.

``trainopt serve CASE`` starts it (:mod:`trainopt.cli.serve`); :func:`create_app` builds
the application around one loaded case. The page takes today's conditions and unit
statuses and shows the recommended split, its margins, its saving against the usual
sharing rules, each running unit on its map, and a split being run now beside it. The API
returns the command line's JSON.

May import: station, studies, report, case, dispatch, machines, physics, errors (every
layer below the command line). Imported only by cli.
"""

from trainopt.web.app import create_app

__all__ = ["create_app"]
