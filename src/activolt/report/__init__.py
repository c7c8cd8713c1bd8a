"""Human-facing output of a reduction: plain-text report, comparison tables, figures, cautions."""
