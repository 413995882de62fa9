"""The format reference quotes the grammar file exactly."""

from pathlib import Path

from mechfit.mechanism.grammar import grammar_text

ROOT = Path(__file__).resolve().parents[2]


def test_format_doc_quotes_the_grammar():
    doc = (ROOT / "docs" / "format.md").read_text(encoding="utf-8")
    quoted = doc.split("<!-- grammar:begin -->\n```lark\n", 1)[1]
    quoted = quoted.split("```\n<!-- grammar:end", 1)[0]
    assert quoted == grammar_text()


def test_check_doc_lists_every_json_key():
    import json

    from mechfit.cli import main

    doc = (ROOT / "docs" / "check.md").read_text(encoding="utf-8")
    import contextlib
    import io

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        main(["check", str(ROOT / "mechanisms/classic/michaelis_menten.mech"), "--json"])
    for key in json.loads(buf.getvalue()):
        assert f"`{key}`" in doc, f"docs/check.md does not document the key {key!r}"
