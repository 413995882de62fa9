"""Write a report folder: ``report.html``, ``report.md``, ``report.json`` and ``figures/``.

Everything is rendered in memory first, so bad report data raise before any file is
touched. Existing report files are never replaced silently: without
``overwrite=True`` the call raises :class:`ReportExistsError` naming them.

Examples
--------
>>> import tempfile
>>> from pathlib import Path
>>> from mechfit.report.data import CandidateReport, RankingRow, ReportData, StudyRanges
>>> row = RankingRow("A", "full", 2, -10.0, 24.0, 25.0, verdict="best supported")
>>> data = ReportData("Invented example", StudyRanges({"A": (0.1, 0.1)}, n_runs=1),
...                   [CandidateReport("A", "full", row)], invented=True)
>>> folder = Path(tempfile.mkdtemp())
>>> paths = write_report(data, folder, dpi=30)
>>> sorted(p.name for p in (paths.html, paths.markdown, paths.json))
['report.html', 'report.json', 'report.md']
>>> try:
...     write_report(data, folder)
... except ReportExistsError as err:
...     print(err.paths)
('report.html', 'report.md', 'report.json')
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

from mechfit.report.content import build_content
from mechfit.report.data import ReportData
from mechfit.report.errors import ReportError, ReportExistsError
from mechfit.report.html import render_html_content
from mechfit.report.json_writer import render_json, report_summary
from mechfit.report.markdown import FIGURE_DIR, render_markdown_content

HTML_NAME = "report.html"
MARKDOWN_NAME = "report.md"
JSON_NAME = "report.json"
#: the files a report consists of, besides the figure folder
REPORT_FILES = (HTML_NAME, MARKDOWN_NAME, JSON_NAME)
FIGURE_SUFFIXES = (".png", ".svg")


@dataclass
class ReportPaths:
    """Where :func:`write_report` put each file."""

    folder: Path
    html: Path
    markdown: Path
    json: Path
    figures: list[Path] = field(default_factory=list)


def existing_report_files(folder: str | os.PathLike) -> tuple[str, ...]:
    """Names of report files already in ``folder`` (relative), in a fixed order."""
    folder = Path(folder)
    found = [name for name in REPORT_FILES if (folder / name).exists()]
    figures = folder / FIGURE_DIR
    if figures.is_dir():
        found += sorted(f"{FIGURE_DIR}/{p.name}" for p in figures.iterdir()
                        if p.suffix in FIGURE_SUFFIXES)
    return tuple(found)


def check_report_folder(out_dir: str | os.PathLike, *, overwrite: bool = False) -> None:
    """Refuse a report folder that is a file, or that holds a report unless ``overwrite``.

    :func:`write_report` calls it first; a caller that has slow work to do before writing
    (reading a results folder) calls it before that work.

    Raises
    ------
    ReportExistsError
        The folder holds report files and ``overwrite`` is false.
    ReportError
        ``out_dir`` is a file.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     check_report_folder(tmp)   # empty: nothing to refuse
    """
    folder = Path(out_dir)
    if folder.exists() and not folder.is_dir():
        raise ReportError(f"report folder {str(folder)!r} is a file; give a folder")
    found = existing_report_files(folder) if folder.is_dir() else ()
    if found and not overwrite:
        raise ReportExistsError(
            f"report folder {str(folder)!r} already holds a report ({', '.join(found[:4])}"
            f"{', ...' if len(found) > 4 else ''}); choose another folder or pass "
            "overwrite=True (--overwrite) to replace it", tuple(found))


def _write(path: Path, payload: bytes) -> None:
    temporary = path.with_name(path.name + ".partial")
    temporary.write_bytes(payload)
    os.replace(temporary, path)


def write_report(data: ReportData, out_dir: str | os.PathLike, *, overwrite: bool = False,
                 dpi: float = 110, workers: int = 1) -> ReportPaths:
    """Render ``data`` and write the HTML, Markdown and JSON reports into ``out_dir``.

    Parameters
    ----------
    data
        The report's content.
    out_dir
        Folder to write into (made if missing).
    overwrite
        Replace an earlier report in the folder (its old figure files are removed).
    dpi
        Resolution of the PNG figures.
    workers
        Processes that draw the candidates' figures (the report is the same either way).

    Raises
    ------
    ReportExistsError
        The folder holds report files and ``overwrite`` is false.
    ReportError
        ``out_dir`` is a file, or the data cannot be drawn.
    """
    folder = Path(out_dir)
    check_report_folder(folder, overwrite=overwrite)
    content = build_content(data, dpi=dpi, workers=workers)
    figures = content["figures"]
    html = render_html_content(content)
    markdown = render_markdown_content(content, FIGURE_DIR)
    summary = report_summary(data, cautions=content["cautions"],
                             figure_files=[f"{FIGURE_DIR}/{f.png_name}" for f in figures])
    text = render_json(summary)
    try:
        figure_folder = folder / FIGURE_DIR
        figure_folder.mkdir(parents=True, exist_ok=True)
        for old in figure_folder.iterdir():
            if old.suffix in FIGURE_SUFFIXES and old.is_file():
                old.unlink()
        written = []
        for f in figures:
            path = figure_folder / f.png_name
            _write(path, f.png)
            written.append(path)
        _write(folder / MARKDOWN_NAME, markdown.encode("utf-8"))
        _write(folder / JSON_NAME, text.encode("utf-8"))
        _write(folder / HTML_NAME, html.encode("utf-8"))
    except OSError as err:
        raise ReportError(f"cannot write the report into {str(folder)!r}: {err.strerror}") \
            from None
    return ReportPaths(folder, folder / HTML_NAME, folder / MARKDOWN_NAME, folder / JSON_NAME,
                       written)
