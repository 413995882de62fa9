"""The report package's docstring examples run, and docs/report.md covers every section and key."""

import doctest
import importlib
import json
import pkgutil
from pathlib import Path

import pytest

import mechfit.report
from mechfit.report.content import SECTIONS

ROOT = Path(__file__).resolve().parents[2]
MODULES = sorted(m.name for m in pkgutil.walk_packages(mechfit.report.__path__,
                                                       "mechfit.report."))


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert result.failed == 0


def test_every_module_has_examples():
    with_examples = [n for n in MODULES
                     if doctest.DocTestFinder().find(importlib.import_module(n))
                     and any(t.examples for t in
                             doctest.DocTestFinder().find(importlib.import_module(n)))]
    missing = set(MODULES) - set(with_examples) - {
        "mechfit.report", "mechfit.report.errors", "mechfit.report.figures",
        "mechfit.report.templates"}
    assert not missing, f"modules without a docstring example: {sorted(missing)}"


def test_docs_describe_every_section_and_json_key(written_report):
    doc = (ROOT / "docs" / "report.md").read_text(encoding="utf-8")
    for _, heading in SECTIONS:
        assert f"### {heading}" in doc, f"docs/report.md does not describe {heading!r}"
    summary = json.loads(written_report.json.read_text(encoding="utf-8"))
    keys = set(summary) | set(summary["candidates"][0]) | set(summary["ranges"])
    for key in sorted(keys):
        assert f"`{key}`" in doc, f"docs/report.md does not document the JSON key {key!r}"
