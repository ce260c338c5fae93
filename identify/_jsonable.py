"""Turn results into JSON-safe structures (no NaN, no numpy scalars, no complex)."""
from __future__ import annotations

import dataclasses
import json
import math

import numpy as np

__all__ = ["jsonable", "dumps_line"]


def jsonable(obj):
    """Return ``obj`` as plain dicts, lists, str, float, int, bool and None.

    Objects with a ``to_dict`` method use it; NaN and ±inf become ``None`` (JSON has
    no such numbers); complex numbers become ``[real, imag]``.
    """
    if obj is None or isinstance(obj, (bool, str)):
        return obj
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        value = float(obj)
        return value if math.isfinite(value) else None
    if isinstance(obj, (complex, np.complexfloating)):
        return [jsonable(obj.real), jsonable(obj.imag)]
    if hasattr(obj, "to_dict") and not isinstance(obj, type):
        return jsonable(obj.to_dict())
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: jsonable(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
    if isinstance(obj, dict):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, np.ndarray):
        return [jsonable(v) for v in obj.tolist()]
    if isinstance(obj, (list, tuple, set, frozenset)):
        return [jsonable(v) for v in obj]
    return str(obj)


def dumps_line(obj) -> str:
    """One JSON object on one line (the command line's ``--json`` output)."""
    return json.dumps(jsonable(obj), separators=(", ", ": "), allow_nan=False)
