"""The station: today's case reduced, the least-power split, and its comparison.

- :mod:`~trainopt.station.reduced`: :class:`~trainopt.station.reduced.Station`, a case
  reduced at one set of conditions, reused for many demands;
- :mod:`~trainopt.station.split`: ``optimize`` and ``evaluate``;
- :mod:`~trainopt.station.header`: two groups joined by a shared interstage header;
- :mod:`~trainopt.station.baselines`: the load-sharing rules it is compared with;
- :mod:`~trainopt.station.result`: the per-unit table and station totals.

May import: :mod:`trainopt.case`, :mod:`trainopt.dispatch`, :mod:`trainopt.machines`,
:mod:`trainopt.physics`, :mod:`trainopt.errors`. Never studies or edges.
"""
