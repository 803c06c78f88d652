"""Argument checks shared by the motion modules; failures raise InputError naming the argument."""

from __future__ import annotations

import math

import numpy as np

from floorfit.errors import InputError


def positive_number(value, where: str, allow_zero: bool = False) -> float:
    """``value`` as a finite float > 0 (>= 0 with ``allow_zero``)."""
    what = "a non-negative" if allow_zero else "a positive"
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"expected {what} number, got {value!r}", where=where) from None
    if not (math.isfinite(v) and (v > 0 or (allow_zero and v == 0))):
        raise InputError(f"expected {what} number, got {value!r}", where=where)
    return v


def whole_number(value, where: str, minimum: int) -> int:
    """``value`` as an int >= ``minimum`` (bools and floats are refused)."""
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < minimum:
        raise InputError(f"expected an integer >= {minimum}, got {value!r}", where=where)
    return int(value)
