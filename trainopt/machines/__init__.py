"""Machines: compressor maps, drivers, and units, sections and trains built from them.

- :mod:`~trainopt.machines.maps`: map input, fitting, evaluation, margins (surge, surge
  control line, stonewall, speed);
- :mod:`~trainopt.machines.drivers`: motors, gas and steam turbines;
- :mod:`~trainopt.machines.train`: a unit = sections (map, limits, cooler) on a driver;
- :mod:`~trainopt.machines.section_operation`, :mod:`~trainopt.machines.train_operation`:
  how a section and a train of sections operate at a through-flow.

May import: :mod:`trainopt.physics` and :mod:`trainopt.errors`. Never the solver, a case
file, the station or the edges.
"""
