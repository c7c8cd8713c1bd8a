"""``activolt ph``: the primary pH of a buffer from Harned-cell readings with added chloride.

    activolt ph BUFFER.csv [--meta BUFFER.toml] [--out FOLDER] [--buffer NAME]
                [--ionic-strength-mol-kg I] [--no-figures]

One output set, written whole or not at all: ``NAME.record.json`` (``record_kind = "ph"``),
``NAME.points.csv`` (the acidity function of every reading), ``NAME.report.txt``,
``NAME.acidity.png`` (the extrapolation to m_Cl = 0) and ``NAME.report.html``. The report is
printed. Exit status 0, 2 for bad input (one line; nothing written), 1 for a fit that cannot be
done.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from ..errors import InputError
from .archive import add_archive_option

NAME = "ph"
#: The files of a pH determination's output set, after ``NAME.``.
PH_OUTPUT_KINDS = ("record.json", "points.csv", "report.txt", "acidity.png", "report.html")


def add_parser(commands: Any) -> argparse.ArgumentParser:
    """The ``ph`` parser."""
    parser = commands.add_parser(
        NAME, help="primary pH of a buffer by the Harned cell (IUPAC 2002): pH ± U, budget, "
        "record and report",
        description="Primary pH of a buffer from Harned-cell readings with chloride added at "
                    "several molalities: the acidity function per reading, its straight-line "
                    "extrapolation to zero chloride, the Bates–Guggenheim convention, a GUM "
                    "budget with E° from the electrodes' calibration, and pH(T) when the "
                    "readings span several temperatures. Writes NAME.record.json, "
                    "NAME.points.csv, NAME.report.txt, NAME.acidity.png and NAME.report.html.",
        epilog="metadata keys beside those of runs: calibration_batch (+ "
               "calibration_batch_meta), calibration_record or standard_potential_mV with "
               "u_standard_potential_mV (the E° source); buffer (a catalogue name), "
               "buffer_ionic_strength_mol_kg, buffer_composition, "
               "u_buffer_ionic_strength_mol_kg.\n"
               "exit status: 0 done; 2 bad input (one line naming file, line and column; "
               "nothing written); 1 a fit that cannot be done.",
        formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("table", type=Path, help="buffer table (CSV): chloride_molality_mol_kg, "
                        "emf_V or emf_mV, electrode, optionally u_emf_mV, temperature_C, "
                        "pressure_kPa")
    parser.add_argument("--meta", type=Path, help="its metadata (TOML); default TABLE.toml")
    parser.add_argument("--out", type=Path,
                        help="folder for the outputs; default TABLE_activolt next to the table")
    add_archive_option(parser, "the record, its inputs and outputs")
    parser.add_argument("--buffer", help="catalogue name of the buffer (phosphate, phthalate, "
                        "borax, …); overrides the metadata")
    parser.add_argument("--ionic-strength-mol-kg", type=float, dest="ionic_strength_mol_kg",
                        metavar="I", help="the buffer's ionic strength; overrides the metadata")
    parser.add_argument("--no-figures", action="store_true", help="no figure")
    return parser


def run(args: argparse.Namespace, written: list[Path]) -> int:
    """Compute, build the output set in memory, write it atomically, print the report."""
    from ..io.files import check_outputs, write_outputs
    from ..io.outputs import ph_output_files
    from ..procedures.ph import primary_ph

    table: Path = args.table
    if args.ionic_strength_mol_kg is not None and not args.ionic_strength_mol_kg >= 0:
        raise InputError(f"the ionic strength {args.ionic_strength_mol_kg:g} mol/kg is "
                         "negative; give I ≥ 0 in mol/kg", file="command line",
                         column="--ionic-strength-mol-kg")
    name = table.stem
    out = args.out if args.out is not None else table.parent / f"{name}_activolt"
    owned = [f"{name}.{kind}" for kind in PH_OUTPUT_KINDS]
    meta = args.meta if args.meta is not None else (
        table.with_suffix(".toml") if table.with_suffix(".toml").is_file() else None)
    inputs = [table, *([meta] if meta is not None else [])]
    check_outputs(out, owned, [], inputs)
    result = primary_ph(table, meta, ionic_strength_mol_kg=args.ionic_strength_mol_kg,
                        buffer=args.buffer)
    contents = ph_output_files(result, name, out, figures=not args.no_figures)
    report = contents[f"{name}.report.txt"]
    assert isinstance(report, str)
    done = write_outputs(folder=out, contents=contents, owned=owned,
                         inputs=[*inputs, *result.source_files])
    written.extend(done)
    sys.stdout.write(report)
    return 0
