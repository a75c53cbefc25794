"""Small value helpers shared by the analysis modules (private)."""

from __future__ import annotations

import math
import numbers

import numpy as np

__all__ = ["json_number", "show_value"]


def show_value(value) -> str:
    """Render a rejected argument for an error message ("... (got 1.2)")."""
    if isinstance(value, (bool, np.bool_)):
        return repr(bool(value))
    if isinstance(value, numbers.Integral):
        return str(int(value))
    if isinstance(value, numbers.Real):
        return repr(float(value))
    if isinstance(value, np.ndarray):
        return f"array of shape {value.shape}"
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def json_number(value) -> float | None:
    """A plain float for JSON, or None for None and NaN."""
    if value is None:
        return None
    value = float(value)
    return None if math.isnan(value) else value
