"""Planning and energy studies built on the station optimiser.

- :mod:`~trainopt.studies.envelope`: turndown, unit-offline envelopes, throughput and
  condition sweeps;
- :mod:`~trainopt.studies.audit`: the recycle-loss and load-sharing audit of operating
  history read by :mod:`~trainopt.studies.history_reader`;
- :mod:`~trainopt.studies.parallel`: local processes or a Dask cluster for either;
- :mod:`~trainopt.studies.schedule`: the commitment schedule over a forecast
  (:mod:`~trainopt.studies.schedule_forecast`, ``schedule_periods``, ``schedule_result``).
- :mod:`~trainopt.studies.calibration`: degradation factors of each unit fitted to its
  steady history (:mod:`~trainopt.studies.field_points`,
  :mod:`~trainopt.studies.steady_windows`, :mod:`~trainopt.studies.calibration_fit`) and
  the cost of wear (:mod:`~trainopt.studies.wear_cost`).

Studies never build their own physics: they call :class:`trainopt.station.reduced.Station`,
:func:`trainopt.station.reduced.evaluate_split`, the dispatch model and the true unit model.

May import: :mod:`trainopt.station` and everything below it (case, dispatch, machines,
physics, errors). Never the reports or the CLI.
"""
