"""Study reports: one call runs a study and writes its HTML report and tables.

:func:`envelope_report` and :func:`audit_report` are what the ``trainopt envelope`` and
``trainopt audit`` commands call; :mod:`~trainopt.report.html` and
:mod:`~trainopt.report.tables` hold the parts for scripts that want them separately.
Files are written the way every command writes (:mod:`trainopt.report.output_folder`):
existing files are never replaced unless ``overwrite=True`` (``--force``), the check comes
before any work, and the files appear in the folder only once all are complete.
"""

from __future__ import annotations

from pathlib import Path

from trainopt.report.html import write_html
from trainopt.report.output_folder import OutputFolder
from trainopt.report.tables import audit_tables, table_paths, write_tables

__all__ = ["audit_report", "envelope_report"]

_AUDIT_TABLES = ("totals", "monthly", "monthly_by_unit", "by_unit", "flags", "skipped", "bins",
                 "hours", "unit_hours")
_ENVELOPE_TABLES = ("turndown", "running_sets", "recycle_free_ranges", "throughput_sweep",
                    "start_stop")


def envelope_report(case_file, out_dir, *, offline=(), named=(), sweep: str | None = None,
                    points: int = 25, excel: bool = False, overwrite: bool = False,
                    workers: int | None = None, scheduler=None, progress: bool = True):
    """Run the envelope study on a case file; write ``envelope.html`` and its tables.

    Parameters
    ----------
    case_file : str or Path
        Station case (YAML).
    out_dir : str or Path
        Output folder.
    offline, named, sweep, points, workers, scheduler, progress
        See :func:`trainopt.studies.envelope.envelope_study`.
    excel : bool
        Tables in one Excel workbook instead of CSV files.
    overwrite : bool
        Replace existing files.

    Returns
    -------
    (EnvelopeStudy, dict of str to Path)
    """
    from trainopt.case.loading import load_case
    from trainopt.studies.envelope import envelope_study

    names = _ENVELOPE_TABLES + (("condition_sweep",) if sweep else ())
    folder = _checked(out_dir, "envelope.html", names, excel, overwrite)
    case = load_case(case_file)
    study = envelope_study(case, offline=offline, named=named, sweep=sweep, points=points,
                           workers=workers, scheduler=scheduler, progress=progress)
    with folder.writing():
        staged = write_tables(study.tables(), folder.stage, excel=excel, overwrite=True)
        staged["html"] = write_html(folder.path("envelope.html"), case=case, envelope=study,
                                    overwrite=True)
    return study, _final(staged, folder)


def _checked(out_dir, html: str, names, excel: bool, overwrite: bool) -> OutputFolder:
    """The output folder, checked for the files a study writes before any work."""
    folder = OutputFolder(out_dir, overwrite=overwrite, option="--out")
    folder.check([html, *(p.name for p in table_paths(names, Path("."), excel).values())])
    return folder


def _final(staged: dict, folder: OutputFolder) -> dict:
    """Kind -> final path, from kind -> path in the (now removed) temporary folder."""
    return {kind: folder.target / Path(path).name for kind, path in staged.items()}


def audit_report(case_file, history_file, columns_file, out_dir, *, binning=None,
                 objective: str | None = None, sort: bool = False, excel: bool = False,
                 overwrite: bool = False, workers: int | None = None, scheduler=None,
                 progress: bool = True):
    """Audit a history file against a case; write ``audit.html`` and its tables.

    Parameters
    ----------
    case_file, history_file, columns_file : str or Path
        Station case (YAML), history (CSV or Parquet) and its column mapping (YAML).
    out_dir : str or Path
        Output folder.
    binning, objective, workers, scheduler, progress
        See :func:`trainopt.studies.audit.audit_history`.
    sort : bool
        Sort the rows by time instead of refusing a file whose times go backwards.
    excel, overwrite : bool
        As for :func:`envelope_report`.

    Returns
    -------
    (AuditResult, dict of str to Path)
    """
    from trainopt.case.loading import load_case
    from trainopt.studies.audit import audit_history
    from trainopt.studies.history_reader import read_history

    folder = _checked(out_dir, "audit.html", _AUDIT_TABLES, excel, overwrite)
    case = load_case(case_file)
    history = read_history(history_file, columns_file, case, sort=sort)
    result = audit_history(case, history, binning=binning, objective=objective,
                           workers=workers, scheduler=scheduler, progress=progress)
    tables = audit_tables(result)
    with folder.writing():
        staged = write_tables(tables, folder.stage, excel=excel, overwrite=True)
        staged["html"] = write_html(folder.path("audit.html"), case=case, audit=result,
                                    audit_tables=tables, overwrite=True)
    return result, _final(staged, folder)
