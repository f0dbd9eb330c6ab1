"""Dispatch: from units at today's duty to the least-power split, with the MILP.

- :mod:`~trainopt.dispatch.reduction`: a single-section unit's least-power curve against
  through-flow and its breakpoints (the surge control line, stonewall, speed, power and
  temperature limits are applied here);
- :mod:`~trainopt.dispatch.unit_operation`: a single-section unit at many through-flows on
  the true model (speed solved for all at once; the limit that explains an off-map point;
  the optional discharge throttle);
- :mod:`~trainopt.dispatch.series_reduction`: the same for trains of several sections;
- :mod:`~trainopt.dispatch.unit_curve`: a curve in the model's terms;
- :mod:`~trainopt.dispatch.piecewise`: piecewise-linear forms;
- :mod:`~trainopt.dispatch.model`: the Pyomo model (run/stop, flows, recycle, demand);
- :mod:`~trainopt.dispatch.solve`: the HiGHS solve; :mod:`~trainopt.dispatch.solution` its
  result;
- :mod:`~trainopt.dispatch.commitment_model`, :mod:`~trainopt.dispatch.commitment_solve`:
  the multi-period commitment model (start-stop rules, trip reserve) and its solve;
  :mod:`~trainopt.dispatch.commitment_dp` its exact reference for small cases;
  :mod:`~trainopt.dispatch.trip_reserve`: one moment's dispatch with a trip reserve.

May import: :mod:`trainopt.machines`, :mod:`trainopt.physics`, :mod:`trainopt.errors`. Never
a case file, the station, studies or edges; physics below never imports this.
"""
