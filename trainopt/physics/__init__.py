"""Physics: units, real-gas states and compression thermodynamics, SI inside.

- :mod:`~trainopt.physics.units`: pint at the edge; reference conditions of standard flows;
- :mod:`~trainopt.physics.components`: component names, the one door to CoolProp;
- :mod:`~trainopt.physics.gas`: CoolProp mixture states, dew-point check;
- :mod:`~trainopt.physics.dew_point`: the traced phase envelope and dew temperature;
- :mod:`~trainopt.physics.state_memo`, :mod:`~trainopt.physics.envelope_cache`,
  :mod:`~trainopt.physics.disk_cache`: CoolProp's answers kept in the user's cache folder;
- :mod:`~trainopt.physics.gas_table`: a tabulated gas for fast repeated states;
- :mod:`~trainopt.physics.compression`: polytropic and isentropic head, discharge
  temperature (Schultz and path methods);
- :mod:`~trainopt.physics.duty`: a duty between two header pressures (required head against
  efficiency).

May import: :mod:`trainopt.errors` and third-party numerics only. Never the solver, files of
a case, or any other trainopt layer.
"""
