"""JSON-safe values: floats finite or ``None``, tuples as lists, numpy scalars as Python.

One implementation for the records that become JSON (the events of
:mod:`sim.devices.events`, the result of :mod:`sim.trace`). It sits below both,
so the devices need not import the result module.
"""
from __future__ import annotations

import math
from typing import Mapping, Optional


def num(x: Optional[float]) -> Optional[float]:
    """A JSON-safe float: ``None`` for ``None``, infinities and NaN."""
    if x is None:
        return None
    x = float(x)
    if math.isnan(x) or math.isinf(x):
        return None
    return x


def clean(value):
    """Recursively make ``value`` JSON-safe (floats finite, tuples as lists)."""
    if isinstance(value, float):
        return num(value)
    if isinstance(value, Mapping):
        return {str(k): clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [clean(v) for v in value]
    if isinstance(value, (str, int, bool)) or value is None:
        return value
    if hasattr(value, "item"):  # numpy scalars
        return clean(value.item())
    return str(value)
