"""The report: figures, tables and the HTML, Markdown and JSON writers.

Fill a :class:`ReportData` with what the ranking and the fits produced and call
:func:`write_report`; see ``docs/report.md`` for every section and how to read it.
"""

from mechfit.report.data import (
    CandidateReport,
    EnergyProfile,
    EnergyProfileStep,
    ObservableSeries,
    ParameterRow,
    RankingRow,
    RateLaw,
    ReportData,
    ResidualDiagnostic,
    RunFit,
    StudyRanges,
    TemperatureDependence,
)
from mechfit.report.errors import ReportError, ReportExistsError
from mechfit.report.posterior_summary import correlation_notes, parameter_rows
from mechfit.report.writer import (
    ReportPaths,
    check_report_folder,
    existing_report_files,
    write_report,
)

__all__ = [
    "CandidateReport",
    "EnergyProfile",
    "EnergyProfileStep",
    "ObservableSeries",
    "ParameterRow",
    "RankingRow",
    "RateLaw",
    "ReportData",
    "ReportError",
    "ReportExistsError",
    "ReportPaths",
    "ResidualDiagnostic",
    "RunFit",
    "StudyRanges",
    "TemperatureDependence",
    "correlation_notes",
    "check_report_folder",
    "existing_report_files",
    "parameter_rows",
    "write_report",
]
