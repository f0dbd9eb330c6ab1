"""Reports and pictures: what the user reads, on screen and in files.

- :mod:`~trainopt.report.terminal`: the station result as a table on screen;
- :mod:`~trainopt.report.files`: result JSON, CSV and map pictures of ``optimize --out``;
- :mod:`~trainopt.report.study_reports`: the envelope and audit studies' HTML reports and
  tables (:mod:`~trainopt.report.html`, :mod:`~trainopt.report.tables`);
- :mod:`~trainopt.report.map_picture`: a map with its lines and operating points;
- :mod:`~trainopt.report.gas_properties`: the ``gas`` command's table;
- :mod:`~trainopt.report.schedule_report`, :mod:`~trainopt.report.schedule_picture`: the
  schedule's files, HTML report and picture.

May import every layer below the CLI (physics, machines, case, dispatch, station, studies);
never the CLI.
"""
