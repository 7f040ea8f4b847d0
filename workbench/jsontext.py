"""The JSON printed by ``--json``: exactly one object, valid JSON even for infinite values.

JSON has no infinities or NaN (RFC 8259, §6); Python's ``json`` would write
``Infinity`` (not JSON) or, with ``allow_nan=False``, raise.  A check value can
be infinite (an overflowing field such as ``x^64`` far out), so non-finite
numbers are written as the strings ``"inf"``, ``"-inf"`` and ``"nan"``, the
spelling the outputs use for infinite set ends.
"""

from __future__ import annotations

import json
import math
from typing import Any

import numpy as np


def finite_json(value: Any) -> Any:
    """``value`` with every non-finite float replaced by ``"inf"``, ``"-inf"`` or ``"nan"``."""
    if isinstance(value, dict):
        return {str(k): finite_json(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [finite_json(v) for v in value]
    if isinstance(value, np.ndarray):
        if value.dtype.kind == "f" and np.all(np.isfinite(value)):
            return value.tolist()  # nothing to replace: skip the walk over every element
        return finite_json(value.tolist())
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, (float, np.floating)):
        number = float(value)
        if math.isfinite(number):
            return number
        return "nan" if math.isnan(number) else ("inf" if number > 0 else "-inf")
    return value


def json_text(value: Any) -> str:
    """One line of valid JSON (``allow_nan=False`` holds by construction)."""
    return json.dumps(finite_json(value), allow_nan=False, default=str)
