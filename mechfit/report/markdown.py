"""The Markdown report, rendered from ``templates/report.md.j2``.

Figures are PNG files in a folder beside the Markdown file (``figures/`` by default),
linked relatively, so the folder can be moved or zipped as a whole.

Examples
--------
>>> from mechfit.report.tables import Table
>>> print(markdown_table(Table(["a", "b"], [["1", "x|y"]])))
| a | b |
| --- | --- |
| 1 | x\\|y |
"""

from __future__ import annotations

import re

import jinja2

from mechfit.report.content import build_content
from mechfit.report.data import ReportData
from mechfit.report.html import TEMPLATES
from mechfit.report.tables import Table

#: folder of the figure files, relative to the Markdown file
FIGURE_DIR = "figures"


def markdown_text(text) -> str:
    """Text with the characters Markdown would read as markup (``* _ | < >``) escaped."""
    out = str(text).replace("\\", "\\\\")
    for char in "*_|<>`[]":
        out = out.replace(char, "\\" + char)
    return out.replace("\n", " ")


def markdown_anchor(heading: str) -> str:
    """The anchor common Markdown renderers give a heading (lower case, spaces to ``-``).

    Examples
    --------
    >>> markdown_anchor("Network and energy profile")
    'network-and-energy-profile'
    """
    return re.sub(r"[^a-z0-9 _-]", "", heading.lower()).replace(" ", "-")


def markdown_table(table: Table) -> str:
    """A pipe table; ``|`` inside cells is escaped."""
    def line(cells):
        return "| " + " | ".join(str(c).replace("|", "\\|").replace("\n", " ")
                                 for c in cells) + " |"

    return "\n".join([line(table.header), line(["---"] * len(table.header)),
                      *[line(r) for r in table.rows]])


def environment() -> jinja2.Environment:
    """The jinja2 environment of the Markdown template (no HTML escaping)."""
    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(TEMPLATES)), autoescape=False,
                             undefined=jinja2.StrictUndefined, keep_trailing_newline=True)
    env.filters["md_table"] = markdown_table
    env.filters["md_text"] = markdown_text
    env.filters["md_anchor"] = markdown_anchor
    return env


def render_markdown_content(content: dict, figure_dir: str = FIGURE_DIR) -> str:
    """The Markdown text from built content; figures are expected in ``figure_dir``."""
    text = environment().get_template("report.md.j2").render(figure_dir=figure_dir, **content)
    return re.sub(r"\n{3,}", "\n\n", text)


def render_markdown(data: ReportData, *, dpi: float = 110) -> tuple[str, list]:
    """The Markdown text and the figures to write beside it (``RenderedFigure`` list)."""
    content = build_content(data, dpi=dpi)
    return render_markdown_content(content), content["figures"]
