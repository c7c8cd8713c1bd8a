"""The files of an output set composed from a result: the record with the reports and tables
that read it, for the commands that write them (``activolt ph``, the archive's re-reduction).
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

from ..procedures.dilution import Reduction
from ..procedures.model_choice import ModelComparison
from ..procedures.montecarlo import MonteCarloResult
from ..procedures.ph import PhResult
from ..procedures.properties import derive_results
from ..report.ph import format_ph_report, ph_report_html, render_ph_figure
from ..report.text import format_report
from ..safe_text import escape_controls
from .record import ph_points_csv, ph_record_json, points_csv, record_json

__all__ = ["ph_output_files", "reduction_output_files"]


def ph_output_files(result: PhResult, name: str, record_folder: Path, figures: bool = True
                    ) -> dict[str, bytes | str]:
    """The files of a primary pH determination's output set, named ``name.<kind>``: the
    record, the points table, the text report, the acidity figure (with ``figures``) and the
    HTML report, which names the record by its SHA-256."""
    record_name = f"{name}.record.json"
    record = ph_record_json(result, record_folder=record_folder)
    figure = render_ph_figure(result) if figures else None
    contents: dict[str, bytes | str] = {
        record_name: record, f"{name}.points.csv": ph_points_csv(result),
        f"{name}.report.txt": escape_controls(format_ph_report(result), keep="\n")}
    if figure is not None:
        contents[f"{name}.acidity.png"] = figure
    contents[f"{name}.report.html"] = ph_report_html(
        json.loads(record), figure,
        f"{record_name} (SHA-256 {hashlib.sha256(record.encode('utf-8')).hexdigest()[:16]}…)")
    return contents


def reduction_output_files(reduction: Reduction, base: str, record_folder: Path,
                           comparison: ModelComparison | None = None,
                           monte_carlo: MonteCarloResult | None = None
                           ) -> dict[str, bytes | str]:
    """The record, the points table and the text report of a reduction, named
    ``base.<kind>``, the derived results worked out once for both."""
    derived = derive_results(reduction)
    report = format_report(reduction, comparison=comparison, monte_carlo=monte_carlo,
                           derived=derived)
    return {f"{base}.record.json": record_json(reduction, comparison=comparison,
                                               monte_carlo=monte_carlo,
                                               record_folder=record_folder, derived=derived),
            f"{base}.points.csv": points_csv(reduction),
            f"{base}.report.txt": escape_controls(report, keep="\n")}

