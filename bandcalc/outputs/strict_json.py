"""JSON for machines: strict JSON only (RFC 8259 has no NaN or Infinity).

A number that does not exist (no switching point at a corner, no delay in a recorded signal) is
NaN or infinite inside bandcalc.  At the edge it becomes ``null``, and the result it sits in
lists it under ``"not_finite"`` (its path, and what it was), so a reader can tell a missing value
from a zero; the result's notes or findings say why it is missing.
"""

from __future__ import annotations

import json
import math
from typing import Any

import numpy as np

__all__ = ["NOT_FINITE", "dumps", "strict"]

#: The key listing the values set to null: path ("worst_case.upper.min") -> "NaN", "Infinity" or "-Infinity".
NOT_FINITE = "not_finite"


def _plain(value: Any, path: str, found: dict[str, str]) -> Any:
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        found[path] = "NaN" if math.isnan(value) else ("Infinity" if value > 0 else "-Infinity")
        return None
    if isinstance(value, dict):
        return {k: _plain(v, f"{path}.{k}" if path else str(k), found) for k, v in value.items()}
    if isinstance(value, (list, tuple, np.ndarray)):
        return [_plain(v, f"{path}[{i}]", found) for i, v in enumerate(value)]
    return value


def strict(result: dict) -> dict:
    """``result`` with every NaN or infinity set to None and listed under :data:`NOT_FINITE`."""
    found: dict[str, str] = {}
    out = _plain(result, "", found)
    if found:
        out[NOT_FINITE] = found
    return out


def dumps(results: dict | list[dict], **kwargs: Any) -> str:
    """Strict JSON of one result or a list of them (each made :func:`strict`)."""
    body = strict(results) if isinstance(results, dict) else [strict(r) for r in results]
    return json.dumps(body, allow_nan=False, **kwargs)
