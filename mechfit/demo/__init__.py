"""The packaged demo study (INVENTED data) and its candidate mechanisms.

The scenario is invented: an organocatalysed thia-Michael addition of a thiol (Nu)
to an invented enone, "corvenone" (Sub), giving the adduct Prod with catalyst Cat.
The data were simulated from a known mechanism by ``scripts/make_demo_study.py`` in
the repository, which documents the truth; :func:`truth` reads it back. The
candidate mechanisms are copies of ``mechanisms/demo/*.mech``.

Examples
--------
>>> from mechfit.demo import candidate_paths, study_path
>>> study_path().name
'study.toml'
>>> sorted(p.stem for p in candidate_paths())
['background', 'deactivation', 'direct', 'reservoir', 'saturation']
"""

from __future__ import annotations

import tomllib
from pathlib import Path

FOLDER = Path(__file__).resolve().parent


def study_path() -> Path:
    """The demo study file (``study.toml``; its tables lie beside it)."""
    return FOLDER / "study.toml"


def candidate_paths() -> list[Path]:
    """The candidate mechanisms of the demo, sorted by name."""
    return sorted(FOLDER.glob("*.mech"))


def truth() -> dict:
    """The true mechanism and parameters behind the invented data.

    Returns
    -------
    dict
        ``mechanism`` (candidate name), ``seed``, ``reference_temperature_K``,
        ``rate_constants`` (name -> {"k_ref", "Ea"} in mol, L, s and J/mol) and
        ``observables`` (absorptivities, baseline, noise standard deviations).

    Examples
    --------
    >>> truth()["mechanism"]
    'saturation'
    """
    return tomllib.loads((FOLDER / "truth.toml").read_text(encoding="utf-8"))
