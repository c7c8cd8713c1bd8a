"""Printing a value with its uncertainty, never with more digits than the uncertainty supports."""

from __future__ import annotations

import math


def decimals_for(uncertainty: float, significant: int = 2) -> int:
    """Decimal places that keep ``significant`` digits of the uncertainty (at least 0).

    Examples
    --------
    >>> decimals_for(0.0123), decimals_for(4.5), decimals_for(250.0)
    (3, 1, 0)
    """
    if not math.isfinite(uncertainty) or uncertainty <= 0.0:
        return 6
    return max(0, significant - 1 - math.floor(math.log10(uncertainty)))


def format_with_uncertainty(value: float, uncertainty: float, unit: str = "",
                            significant: int = 2) -> str:
    """``value ± u unit`` with u to ``significant`` digits and the value to the same place.

    Examples
    --------
    >>> format_with_uncertainty(222.35216, 0.0061, "mV")
    '222.3522 ± 0.0061 mV'
    >>> format_with_uncertainty(4.31, float("nan"), "Å")
    '4.31 Å (held)'
    """
    suffix = f" {unit}" if unit else ""
    if not math.isfinite(uncertainty):
        return f"{value:.4g}{suffix} (held)"
    places = decimals_for(uncertainty, significant)
    return f"{value:.{places}f} ± {uncertainty:.{places}f}{suffix}"


def json_number(value: float | None) -> float | None:
    """A finite float for a JSON record, or None (null) for a missing or non-finite value.

    Examples
    --------
    >>> json_number(float("nan")) is None, json_number(2)
    (True, 2.0)
    """
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None
