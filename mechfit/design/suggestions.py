"""The design sentences a results folder holds, for the report's next-experiments section.

``mechfit design`` writes ``design.json`` into the results folder (never changing the
ranking's own files); its ``design_suggestions`` list is what a report shows.

Examples
--------
>>> import tempfile
>>> design_suggestions(tempfile.mkdtemp())
[]
"""

from __future__ import annotations

import json
from pathlib import Path

from mechfit.design.predict import DesignInputError

DESIGN_FILE = "design.json"


def design_suggestions(folder: str | Path) -> list[str]:
    """Sentences of ``folder/design.json`` (``[]`` when there is no design yet).

    Raises
    ------
    DesignInputError
        When ``design.json`` exists but is not a design written by ``mechfit design``.
    """
    path = Path(folder) / DESIGN_FILE
    if not path.is_file():
        return []
    try:
        sentences = json.loads(path.read_text(encoding="utf-8"))["design_suggestions"]
    except (ValueError, KeyError, TypeError) as error:
        raise DesignInputError(f"{path}: not a design written by mechfit design "
                               f"({error})") from None
    if not isinstance(sentences, list) or not all(isinstance(s, str) for s in sentences):
        raise DesignInputError(f"{path}: design_suggestions must be a list of sentences")
    return list(sentences)
