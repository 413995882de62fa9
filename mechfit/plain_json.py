"""Values as plain JSON: the one conversion used by every JSON file and ``--json`` output.

NaN and infinities become ``null`` (strict JSON); numpy scalars and arrays become
numbers and lists; dataclasses become objects; anything else becomes its text.

Examples
--------
>>> import json, math
>>> import numpy as np
>>> json.dumps(json_safe({"a": math.nan, "b": (1, np.float64(2.5))}))
'{"a": null, "b": [1, 2.5]}'
>>> json.dumps({"n": np.int64(3)}, default=json_default)
'{"n": 3}'
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping

import numpy as np


def json_safe(value):
    """``value`` as plain JSON types (dicts, lists, str, int, float, bool, None).

    Parameters
    ----------
    value
        Nested mappings, sequences, dataclasses, numpy values and plain values.

    Returns
    -------
    object
        The same content in types :func:`json.dumps` writes as strict JSON.

    Examples
    --------
    >>> json_safe([np.bool_(True), float("inf")])
    [True, None]
    """
    if isinstance(value, Mapping):
        return {str(k): json_safe(v) for k, v in value.items()}
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: json_safe(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, (list, tuple)):
        return [json_safe(v) for v in value]
    if isinstance(value, np.ndarray):
        return json_safe(value.tolist())
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        x = float(value)
        return x if math.isfinite(x) else None
    if value is None or isinstance(value, str):
        return value
    return str(value)


def json_default(value):
    """The ``default=`` of :func:`json.dump`: numpy values as numbers and lists, else text.

    Examples
    --------
    >>> json_default(np.arange(2))
    [0, 1]
    """
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, np.ndarray):
        return value.tolist()
    return str(value)
