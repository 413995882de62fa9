"""The JSON report: a JSON-safe summary of everything the HTML page says, without images.

NaN and infinities become ``null`` (strict JSON); numpy scalars and arrays become
numbers and lists. Figure files are listed by name (relative to the report folder).

Examples
--------
>>> import json, math
>>> json.dumps(json_safe({"a": math.nan, "b": (1, 2.5)}))
'{"a": null, "b": [1, 2.5]}'
"""

from __future__ import annotations

import json

from mechfit.plain_json import json_safe
from mechfit.report.data import ReportData
from mechfit.report.energetics import energy_levels

#: version of the JSON layout; raised when a key changes meaning or disappears
SCHEMA_VERSION = 1


def report_summary(data: ReportData, *, cautions: list[str],
                   figure_files: list[str] | None = None) -> dict:
    """The JSON object of the report (see docs/report.md for every key)."""
    candidates = []
    for c in data.candidates:
        entry = json_safe(c.ranking)
        entry["parameters"] = json_safe(c.parameters)
        entry["residual_diagnostics"] = json_safe(c.residual_diagnostics)
        entry["identifiability_notes"] = list(c.identifiability_notes)
        entry["approximation_notes"] = list(c.approximation_notes)
        entry["rate_laws"] = json_safe(c.rate_laws)
        entry["energy_levels"] = (json_safe(energy_levels(c.energy_profile))
                                  if c.energy_profile is not None else None)
        entry["runs"] = [{"run": r.run, "temperature": json_safe(r.temperature),
                          "observables": [s.observable for s in r.series]} for r in c.runs]
        candidates.append(entry)
    return {
        "schema_version": SCHEMA_VERSION,
        "title": data.title,
        "generated": data.generated,
        "invented": data.invented,
        "invented_note": data.invented_note,
        "ranges": json_safe(data.ranges),
        "candidates": candidates,
        "weights": json_safe(data.weights),
        "verdict_notes": list(data.verdict_notes),
        "networks": sorted(data.networks),
        "design_suggestions": list(data.design_suggestions),
        "cautions": list(cautions),
        "figures": list(figure_files or []),
    }


def render_json(summary: dict) -> str:
    """Strict JSON text (``allow_nan=False``), indented, ending in a newline."""
    return json.dumps(json_safe(summary), indent=2, ensure_ascii=False, allow_nan=False) + "\n"
