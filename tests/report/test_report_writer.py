"""write_report end to end on invented report data: files, sections, self-containment."""

import base64
import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from mechfit.report import (
    CandidateReport,
    RankingRow,
    ReportData,
    ReportError,
    ReportExistsError,
    StudyRanges,
    write_report,
)
from mechfit.report.content import SECTIONS
from mechfit.report.markdown import markdown_anchor


class _Resources(HTMLParser):
    """Every URL-bearing attribute and every tag name of a page."""

    def __init__(self):
        super().__init__()
        self.urls, self.tags = [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        for name, value in attrs:
            if name in ("src", "href", "srcset", "data", "poster", "action", "xlink:href"):
                self.urls.append((tag, name, value or ""))


def _minimal(title="Invented minimal report"):
    row = RankingRow("A", "full", 1, -3.0, 8.0, 8.5, verdict="best supported")
    return ReportData(title, StudyRanges({"A": (0.1, 0.2)}, n_runs=2),
                      [CandidateReport("A", "full", row)], invented=True)


def test_writes_html_markdown_json_and_figures(written_report):
    for path in (written_report.html, written_report.markdown, written_report.json):
        assert path.is_file() and path.stat().st_size > 0
    names = {p.name for p in written_report.figures}
    assert {"model-weights.png", "fit-direct-full.png", "residuals-via-i-steady-state.png",
            "pairs-direct-full.png", "arrhenius-direct-full.png", "network-via-i.png",
            "energy-via-i-steady-state.png", "rate-law-direct-full-rate.png"} <= names
    assert all(p.read_bytes().startswith(b"\x89PNG") for p in written_report.figures)


def test_html_has_every_section_in_order_and_the_content(written_report, invented_report):
    html = written_report.html.read_text(encoding="utf-8")
    positions = [html.index(f'<h2>{heading}</h2>') for _, heading in SECTIONS]
    assert positions == sorted(positions)
    assert "Invented data." in html
    assert "<strong>best supported:</strong> direct (full)" in html
    assert "<strong>fails to describe the data:</strong> via I (steady state)" in html
    assert "Structured residuals in: r1 (P), r2 (P), r3 (P)." in html
    assert "not identifiable" in html and "95% HDI" in html
    assert "steady state of I holds" in html
    assert "could not be typeset" in html  # the malformed formula is reported, not dropped
    assert r"\frac{a}{" in html
    ranges = invented_report.ranges
    assert "[A]0 from 0.05 to 0.1 mol/L" in html and "298.15 K to 318.15 K" in html
    assert "to plant scale, is not supported by this analysis" in html
    assert "under local codes and licensed process-safety practice" in html
    assert ranges.n_runs == 3 and "(3 runs)" in html


def test_html_is_self_contained(written_report):
    html = written_report.html.read_text(encoding="utf-8")
    assert "http://" not in html and "https://" not in html
    assert not re.search(r"<script\b", html, re.I)
    assert not re.search(r"<link\b", html, re.I)
    assert not re.search(r"@import|@font-face|url\(", html, re.I)
    parser = _Resources()
    parser.feed(html)
    assert parser.urls, "the page should carry inlined figures"
    for tag, name, value in parser.urls:
        assert value.startswith(("data:image/png;base64,", "data:image/svg+xml;base64,", "#")), \
            f"<{tag} {name}={value[:40]!r}> points outside the page"
    for _tag, _name, value in parser.urls:
        if value.startswith("data:image/svg+xml;base64,"):
            svg = base64.b64decode(value.split(",", 1)[1]).decode("utf-8")
            assert "<image" not in svg and "<script" not in svg and "@import" not in svg
            hrefs = re.findall(r'href="([^"]*)"', svg)
            assert all(h.startswith("#") for h in hrefs)
    anchors = {v[1:] for t, n, v in parser.urls if v.startswith("#")}
    ids = set(re.findall(r'id="([^"]+)"', html))
    assert anchors <= ids


def test_markdown_links_figures_relatively_and_anchors_match(written_report):
    text = written_report.markdown.read_text(encoding="utf-8")
    links = re.findall(r"!\[[^\]]*\]\(([^)]+)\)", text)
    assert links and all(not link.startswith(("/", "http")) for link in links)
    for link in links:
        assert (written_report.folder / link).is_file(), link
    for _, heading in SECTIONS:
        assert f"\n## {heading}\n" in text
        assert f"(#{markdown_anchor(heading)})" in text
    assert "| rank | mechanism | variant |" in text
    assert "> **Invented data.**" in text
    assert "plant scale" in text


def test_json_is_strict_and_complete(written_report, invented_report):
    text = written_report.json.read_text(encoding="utf-8")
    summary = json.loads(text, parse_constant=lambda c: pytest.fail(f"non-JSON constant {c}"))
    assert summary["invented"] is True and summary["schema_version"] == 1
    assert [c["name"] for c in summary["candidates"]] == ["direct", "via I"]
    first = summary["candidates"][0]
    for key in ("name", "variant", "n_parameters", "log_likelihood_max", "aicc", "bic",
                "elpd_loo", "elpd_loo_se", "weight", "verdict"):
        assert key in first
    assert first["weight"] == 0.93
    second = summary["candidates"][1]
    assert second["parameters"][1]["median"] is None
    assert second["energy_levels"][3]["energy"] is None
    assert summary["ranges"]["temperatures"] == [298.15, 318.15]
    assert any("plant scale" in c for c in summary["cautions"])
    assert set(summary["figures"]) == {f"figures/{p.name}" for p in written_report.figures}
    assert summary["cautions"][-1].startswith("The data in this report are invented")
    assert len(invented_report.candidates) == len(summary["candidates"])


def test_refuses_to_overwrite_unless_asked(tmp_path):
    first = write_report(_minimal("first"), tmp_path, dpi=30)
    before = first.html.read_bytes()
    with pytest.raises(ReportExistsError, match="already holds a report") as caught:
        write_report(_minimal("second"), tmp_path, dpi=30)
    assert caught.value.paths[:3] == ("report.html", "report.md", "report.json")
    assert caught.value.exit_code == 2
    assert first.html.read_bytes() == before
    stale = tmp_path / "figures" / "old-figure.png"
    stale.write_bytes(b"\x89PNG stale")
    again = write_report(_minimal("second"), tmp_path, dpi=30, overwrite=True)
    assert "<h1>second</h1>" in again.html.read_text(encoding="utf-8")
    assert not stale.exists()


def test_a_figure_file_alone_also_blocks(tmp_path):
    (tmp_path / "figures").mkdir()
    (tmp_path / "figures" / "fit.png").write_bytes(b"x")
    (tmp_path / "notes.txt").write_text("keep me")
    with pytest.raises(ReportExistsError):
        write_report(_minimal(), tmp_path, dpi=30)
    (tmp_path / "figures" / "fit.png").unlink()
    write_report(_minimal(), tmp_path, dpi=30)
    assert (tmp_path / "notes.txt").read_text() == "keep me"


def test_bad_folder_and_bad_data_raise_before_writing(tmp_path):
    target = tmp_path / "a-file"
    target.write_text("")
    with pytest.raises(ReportError, match="is a file"):
        write_report(_minimal(), target)
    with pytest.raises(ReportError, match="candidates is empty"):
        ReportData("x", StudyRanges({}), [])
    row = RankingRow("A", "full", 1, -3.0, 8.0, 8.5)
    with pytest.raises(ReportError, match="appear twice: A \\(full\\)"):
        ReportData("x", StudyRanges({}), [CandidateReport("A", "full", row)] * 2)
    data = _minimal()
    data.weights = {"Akaike": {"A (full)": 3.0}}
    folder = tmp_path / "new"
    with pytest.raises(ReportError, match="weights lie between 0 and 1"):
        write_report(data, folder)
    assert not folder.exists() or not any(Path(folder).iterdir())


def test_minimal_report_says_what_is_missing(tmp_path):
    data = _minimal()
    paths = write_report(data, tmp_path, dpi=30)
    html = paths.html.read_text(encoding="utf-8")
    assert "No parameter estimates were given for this candidate." in html
    assert "The study does not record the run temperatures" in html
    assert "All runs were at one temperature" not in html
    assert "Next experiments" not in html  # optional section absent without suggestions
    assert "<h2>Cautions</h2>" in html and "temperature not recorded" in html


def test_user_text_is_escaped_in_html_and_markdown(tmp_path):
    import numpy as np

    from mechfit.report import ObservableSeries, RunFit

    row = RankingRow("<b>A</b> & B", "full", 1, -3.0, 8.0, 8.5, verdict="best | supported")
    t = np.linspace(0.0, 5.0, 6)
    candidate = CandidateReport("<b>A</b> & B", "full", row, runs=[
        RunFit("r<1>", [ObservableSeries("A", t, np.exp(-t), fitted=np.exp(-t))])])
    data = ReportData("<script>alert(1)</script> study", StudyRanges({"A": (1.0, 1.0)}),
                      [candidate])
    paths = write_report(data, tmp_path, dpi=30)
    html = paths.html.read_text(encoding="utf-8")
    assert "<script>" not in html and "&lt;script&gt;alert(1)&lt;/script&gt; study" in html
    assert "&lt;b&gt;A&lt;/b&gt; &amp; B" in html
    text = paths.markdown.read_text(encoding="utf-8")
    assert "# \\<script\\>alert(1)\\</script\\> study" in text
    assert "best \\| supported" in text
    assert (tmp_path / "figures" / "fit-b-a-b-b-full.png").is_file()


def test_figures_drawn_in_worker_processes_are_the_same_as_in_one(invented_report):
    # the candidates' figures may be drawn in several processes (write_report(workers=))
    from mechfit.report.content import build_content

    one = build_content(invented_report, dpi=30, workers=1)
    two = build_content(invented_report, dpi=30, workers=2)
    assert len(invented_report.candidates) >= 2
    assert [f.slug for f in one["figures"]] == [f.slug for f in two["figures"]]
    assert [f.png for f in one["figures"]] == [f.png for f in two["figures"]]
    assert [c["fit_figure"].slug for c in one["candidates"]] == \
        [c["fit_figure"].slug for c in two["candidates"]]
    assert len({f.slug for f in two["figures"]}) == len(two["figures"])
