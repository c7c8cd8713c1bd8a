"""Comparing outputs exactly, for the tests (not check values themselves)."""

from __future__ import annotations

import math
from typing import Any


def identical(a: Any, b: Any, where: str = "record") -> None:
    """Assert ``a`` and ``b`` equal value for value, with the same types, the same order of
    keys and the same float bits (NaN equal to NaN, the sign of a zero kept); ``where`` names
    the place in the failure message."""
    assert type(a) is type(b), f"{where}: {type(a).__name__} against {type(b).__name__}"
    if isinstance(a, dict):
        assert list(a) == list(b), where
        for key in a:
            identical(a[key], b[key], f"{where}.{key}")
    elif isinstance(a, list):
        assert len(a) == len(b), where
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            identical(x, y, f"{where}[{i}]")
    elif isinstance(a, float):
        assert (math.isnan(a) and math.isnan(b)) or (
            a == b and math.copysign(1.0, a) == math.copysign(1.0, b)), f"{where}: {a!r} {b!r}"
    else:
        assert a == b, f"{where}: {a!r} against {b!r}"
