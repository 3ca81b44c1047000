import json
import math
from pathlib import Path

import numpy as np

from dsp.plain import plain_json


def test_results_become_strict_json():
    value = {"a": (1, np.float32(2.5), np.int64(3)), 4: np.array([1.0, np.nan]), "b": np.bool_(True),
             "c": float("inf"), "p": Path("x") / "y.flac", "n": None}
    out = plain_json(value)
    # RFC 8259 has no NaN or infinity: they become null (json.dumps allow_nan=False as the reference)
    text = json.dumps(out, allow_nan=False)
    assert json.loads(text) == {"a": [1, 2.5, 3], "4": [1.0, None], "b": True, "c": None,
                                "p": str(Path("x") / "y.flac"), "n": None}
    assert not any(isinstance(v, float) and math.isnan(v) for v in out["4"])
