"""JSON output: numpy values and dataclasses turned into plain JSON types."""
from __future__ import annotations

import numpy as np


def to_jsonable(obj):
    """Plain JSON types: numpy scalars to Python, NaN/inf to None."""
    if hasattr(obj, "to_dict"):  # a typed result (deembed.base.results.Result)
        return to_jsonable(obj.to_dict())
    if isinstance(obj, dict):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [to_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return to_jsonable(obj.tolist())
    if isinstance(obj, (np.floating, float)):
        v = float(obj)
        return v if np.isfinite(v) else None
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, np.bool_):
        return bool(obj)
    return obj
