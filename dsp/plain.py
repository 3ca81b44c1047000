"""Plain JSON values from results: the one converter the JSON outputs share."""

from __future__ import annotations

import math
from pathlib import PurePath
from typing import Any

import numpy as np


def plain_json(obj: Any) -> Any:
    """``obj`` as plain JSON types.

    Dicts keep their order with text keys; tuples and arrays become lists; numpy
    scalars become Python numbers; NaN and infinities become ``None`` (JSON has no
    NaN); paths become text; anything else becomes its ``str``.
    """
    if isinstance(obj, dict):
        return {str(k): plain_json(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [plain_json(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return plain_json(obj.tolist())
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        value = float(obj)
        return value if math.isfinite(value) else None
    if obj is None or isinstance(obj, str):
        return obj
    if isinstance(obj, PurePath):
        return str(obj)
    return str(obj)
