"""The run's γ± beside published values at the measured molalities, with the tables' own spread."""

from __future__ import annotations

import numpy as np
import pandas as pd

from .numbers import frame_records


def comparison_lines(comparison: pd.DataFrame | None) -> list[str]:
    """The comparison with published γ± as lines of the text report (empty without a table).

    Each row shows the run's γ±, every published table's value (letters name the tables below
    the rows; a value in parentheses is interpolated within its table), their mean and spread,
    the run's difference from the mean and that difference in units of the combined standard
    uncertainty u_c (see :func:`activolt.procedures.published.compare_with_published`).
    """
    from .numbers import decimals_for

    if comparison is None or comparison["gamma_pm_published"].isna().all():
        return []
    sources = list(dict.fromkeys(
        source for values in comparison["published_values"] for source, _, _ in values))
    letters = {source: "abcdefghijklmnopqrstuvwxyz"[k] for k, source in enumerate(sources)}
    rows = []
    for row in frame_records(comparison):
        if np.isnan(row["gamma_pm_published"]):
            continue
        places = max(3, decimals_for(row["u_gamma_pm"]))
        shown = " ".join((f"{value:.3f}" if printed else f"({value:.4f})") + letters[source]
                         for source, value, printed in row["published_values"]) or "—"
        mean = f"{row['gamma_pm_published']:.4f}" + ("i" if row["interpolated"] else " ")
        ratio = row["difference_over_u"]
        mark = "  ← beyond 2 u_c" if abs(ratio) > 2.0 else ""
        rows.append([f"{row['molality_mol_kg']:.6g}", f"{row['gamma_pm']:.{places}f}", shown,
                     mean, f"{row['spread_published']:.4f}",
                     f"{row['difference']:+.{places}f}", f"{ratio:+.1f}{mark}"])
    header = ["m / (mol/kg)", "this run", "published", "mean", "spread", "difference",
              "difference / u_c"]
    widths = [max(len(r[i]) for r in [*rows, header]) for i in range(len(header))]
    lines = ["", "  γ± against published values (k = 1; i = mean interpolated between the "
                 "molalities the tables print)"]
    for cells in [header, *rows]:
        lines.append(("  " + "   ".join(c.ljust(w) for c, w in zip(cells, widths, strict=True)))
                     .rstrip())
    lines += [f"  {letters[s]}: {s}" for s in sources]
    lines.append("  spread: largest − smallest of the tables' values (what the tables themselves "
                 "disagree by); u_c = √(u²(γ±) + (spread/2)² + (half the last printed digit)²)")
    return lines
