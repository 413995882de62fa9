"""The fingerprint of the C sources of the compiled simulation library.

``setup.py`` builds the fingerprint of ``native/*.c`` and ``native/*.h`` into the
library; :mod:`mechfit.simulate.compiled` compares it with the sources it finds
beside itself, so that a source checkout never runs a library built from other
sources (a stale in-place build, or the copy of ``pip install .`` after the C files
were edited). This module uses the standard library only: ``setup.py`` loads it
without importing mechfit.

Examples
--------
>>> fingerprint = source_fingerprint()
>>> fingerprint is None or len(fingerprint) == 64
True
"""

from __future__ import annotations

import hashlib
from pathlib import Path

#: the folder of the C sources (absent from an installed copy)
FOLDER = Path(__file__).resolve().parent / "native"


def source_fingerprint(folder: Path = FOLDER) -> str | None:
    """SHA-256 of the names and contents of the C sources, or None without sources.

    Parameters
    ----------
    folder
        The folder holding ``*.c`` and ``*.h``.

    Returns
    -------
    str or None
        64 hexadecimal digits; None when the folder holds no sources (an install).
    """
    files = sorted([*folder.glob("*.c"), *folder.glob("*.h")]) if folder.is_dir() else []
    if not files:
        return None
    digest = hashlib.sha256()
    for path in files:
        digest.update(path.name.encode() + b"\0" + path.read_bytes() + b"\0")
    return digest.hexdigest()
