"""How many digits a value with an uncertainty deserves (GUM, JCGM 100:2008, 7.2.6): the one
rule shared by the printed reports, the command line and the results' own notebook display."""

from __future__ import annotations

import math

import numpy as np

__all__ = ["decades", "decimals_for", "decimals_for_column", "format_potential",
           "format_with_uncertainty"]


def decimals_for(uncertainty: float, significant: int = 2) -> int:
    """Decimal places that keep ``significant`` digits of the uncertainty (at least 0).

    Examples
    --------
    >>> decimals_for(0.0123), decimals_for(4.5), decimals_for(250.0)
    (3, 1, 0)
    """
    if 0.0 < uncertainty < math.inf:  # (false for NaN)
        places = significant - 1 - math.floor(math.log10(uncertainty))
        return places if places > 0 else 0
    return 6


def decades(values: np.ndarray) -> np.ndarray:
    """The decade of each positive finite value, ``math.floor(math.log10(v))`` as the scalar
    rules compute it (:func:`decimals_for`), for a column at once; 0 elsewhere.

    numpy's ``log10`` may differ from the C library's in the last bit, which moves the floor
    only where the logarithm is within a hair of an integer: those few values are worked out
    with :func:`math.log10` itself.

    Parameters
    ----------
    values : numpy.ndarray
        Floats, of any shape.

    Returns
    -------
    numpy.ndarray
        Integers (int64), of the shape of ``values``.

    Examples
    --------
    >>> decades(np.array([0.0123, 4.5, 250.0, 0.001, 0.0, np.nan])).tolist()
    [-2, 0, 2, -3, 0, 0]
    """
    values = np.asarray(values, dtype=float)
    usable = (values > 0.0) & (values < math.inf)
    logs = np.log10(np.where(usable, values, 1.0))
    floors = np.floor(logs)
    for i in np.flatnonzero(usable & (np.abs(logs - np.rint(logs)) < 1e-9)):
        floors.flat[i] = math.floor(math.log10(values.flat[i]))
    return floors.astype(np.int64)


def decimals_for_column(uncertainties: np.ndarray, significant: int = 2) -> np.ndarray:
    """:func:`decimals_for` of each uncertainty of a column, at once.

    Parameters
    ----------
    uncertainties : numpy.ndarray
        Floats, of any shape.
    significant : int
        Significant digits kept of each uncertainty.

    Returns
    -------
    numpy.ndarray
        Integers (int64), of the shape of ``uncertainties``.

    Examples
    --------
    >>> decimals_for_column(np.array([0.0123, 4.5, 250.0, np.nan])).tolist()
    [3, 1, 0, 6]
    """
    uncertainties = np.asarray(uncertainties, dtype=float)
    usable = (uncertainties > 0.0) & (uncertainties < math.inf)
    return np.where(usable, np.maximum(significant - 1 - decades(uncertainties), 0), 6)


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


def format_potential(value_V: float | None, expanded_V: float | None, scale: float = 1e3
                     ) -> tuple[str, str]:
    """A potential and its expanded uncertainty as printed, in mV by default: U to two
    significant digits and the value to the same decimal place (GUM, JCGM 100:2008, 7.2.6).

    The record keeps the unrounded numbers; the certificate and the printed summary show them
    through this function.

    Examples
    --------
    >>> format_potential(0.2223456, 0.0000912)
    ('222.346', '0.091')
    >>> format_potential(None, None)
    ('—', '—')
    """
    if value_V is None or not math.isfinite(value_V):
        return "—", "—"
    if expanded_V is None or not math.isfinite(expanded_V) or expanded_V <= 0.0:
        return f"{value_V * scale:.4f}", "—"
    places = decimals_for(expanded_V * scale)
    return f"{value_V * scale:.{places}f}", f"{expanded_V * scale:.{places}f}"
