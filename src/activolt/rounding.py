"""How many digits a value with an uncertainty deserves (GUM, JCGM 100:2008, 7.2.6): the one
rule shared by the printed reports and the results' own notebook display."""

from __future__ import annotations

import math

__all__ = ["decimals_for"]


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
