"""The ``activolt`` command line: a thin layer over the library.

Exit status: 0 success, 2 bad input (one line on stderr naming file, line and column), 1 a fit
that could not be done (with the reason) — with several series, some series not reduced (each
named on stderr and in the summary with its reason; the others are written); ``calibrate``:
3 when an electrode of the batch fails its acceptance (the outputs are written).
"""

from __future__ import annotations

import argparse
import contextlib
import os
import signal
import sys
import threading
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from importlib import import_module
from importlib.resources import files
from pathlib import Path
from typing import TYPE_CHECKING, Any, NoReturn

from . import __version__
from .errors import FitError, InputError
from .safe_text import escape_controls

if TYPE_CHECKING:
    from .data.runs import Run
    from .io.files import StagedFolder
    from .procedures.dilution import Reduction
    from .procedures.many import SeriesReducer, SeriesReduction
    from .procedures.montecarlo import MonteCarloResult

# The command line solves many small least-squares problems, where BLAS threads cost more than
# they give and contend with each other on a busy machine: one thread unless the user set one
# (read when numpy is first imported: the imports above leave numpy out).
for _threads in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_threads, "1")

DEMO_RUN = "kestrel_hcl_25C.csv"
#: The files of one output set, after ``RUN.`` (or ``RUN.SERIES.`` when a series is picked).
OUTPUT_KINDS = ("record.json", "points.csv", "report.txt", "extrapolation.png", "residuals.png",
                "gamma.png", "report.html")
#: The files of a calibration's output set, after ``NAME.``.
CALIBRATION_OUTPUT_KINDS = ("record.json", "electrodes.csv", "points.csv", "certificate.html",
                            "control_chart.png")
#: The exit statuses of ``activolt calibrate`` (its ``--help`` shows them).
CALIBRATE_EXIT_STATUS = """exit status:
  0  every electrode passes
  3  at least one electrode fails its acceptance (the outputs are written)
  2  bad input (one line naming file, line and column; nothing written)
  1  a fit that cannot be done (the reason on stderr; nothing written)"""
#: The files of a temperature study's output set, after ``NAME.``.
STUDY_OUTPUT_KINDS = ("record.json", "points.csv", "report.txt", "gamma_temperature.csv",
                      "standard_potential.png", "gamma.png", "report.html")


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage mistake is one line and exit status 2."""

    def error(self, message: str) -> NoReturn:
        raise InputError(f"{message} (see 'activolt {self.prog.split()[-1]} --help')"
                         if " " in self.prog else f"{message} (see 'activolt --help')")


def _fixed_value(text: str) -> tuple[str, float | tuple[float, float]]:
    """NAME=VALUE, or NAME=VALUE±U (also +-, +/-) for a value held with a standard
    uncertainty."""
    name, sep, value = text.partition("=")
    try:
        if not sep:
            raise ValueError
        for mark in ("±", "+/-", "+-"):
            if mark in value:
                central, _, u = value.partition(mark)
                return name.strip(), (float(central), float(u))
        return name.strip(), float(value)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"'{text}' is not NAME=VALUE or NAME=VALUE±U, e.g. a_angstrom=4.3 or "
            "a_angstrom=4.3±0.2") from None


def _slope_value(text: str) -> str | float:
    if text == "fit":
        return text
    try:
        return float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"'{text}' is neither 'fit' nor a number") from None


def _command_modules() -> list[Any]:
    """The subcommands kept in modules of their own (``activolt.commands``)."""
    from .commands import COMMANDS
    return [import_module(f"activolt.commands.{name}") for name in COMMANDS]


def _parser() -> argparse.ArgumentParser:
    from .commands.archive import add_archive_option

    parser = _Parser(prog="activolt", description="Standard potentials and mean ionic activity "
                     "coefficients from EMF dilution series of cells without liquid junction.")
    parser.add_argument("--version", action="version", version=f"activolt {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    reduce = commands.add_parser("reduce", help="reduce a run to E° and γ±")
    reduce.add_argument("run", type=Path, nargs="+",
                        help="run table (CSV), several tables, or a folder (every *.csv in it, "
                             "each with its metadata); every series is reduced unless --series "
                             "picks one")
    reduce.add_argument("--meta", type=Path, help="run metadata (TOML); default RUN.toml")
    reduce.add_argument("--model", default="hueckel",
                        help="activity-coefficient model: limiting, hueckel, davies, sit, pitzer; "
                             "'all' (or a comma-separated list) to fit several, compare them and "
                             "report the recommended one; default hueckel")
    reduce.add_argument("--fix", action="append", type=_fixed_value, default=[],
                        metavar="NAME=VALUE", help="hold a model parameter, e.g. a_angstrom=4.3")
    reduce.add_argument("--out", type=Path,
                        help="folder for the outputs; default RUN_activolt next to the run")
    reduce.add_argument("--json", type=Path, help="write the JSON record here instead")
    reduce.add_argument("--series", help="which series to reduce when the table holds several")
    reduce.add_argument("--electrolyte", help="electrolyte formula (overrides the metadata)")
    reduce.add_argument("--electrons", type=int, help="n (overrides the metadata)")
    reduce.add_argument("--temperature-C", type=float, dest="temperature_C",
                        help="temperature in °C for rows without one (overrides the metadata)")
    reduce.add_argument("--standard-pressure-kPa", type=float, dest="standard_pressure_kPa",
                        help="pressure basis of E°: 100 or 101.325")
    reduce.add_argument("--volt-unit", dest="volt_unit", metavar="{absolute,international}",
                        help="the volt of the EMF columns: absolute (default) or international "
                             "(data before 1948; converted × 1.000330 on reading)")
    reduce.add_argument("--cell", help="cell diagram, e.g. \"Pt | H2(g) | HCl(aq) | AgCl(s) | "
                        "Ag(s)\" (overrides the metadata)")
    reduce.add_argument("--slope-factor", type=_slope_value, dest="slope_factor",
                        help="'fit' to fit the slope factor s of the cell response (ion-selective "
                             "electrode pairs), or a fixed value; default 1 (Nernstian)")
    reduce.add_argument("--exclude", action="append", default=[], metavar="line=N:REASON",
                        help="leave a reading out of the fit, by file line or by molality "
                             "(m=0.005:REASON); the reason is kept in the record")
    reduce.add_argument("--monte-carlo", type=int, dest="monte_carlo", metavar="TRIALS",
                        help="also propagate by Monte Carlo (GUM Supplement 1) with this many "
                             "trials")
    reduce.add_argument("--seed", type=int, default=0, help="seed of the Monte Carlo; default 0")
    reduce.add_argument("--figures", choices=FIGURE_CHOICES,
                        help="all (default): each series' figures, and with several series an "
                             "overview of E° ± U95; summary: the overview only; none")
    reduce.add_argument("--no-figures", action="store_true", help="same as --figures none")
    reduce.add_argument("--workers", type=_positive_count, metavar="N",
                        help="with many series: how many processes reduce them; default one "
                             "per CPU (the results do not depend on it)")
    reduce.add_argument("--study", action="store_true",
                        help="the tables (and their series) are one temperature study: "
                             "isotherms grouped by temperature, E°(T) and ΔG°, ΔH°, ΔS°, ΔCp° "
                             "at the reference temperature (a table whose rows span more than "
                             "2 K is a study without this option)")
    reduce.add_argument("--reference-temperature-C", type=float, dest="reference_temperature_C",
                        metavar="CELSIUS",
                        help="temperature study: where the thermodynamic quantities are "
                             "reported (θ); default 25")
    add_archive_option(reduce, "each record, its inputs and outputs")

    cell = commands.add_parser("cell", help="a cell's reaction, n, E°, ΔG° and K from its "
                               "diagram")
    cell.add_argument("diagram", help="IUPAC cell diagram in quotes")
    cell.add_argument("--temperature-C", type=float, dest="temperature_C", default=25.0,
                      help="temperature in °C; default 25")
    cell.add_argument("--standard-pressure-kPa", type=float, dest="standard_pressure_kPa",
                      default=100.0, help="pressure basis of E°, ΔG° and K: 100 (IUPAC, the "
                      "default, as for reduce) or 101.325 (1 atm)")
    cell.add_argument("--json", type=Path, help="also write the summary as JSON here")

    calibrate = commands.add_parser(
        "calibrate", help="calibrate a batch of reference electrodes: E° ± U per electrode, "
        "verdicts, a record and a certificate",
        description="Calibrate a batch of reference electrodes from one table of readings "
                    "(the method, tolerance, reference and decision rule in its metadata) and "
                    "write one output set: NAME.record.json, NAME.electrodes.csv, "
                    "NAME.points.csv, NAME.certificate.html and, with --history, "
                    "NAME.control_chart.png.",
        epilog=CALIBRATE_EXIT_STATUS, formatter_class=argparse.RawDescriptionHelpFormatter)
    calibrate.add_argument("batch", type=Path, help="batch table (CSV), one row per reading, "
                           "an 'electrode' column naming the electrode read")
    calibrate.add_argument("--meta", type=Path, help="batch metadata (TOML); default BATCH.toml")
    calibrate.add_argument("--out", type=Path,
                           help="folder for the outputs; default BATCH_activolt next to it")
    calibrate.add_argument("--history", type=Path, metavar="FOLDER",
                           help="folder of earlier calibration records (*.record.json): each "
                                "electrode's drift and control chart")
    add_archive_option(calibrate, "the record, the batch table, its metadata and the outputs")

    for module in _command_modules():
        module.add_parser(commands)

    demo = commands.add_parser("demo", help="reduce the bundled sample run")
    demo.add_argument("--out", type=Path, default=Path("demo_output"),
                      help="folder for the outputs; default ./demo_output")
    return parser


def _reduce(run_path: Path, meta: Path | None, model: str, fixed: dict[str, float],
            out: Path | None, json_path: Path | None, series: str | None,
            overrides: dict[str, object], figures: bool, exclude: tuple[str, ...] = (),
            trials: int | None = None, seed: int = 0,
            written: list[Path] | None = None) -> list[Path]:
    from .data.runs import Exclusion, exclude_points, read_run
    from .io.files import check_outputs
    from .io.record import points_csv, written_record
    from .procedures.dilution import reduce_run
    from .procedures.properties import derive_results
    from .report.text import format_report

    run = read_run(run_path, meta, overrides=overrides, series=series)
    # Where everything goes, checked before any work: never onto an input, never mixed.
    stem = run_path.stem
    base = stem if series is None else f"{stem}.{series_file_name(series)}"
    out = out if out is not None else run_path.parent / f"{stem}_activolt"
    owned = [f"{base}.{kind}" for kind in OUTPUT_KINDS]
    record_name, record_elsewhere = _record_place(base, out, json_path)
    inputs = [run.path, *([run.metadata_path] if run.metadata_path is not None else [])]
    check_outputs(out, [*owned, *([record_name] if record_name else [])],
                  [record_elsewhere] if record_elsewhere else [], inputs)
    exclusions = [Exclusion.parse(text) for text in exclude]
    _check_monte_carlo_options(trials, seed)
    comparison = None
    if model == "all" or "," in model:
        from .activity import MODELS
        from .procedures.model_choice import compare_models

        names = list(MODELS) if model == "all" else [m.strip() for m in model.split(",")]
        if exclusions:
            run = exclude_points(run, exclusions)
        comparison = compare_models(run, names, _fixed_per_model(names, fixed))
        reduction = comparison.recommended_reduction
        if reduction is None:
            # Nothing is written, but the comparison says why each model failed.
            from .report.model_table import format_model_comparison

            print(escape_controls(format_model_comparison(comparison), keep="\n"))
            raise FitError(comparison.warnings[-1])
    else:
        reduction = reduce_run(run, model=model, fixed=fixed, exclude=exclusions)
    monte = None
    if trials is not None:
        from .procedures.montecarlo import monte_carlo

        monte = monte_carlo(reduction.run, trials=trials, seed=seed, reduction=reduction,
                            temperature_u_K=run.metadata.u_temperature_K)
    # the model comparison and the Monte Carlo inside the report, the safety cautions last
    derived = derive_results(reduction)  # once, for the report and the record alike
    report = format_report(reduction, comparison=comparison, monte_carlo=monte, derived=derived)
    report = escape_controls(report if report.endswith("\n") else report + "\n", keep="\n")
    record_folder = (record_elsewhere or out / record_name).parent
    written_as = written_record(reduction, comparison=comparison, monte_carlo=monte,
                                record_folder=record_folder, derived=derived)
    record = written_as.text
    contents: dict[str, bytes | str] = {record_name: record} if record_name else {}
    contents[f"{base}.points.csv"] = points_csv(reduction)
    contents[f"{base}.report.txt"] = report
    drawn: dict[str, bytes] = {}
    if figures:
        from .report.figures import render_figures

        drawn = render_figures(reduction)
        for name, png in drawn.items():
            contents[f"{base}.{name}.png"] = png
    contents[f"{base}.report.html"] = _html_report(
        record, drawn, record_name or (record_elsewhere.name if record_elsewhere else None),
        written_as.document)
    return _write_set(out, contents, owned, inputs, record_elsewhere, record, report, written)




def _positive_count(text: str) -> int:
    """A whole number ≥ 1 on the command line."""
    try:
        value = int(text)
    except ValueError:
        value = 0
    if value < 1:
        raise argparse.ArgumentTypeError(f"'{text}' is not a whole number ≥ 1")
    return value


def _check_monte_carlo_options(trials: int | None, seed: int) -> None:
    """--monte-carlo takes 10 to 10⁶ trials and --seed a whole number ≥ 0 (bad input else)."""
    if trials is not None and not 10 <= trials <= 1_000_000:
        raise InputError(f"--monte-carlo takes 10 to 1000000 trials, got {trials}",
                         file="command line", column="--monte-carlo")
    if seed < 0:
        raise InputError(f"--seed takes a whole number ≥ 0, got {seed}", file="command line",
                         column="--seed")


def _write_set(out: Path, contents: dict, owned: list[str], inputs: list[Path],
               record_elsewhere: Path | None, record: str, report: str,
               written: list[Path] | None) -> list[Path]:
    """Write one output set as a whole (the record outside it when ``--json`` says so), note
    what was written, and print the report."""
    from .io.files import write_outputs

    done = write_outputs({record_elsewhere: record} if record_elsewhere else None, folder=out,
                         contents=contents, owned=owned, inputs=inputs)
    if written is not None:
        written.extend(done)
    sys.stdout.write(report)
    return done


def _html_report(record: str | bytes, figures: dict[str, bytes], record_name: str | None,
                 document: dict[str, Any] | None = None) -> str:
    """``RUN.report.html`` from the record's JSON text as written and the set's figures;
    ``document``: the record that text holds, when known (else the text is read back)."""
    import hashlib
    import json

    from .report.html import report_html

    data = record.encode("utf-8") if isinstance(record, str) else record
    return report_html(json.loads(data) if document is None else document, figures,
                       record_name, hashlib.sha256(data).hexdigest())


def _record_place(base: str, out: Path, json_path: Path | None) -> tuple[str | None, Path | None]:
    """(the record's name inside the output folder, or None; its path elsewhere, or None):
    ``--json`` inside the folder renames the record there, anywhere else moves it out."""
    if json_path is None:
        return f"{base}.record.json", None
    if os.path.realpath(json_path.parent) == os.path.realpath(out):
        return json_path.name, None
    return None, json_path


def series_file_name(series: str) -> str:
    """A series name as part of a file name; two names never give the same part.

    ASCII letters, digits, ``-`` and ``_`` are kept; every other byte of the UTF-8 name is
    written ``%XX``; the empty name (an unnamed series) is ``%``.

    Examples
    --------
    >>> series_file_name("run A"), series_file_name("run_A"), series_file_name("T=25/1")
    ('run%20A', 'run_A', 'T%3D25%2F1')
    """
    if not series:
        return "%"
    return "".join(chr(b) if chr(b).isascii() and (chr(b).isalnum() or chr(b) in "-_")
                   else f"%{b:02X}" for b in series.encode("utf-8"))


#: What ``--figures`` takes: every figure, the batch's overview only, or none.
FIGURE_CHOICES = ("all", "summary", "none")


def _figures_choice(figures: str | None, no_figures: bool) -> str:
    """``--figures``, with ``--no-figures`` as another way of saying ``none``."""
    if no_figures and figures not in (None, "none"):
        raise InputError(f"--no-figures and --figures {figures} contradict each other; give one",
                         file="command line", column="--figures")
    return "none" if no_figures else (figures or "all")


def _run_tables(paths: Sequence[Path]) -> tuple[list[Path], str, Path]:
    """The run tables named on the command line (a folder gives every ``*.csv`` in it), the
    batch's name and the folder its outputs go to by default (``NAME_activolt`` next to it)."""
    tables: list[Path] = []
    for path in paths:
        if path.is_dir():
            found = sorted(p for p in path.glob("*.csv")
                           if p.is_file() and not p.name.startswith("."))
            if not found:
                raise InputError("cannot read the run table: the folder holds no *.csv; check "
                                 "the path, or give a folder of run tables", file=str(path))
            tables += found
        else:
            tables.append(path)
    for i, table in enumerate(tables):
        for other in tables[:i]:
            if os.path.exists(table) and os.path.exists(other) and os.path.samefile(table,
                                                                                    other):
                raise InputError(f"the run table is given twice (also as {other}); give it once",
                                 file=str(table))
    first = paths[0]
    if len(paths) == 1 and first.is_dir():
        folder = Path(os.path.abspath(first))
        return tables, folder.name or "batch", folder.parent / f"{folder.name or 'batch'}_activolt"
    if len(paths) == 1:
        return tables, first.stem, first.parent / f"{first.stem}_activolt"
    return tables, "batch", first.parent / "batch_activolt"


def _progress(total: int, what: str) -> Any:
    """A tqdm bar on stderr, shown only on a terminal and only after two seconds."""
    from tqdm import tqdm

    terminal = sys.stderr is not None and getattr(sys.stderr, "isatty", lambda: False)()
    return tqdm(total=total, desc=what, unit=" series", delay=2.0, file=sys.stderr,
                disable=not terminal, leave=False)


def _reduce_batch(paths: Sequence[Path], meta: Path | None, model: str,
                  fixed: dict[str, float], out: Path | None, json_path: Path | None,
                  series: str | None, overrides: dict[str, object], figures: str,
                  exclude: tuple[str, ...] = (), trials: int | None = None, seed: int = 0,
                  written: list[Path] | None = None, runs: Sequence[Run] | None = None,
                  workers: int | None = None) -> int:
    """Every series of several tables, a folder or a table with a ``series`` column: one output
    set per series and ``NAME.summary.csv``; returns the exit status (1 when a series failed).
    ``workers``: how many processes reduce the series (default: one per CPU for a large
    batch).
    """
    from .data.runs import read_run, read_runs
    from .io.files import check_outputs, output_set
    from .io.summary import summary_csv
    from .procedures.many import series_name, series_reducer, summary_frame

    tables, name, default_out = _run_tables(paths)
    if json_path is not None:
        raise InputError("--json writes the record of one series; with several series each "
                         "record goes into the output folder (--out), or pick one with --series",
                         file="command line", column="--json")
    if exclude:
        raise InputError("--exclude names a reading of one series; pick the series with --series",
                         file="command line", column="--exclude")
    _check_monte_carlo_options(trials, seed)
    out = out if out is not None else default_out
    with _heap_set_aside() as settle:
        if runs is None:
            runs = []
            for table in tables:
                runs += ([read_run(table, meta, overrides=overrides, series=series)]
                         if series is not None
                         else list(read_runs(table, meta, overrides=overrides)))
        # one set per series, named RUN (a table without series names) or RUN.SERIES
        per_table: dict[Path, int] = {}
        for run in runs:
            per_table[run.path] = per_table.get(run.path, 0) + 1
        bases: list[str] = []
        seen: dict[str, Path] = {}
        for run in runs:
            label = series_name(run)
            alone = per_table[run.path] == 1 and label == "" and series is None
            base = run.path.stem if alone else f"{run.path.stem}.{series_file_name(label)}"
            if base in seen:
                raise InputError(f"two run tables give the output name '{base}' (also "
                                 f"{seen[base]}); rename one or reduce them separately",
                                 file=str(run.path))
            seen[base] = run.path
            bases.append(base)
        summary_names = [f"{name}.summary.csv", f"{name}.summary.png"]
        owned = [f"{base}.{kind}" for base in bases for kind in OUTPUT_KINDS] + summary_names
        inputs = list(dict.fromkeys(
            p for run in runs for p in (run.path, run.metadata_path) if p is not None))
        check_outputs(out, owned, [], inputs)
        reducer = series_reducer(model, fixed)
        job = _SeriesJob(tuple(runs), tuple(bases), reducer, out, figures, trials, seed)
        done: list[_SeriesDone] = []
        settle()  # the runs, read with the collector paused, set aside unscanned
        with output_set(folder=out, owned=owned, inputs=inputs) as staged:
            assert staged is not None
            done.extend(_each_series(job, staged, workers))
            summary = summary_frame([d.row for d in done])
            staged.write(summary_names[0], summary_csv(summary))
            if figures != "none":
                from .report.figures import render_summary_figure

                staged.write(summary_names[1], render_summary_figure(summary))
        rows, lines = [d.row for d in done], [d.line for d in done]
        failed = [d.failure for d in done if d.failure is not None]
        if written is not None:
            written.extend(out / name for d in done for name in d.names)
            written.extend(out / name for name in summary_names[:1 if figures == "none" else 2])
        sys.stdout.write(escape_controls(
            f"activolt: {len(rows) - len(failed)} of {len(rows)} series reduced "
            f"(model {reducer.model}); summary in {out / summary_names[0]}\n"
            + "".join(f"  {line}\n" for line in lines), keep="\n"))
    for failure in failed:
        print(escape_controls(failure), file=sys.stderr)
    return 1 if failed else 0


@dataclass(frozen=True)
class _SeriesJob:
    """What every series of a batch shares: the runs, their output names and the options."""

    runs: tuple[Run, ...]
    bases: tuple[str, ...]
    reducer: SeriesReducer
    out: Path
    figures: str
    trials: int | None
    seed: int
    #: The records' ``input`` of each table, once worked out (:meth:`_input_entry`).
    inputs: dict[tuple[Any, ...], dict[str, Any]] = field(default_factory=dict, compare=False)

    def __call__(self, indices: Sequence[int], staged: StagedFolder
                 ) -> Iterator[tuple[int, _SeriesDone]]:
        """Reduce the series ``indices`` together and write each one's outputs into
        ``staged``, yielding (index, result) as each is written. The chunk's derived
        properties are worked out together
        (:func:`~activolt.procedures.properties.derive_results_of_many`), then its records and
        points tables and text reports are made together
        (:func:`~activolt.io.record.build_records`, :func:`~activolt.io.record.points_csvs`,
        :func:`~activolt.report.text.format_reports`), the records written to text together
        (:func:`~activolt.io.json_layout.json_bytes`) and their HTML reports made together
        (:func:`~activolt.report.html.report_htmls`)."""
        import hashlib

        from .io.json_layout import json_bytes
        from .io.record import build_records, points_csvs
        from .procedures.properties import derive_results_of_many
        from .report.html import report_htmls
        from .report.text import format_report, format_reports

        outcomes = self.reducer.batch([self.runs[index] for index in indices])
        reduced = [outcome for outcome in outcomes if outcome.reduction is not None]
        reductions = [outcome.reduction for outcome in reduced]
        comparisons = [outcome.comparison for outcome in reduced]
        derived = derive_results_of_many(reductions)
        montes = [self._monte_carlo(reduction) for reduction in reductions]
        documents = build_records(
            reductions, comparisons=comparisons, monte_carlos=montes, record_folder=self.out,
            derived=derived,
            input_entries=[self._input_entry(reduction.run) for reduction in reductions])
        # the text reports written together (with a Monte Carlo, each with its own)
        reports = (format_reports(reductions, comparisons, derived) if self.trials is None
                   else [format_report(reduction, comparison=comparison, monte_carlo=monte,
                                       derived=results)
                         for reduction, comparison, monte, results
                         in zip(reductions, comparisons, montes, derived, strict=True)])
        parts = iter(zip(documents, points_csvs(reductions), reports, strict=True))
        made = [self._made(index, outcome, None if outcome.reduction is None else next(parts))
                for index, outcome in zip(indices, outcomes, strict=True)]
        kept = [outputs for _done, outputs in made if outputs is not None]
        # written, and named by their hash, as bytes
        records = json_bytes([o.document for o in kept])
        pages = report_htmls([o.document for o in kept], [o.figures for o in kept],
                             [f"{o.base}.record.json" for o in kept],
                             [hashlib.sha256(record).hexdigest() for record in records])
        written = iter(zip(records, pages, strict=True))
        for index, (done, outputs) in zip(indices, made, strict=True):
            if outputs is not None:
                outputs.write(*next(written), staged)
            yield index, done

    def _input_entry(self, run: Run) -> dict[str, Any]:
        """The records' ``input`` of ``run``'s table, resolved and hashed once for every
        series of the table (in each process)."""
        from .io.record import input_record

        key = (run.path, run.metadata_path, run.sha256)
        entry = self.inputs.get(key)
        if entry is None:
            entry = self.inputs[key] = input_record(run, self.out)
        return entry

    def _monte_carlo(self, reduction: Reduction) -> MonteCarloResult | None:
        """The Monte Carlo result of ``reduction`` when the batch asks for one (``--trials``)."""
        if self.trials is None:
            return None
        from .procedures.montecarlo import monte_carlo

        return monte_carlo(reduction.run, trials=self.trials, seed=self.seed,
                           reduction=reduction,
                           temperature_u_K=reduction.run.metadata.u_temperature_K,
                           progress=False)

    def _made(self, index: int, outcome: SeriesReduction,
              parts: tuple[dict[str, Any], str, str] | None
              ) -> tuple[_SeriesDone, _SeriesOutputs | None]:
        """Series ``index``'s result, and its outputs but for the record's text (None when the
        series was not reduced; ``parts``: its record, points table and text report, made with
        the chunk's)."""
        from .procedures.many import summary_row

        base = self.bases[index]
        row = summary_row(outcome, self.reducer.model)
        label = f"{outcome.run.path.name}" + (f", series '{outcome.series}'"
                                              if outcome.series else "")
        reduction = outcome.reduction
        if reduction is None or parts is None:
            return _SeriesDone(row, f"{label}: not reduced — {outcome.failure}", (
                f"activolt: {outcome.run.path}"
                + (f", series '{outcome.series}'" if outcome.series else "")
                + f": not reduced: {outcome.failure}"), ()), None
        document, points, report = parts
        # format_report escapes user text itself (its text is printable but for line breaks),
        # so the report is written as it comes rather than escaped a second time
        contents: dict[str, str | bytes] = {
            f"{base}.points.csv": points,
            f"{base}.report.txt": report if report.endswith("\n") else report + "\n"}
        drawn: dict[str, bytes] = {}
        if self.figures == "all":
            from .report.figures import render_figures

            drawn = render_figures(reduction)
            contents.update({f"{base}.{kind}.png": png for kind, png in drawn.items()})
        e0 = reduction.standard_potential
        names = (f"{base}.record.json", *contents, f"{base}.report.html")
        return _SeriesDone(row, (f"{label}: E° = {e0.nominal_value * 1e3:.4f} ± "
                                 f"{e0.std_dev * 1e3:.4f} mV (k = 1, {reduction.model.name})"),
                           None, names), _SeriesOutputs(base, document, contents, drawn)


@dataclass(frozen=True)
class _SeriesOutputs:
    """A reduced series' outputs before its record is written to text: the record, the files
    as they are written (points table, text report, figures) and the figures by kind."""

    base: str
    document: dict[str, Any]
    contents: dict[str, str | bytes]
    figures: dict[str, bytes]

    def write(self, record: bytes, page: str, staged: StagedFolder) -> None:
        """Write the record (``record``: its JSON text as bytes), the other outputs and the
        HTML report (``page``, made from the record as written and the figures) into
        ``staged``."""
        staged.write(f"{self.base}.record.json", record)
        for file_name, content in self.contents.items():
            staged.write(file_name, content)
        staged.write(f"{self.base}.report.html", page)


@dataclass(frozen=True)
class _SeriesDone:
    """One series of a batch done: its summary row, its line for the terminal, its failure
    line for stderr (None when reduced) and the names of the files it wrote."""

    row: dict[str, Any]
    line: str
    failure: str | None
    names: tuple[str, ...]


#: Below this many series a batch is reduced in this process: starting workers would cost
#: more than it saves.
_SERIES_PER_WORKER = 32


def _worker_count(requested: int | None, series: int) -> int:
    """How many worker processes reduce a batch: ``--workers``, else one per CPU this process
    may use, no more than one per :data:`_SERIES_PER_WORKER` series; 1 where processes cannot
    be forked."""
    import multiprocessing

    if "fork" not in multiprocessing.get_all_start_methods():
        return 1
    if requested is not None:
        return max(1, min(requested, series))
    cpus = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (
        os.cpu_count() or 1)
    return max(1, min(cpus, series // _SERIES_PER_WORKER))


def _each_series(job: _SeriesJob, staged: StagedFolder, workers: int | None
                 ) -> list[_SeriesDone]:
    """Every series done, in order, with a progress bar on a terminal; reduced in worker
    processes (forked, so that the runs are not copied) when the batch is large and the
    machine has several CPUs. The result of a series does not depend on where it was
    reduced. Called with the batch's heap set aside (:func:`_heap_set_aside`)."""
    count = len(job.runs)
    processes = _worker_count(workers, count)
    done: list[_SeriesDone | None] = [None] * count
    with _progress(count, "reducing") as bar:
        size = _chunk_size(count, processes)
        finished = ((done for chunk in _chunks(count, size) for done in job(chunk, staged))
                    if processes == 1 else _in_workers(job, staged, processes, size))
        for index, result in finished:
            done[index] = result
            bar.update(1)
    return [result for result in done if result is not None]


@contextlib.contextmanager
def _heap_set_aside() -> Iterator[Callable[[], None]]:
    """The cyclic garbage collector paused while a batch's runs are made, and what exists when
    the function given is called (``settle()``: the runs, the modules) set aside (gc.freeze)
    for as long as the batch lasts, unscanned: ten thousand runs are about a million objects,
    which each full collection would go over — and, in the worker processes, write to the
    pages they share with this one. The young objects of each series are collected as
    before. It stays set aside until the batch's summary, file names and lines are made: the
    first full collection after it is put back would go over all of it. A process that froze
    objects of its own is left as it is (the collector has one permanent generation, which
    cannot be unfrozen in part)."""
    import gc

    freezing, collecting = gc.get_freeze_count() == 0, gc.isenabled()
    gc.disable()
    settled = False

    def settle() -> None:
        nonlocal settled
        if not settled:
            settled = True
            if freezing:
                gc.freeze()
            if collecting:
                gc.enable()

    try:
        yield settle
    finally:
        settle()
        if freezing:
            gc.unfreeze()


def _chunk_size(count: int, processes: int) -> int:
    """How many series a chunk holds: :data:`~activolt.procedures.many.BATCH_SIZE`, up to four
    times that in a batch large enough to give each process eight chunks or more (the
    outputs of a chunk are made together, a larger chunk for less a series; enough chunks
    a process that the last one ends soon after the others)."""
    from .procedures.many import BATCH_SIZE

    return max(BATCH_SIZE, min(4 * BATCH_SIZE, count // (8 * processes)))


def _chunks(count: int, size: int, taken: Any = None, processes: int = 1) -> Iterator[range]:
    """The chunks of ``size`` series of ``0 … count − 1``, each reduced and written together
    (the result of a series does not depend on its chunk): every chunk in order, or, with
    ``taken`` (a shared count of the series the ``processes`` worker processes have taken),
    the next chunk no worker has taken yet (:func:`_next_chunk`), until none is left — a
    worker slowed by the machine takes fewer."""
    if taken is None:
        for start in range(0, count, size):
            yield range(start, min(start + size, count))
        return
    while chunk := _next_chunk(taken, count, size, processes):
        yield chunk


def _next_chunk(taken: Any, count: int, size: int, processes: int) -> range:
    """The next series not yet taken (``taken``: the shared count of series taken), empty
    when none is left: ``size`` of them, fewer as the batch nears its end — no more than a
    share of what is left, and no fewer than :data:`~activolt.procedures.many.BATCH_SIZE` —
    so that the workers end close together rather than one idling through another's last
    large chunk."""
    from .procedures.many import BATCH_SIZE

    with taken.get_lock():
        start = taken.value
        share = -(-(count - start) // (2 * processes))
        end = min(count, start + max(min(size, share), BATCH_SIZE))
        taken.value = max(start, end)
    return range(start, end)


def _in_workers(job: _SeriesJob, staged: StagedFolder, processes: int, size: int
                ) -> Iterator[tuple[int, _SeriesDone]]:
    """(index, result) of every series as the worker processes finish them. Each worker takes
    the next chunk not yet taken (:func:`_chunks`) and sends each chunk's results through its
    own pipe. A worker that ends without finishing (killed, out of memory) stops the batch
    with an InputError rather than leaving it waiting; on any exit the workers still running
    are stopped."""
    import multiprocessing

    from .io.files import written_back_meanwhile

    context = multiprocessing.get_context("fork")
    started: list[tuple[Any, Any]] = []
    # The modules that write a series' outputs, imported once here for every worker to inherit
    # (each worker would otherwise import them after the fork, about half a second each), and
    # scipy's interpolation, which the comparison with published γ± imports when first used.
    import scipy.interpolate  # noqa: F401

    from .io import record  # noqa: F401
    from .procedures import properties  # noqa: F401
    from .report import html, text  # noqa: F401
    for stream in (sys.stdout, sys.stderr):  # not to be written again by a worker on its exit
        if stream is not None:
            stream.flush()
    taken = context.Value("q", 0)  # how many series the workers have taken
    try:
        for _ in range(processes):
            receiver, sender = context.Pipe(duplex=False)
            process = context.Process(
                target=_worker, args=(job, staged, size, taken, processes, sender),
                daemon=True)
            process.start()
            sender.close()
            started.append((process, receiver))
        reading = {receiver: process for process, receiver in started}
        # (the thread that writes the files back starts after the workers are forked)
        with written_back_meanwhile(staged):
            yield from _received(reading)
    finally:
        for process, receiver in started:
            if process.is_alive():
                process.terminate()
            process.join()
            receiver.close()


def _received(reading: dict[Any, Any]) -> Iterator[tuple[int, _SeriesDone]]:
    """(index, result) of every series as the worker processes send them (``reading``: each
    worker's pipe and process), until every worker has ended; a worker that ended with an
    error stops the batch."""
    from multiprocessing.connection import wait

    while reading:
        for receiver in wait(list(reading)):
            try:
                message = receiver.recv()
            except EOFError:  # the worker has sent everything, or ended early
                process = reading.pop(receiver)
                process.join()
                if process.exitcode != 0:
                    raise InputError(
                        f"a worker process ended unexpectedly (exit status "
                        f"{process.exitcode}; killed, or out of memory?); nothing was "
                        "written — run again, or with --workers 1",
                        file="command line", column="--workers") from None
                continue
            if isinstance(message, str):
                raise RuntimeError(f"in a worker process: {message}")
            yield from message


def _worker(job: _SeriesJob, staged: StagedFolder, size: int, taken: Any, processes: int,
            sender: Any) -> None:
    """A worker process (one of ``processes``): chunks of up to ``size`` series not yet taken
    (:func:`_chunks`; ``taken``: the count of series taken, shared by the workers), the
    results of each chunk sent together when it is done (one message, not one a series). It
    leaves Ctrl-C to the main process, which stops the batch and the workers; a failure is
    sent as its traceback."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    try:
        for chunk in _chunks(len(job.runs), size, taken, processes):
            sender.send(list(job(chunk, staged)))
    except Exception:  # a defect: shown by the main process, which stops the batch
        import traceback

        sender.send(traceback.format_exc())
    finally:
        sender.close()


def _reduce_command(args: argparse.Namespace, written: list[Path]) -> int:
    """``activolt reduce``: one series as before, or a batch (several tables, a folder, or a
    table with several series and no ``--series``); returns the exit status."""
    overrides = {k: getattr(args, k) for k in
                 ("electrolyte", "electrons", "temperature_C", "standard_pressure_kPa",
                  "cell", "slope_factor", "volt_unit")}
    figures = _figures_choice(args.figures, args.no_figures)
    common = (args.meta, args.model, dict(args.fix), args.out, args.json, args.series, overrides)
    options = {"exclude": tuple(args.exclude), "trials": args.monte_carlo, "seed": args.seed,
               "written": written}
    paths: list[Path] = args.run
    study = args.study or args.reference_temperature_C is not None
    study_options = {"reference_temperature_C": (25.0 if args.reference_temperature_C is None
                                                 else args.reference_temperature_C),
                     **options}
    if study:
        return _study(paths, *common, figures != "none", **study_options)
    runs = None
    if len(paths) == 1 and not paths[0].is_dir():
        if args.series is None:
            from .data.runs import read_runs

            runs = read_runs(paths[0], args.meta, overrides=overrides)
        if args.series is not None or len(runs) == 1:
            if _spans_setpoints(paths[0], args.meta, overrides, args.series, runs):
                return _study(paths, *common, figures != "none", **study_options)
            _reduce(paths[0], *common, figures == "all", **options)
            return 0
    return _reduce_batch(paths, *common, figures, runs=runs, workers=args.workers, **options)


def _spans_setpoints(path: Path, meta: Path | None, overrides: dict[str, object],
                     series: str | None, runs: Sequence[Run] | None) -> bool:
    """Whether the one run of ``path`` has rows more than 2 K apart (a temperature study)."""
    from .procedures.dilution import MAX_TEMPERATURE_SPREAD_K

    if series is not None:
        from .data.runs import read_run

        run = read_run(path, meta, overrides=overrides, series=series)
    else:
        assert runs is not None
        run = runs[0]
    t = run.points["temperature_K"]
    return bool(t.max() - t.min() > MAX_TEMPERATURE_SPREAD_K)


def _study(paths: Sequence[Path], meta: Path | None, model: str, fixed: dict[str, Any],
           out: Path | None, json_path: Path | None, series: str | None,
           overrides: dict[str, object], figures: bool, reference_temperature_C: float = 25.0,
           exclude: tuple[str, ...] = (), trials: int | None = None, seed: int = 0,
           written: list[Path] | None = None) -> int:
    """A temperature study of one table (rows at several setpoints) or of several tables
    (``--study``): one output set ``NAME.*`` (the record with its ``temperature_study``
    section, the report, every reading with its isotherm, γ± against T, the figures)."""
    from .constants import ZERO_CELSIUS_K
    from .data.runs import Exclusion, exclude_points, read_run, read_runs
    from .io.files import check_outputs
    from .io.record import study_gamma_csv, study_points_csv, study_record_json
    from .procedures.temperature import study_temperatures
    from .report.temperature import format_temperature_report

    tables, name, default_out = _run_tables(paths)
    if trials is not None:
        raise InputError("--monte-carlo is not available for a temperature study; reduce an "
                         "isotherm alone for it", file="command line", column="--monte-carlo")
    if "," in model:
        raise InputError(f"--model {model}: a temperature study takes one model or 'all'",
                         file="command line", column="--model")
    if exclude and len(tables) > 1:
        raise InputError("--exclude names a reading of one table; a study of several tables "
                         "cannot say which", file="command line", column="--exclude")
    if len(tables) > 1 or paths[0].is_dir():
        name, default_out = "study", Path(os.path.dirname(os.path.abspath(tables[0]))) / \
            "study_activolt"
    base = name if series is None or len(tables) > 1 else f"{name}.{series_file_name(series)}"
    out = out if out is not None else default_out
    owned = list(dict.fromkeys(f"{base}.{kind}" for kind in (*STUDY_OUTPUT_KINDS,
                                                             *OUTPUT_KINDS)))
    record_name, record_elsewhere = _record_place(base, out, json_path)
    runs: list[Run] = []
    for table in tables:
        runs += ([read_run(table, meta, overrides=overrides, series=series)]
                 if series is not None else list(read_runs(table, meta, overrides=overrides)))
    inputs = list(dict.fromkeys(
        p for run in runs for p in (run.path, run.metadata_path) if p is not None))
    check_outputs(out, [*owned, *([record_name] if record_name else [])],
                  [record_elsewhere] if record_elsewhere else [], inputs)
    if exclude:
        exclusions = [Exclusion.parse(text) for text in exclude]
        runs = [exclude_points(run, exclusions) for run in runs]
    if model == "all":
        from .activity import MODELS

        fixed = _fixed_per_model(list(MODELS), fixed) if fixed else {}
    study = study_temperatures(runs, model=model, fixed=fixed or None,
                               reference_temperature_K=reference_temperature_C + ZERO_CELSIUS_K)
    report = escape_controls(format_temperature_report(study), keep="\n")
    record_folder = (record_elsewhere or out / str(record_name)).parent
    record = study_record_json(study, record_folder=record_folder)
    contents: dict[str, bytes | str] = {record_name: record} if record_name else {}
    contents[f"{base}.points.csv"] = study_points_csv(study)
    contents[f"{base}.gamma_temperature.csv"] = study_gamma_csv(study)
    contents[f"{base}.report.txt"] = report
    drawn: dict[str, bytes] = {}
    if figures:
        from .report.figures import render_temperature_figures

        drawn = render_temperature_figures(study.standard_potential_fit,
                                           [iso.reduction for iso in study.isotherms])
        for kind, png in drawn.items():
            contents[f"{base}.{kind}.png"] = png
    contents[f"{base}.report.html"] = _html_report(
        record, drawn, record_name or (record_elsewhere.name if record_elsewhere else None))
    _write_set(out, contents, owned, inputs, record_elsewhere, record, report, written)
    return 0


def _calibration_history(folder: Path, current_sha256: str) -> list[dict[str, Any]]:
    """The calibration records in ``folder`` (``*.record.json``), those of the current batch
    table (same SHA-256: an earlier run of the same command) left out."""
    from .io.record import CALIBRATION_KIND, load_record

    if not folder.is_dir():
        raise InputError("the history is not a folder; give the folder of earlier calibration "
                         "records", file=str(folder), column="--history")
    records = []
    for path in sorted(folder.glob("*.record.json")):
        record = load_record(path)
        if record.get("record_kind") != CALIBRATION_KIND:
            continue
        if (record.get("input") or {}).get("sha256") == current_sha256:
            continue
        records.append(record)
    return records


def _calibrate_command(args: argparse.Namespace, written: list[Path]) -> int:
    """``activolt calibrate``: one output set for a batch of reference electrodes; exit status
    0 when every electrode passes, 3 when any fails."""
    import hashlib

    from .io.files import check_outputs, write_outputs
    from .io.record import (
        build_calibration_record,
        calibration_electrodes_csv,
        calibration_points_csv,
        json_text,
    )
    from .procedures.calibration import calibrate, electrode_history
    from .report.certificate import certificate_html
    from .rounding import format_potential

    batch_path: Path = args.batch
    batch = calibrate(batch_path, args.meta)
    run = batch.run
    name = batch_path.stem
    out = args.out if args.out is not None else batch_path.parent / f"{name}_activolt"
    owned = [f"{name}.{kind}" for kind in CALIBRATION_OUTPUT_KINDS]
    inputs = [p for p in (getattr(run, "path", batch_path), getattr(run, "metadata_path", None))
              if p is not None]
    check_outputs(out, owned, [], inputs)
    histories = None
    if args.history is not None:
        earlier = _calibration_history(args.history, getattr(run, "sha256", ""))
        histories = electrode_history(earlier, current=batch)
    record = build_calibration_record(batch, record_folder=out, histories=histories)
    record_text = json_text(record)
    record_name = f"{name}.record.json"
    contents: dict[str, bytes | str] = {
        record_name: record_text,
        f"{name}.electrodes.csv": calibration_electrodes_csv(record),
        f"{name}.points.csv": calibration_points_csv(batch),
        f"{name}.certificate.html": certificate_html(
            record, hashlib.sha256(record_text.encode("utf-8")).hexdigest(), record_name),
    }
    if histories:
        from .report.figures import render_control_charts

        chart = render_control_charts(histories)
        if chart is not None:
            contents[f"{name}.control_chart.png"] = chart
    done = write_outputs(folder=out, contents=contents, owned=owned, inputs=inputs)
    written.extend(done)
    acceptance = record.get("acceptance") or {}
    tolerance = acceptance.get("tolerance_V")
    lines = [f"activolt calibrate: {name}: {len(record['electrodes'])} electrodes, method "
             f"{record.get('method')}, tolerance "
             + ("not stated" if tolerance is None else f"±{tolerance * 1e3:.3f} mV")
             + f" about the {acceptance.get('reference')} ({acceptance.get('decision_rule')} "
             "rule)"]
    width = max(len(str(e["electrode"])) for e in record["electrodes"])
    symbol = "E°" if record.get("method") == "hydrogen" else "E"
    for e in record["electrodes"]:
        value, expanded = format_potential(e["standard_potential_V"]["value"],
                                           e["expanded_uncertainty_V"])
        deviation = e.get("deviation_V")
        lines.append(f"  {e['electrode']!s:<{width}}  {symbol} = {value} ± {expanded} mV "
                     f"(k = {e['coverage_factor']:.2f})  deviation "
                     + ("—" if deviation is None else f"{deviation * 1e3:+.4f} mV")
                     + f"  {e['verdict']}")
    failed = [str(e["electrode"]) for e in record["electrodes"] if e["verdict"] != "pass"]
    lines.append(f"{len(record['electrodes']) - len(failed)} pass, {len(failed)} fail"
                 + (f": {', '.join(failed)}" if failed else ""))
    if histories is not None and f"{name}.control_chart.png" not in contents:
        lines.append("  history: no electrode has four calibrations yet; no control chart")
    for history in (histories or {}).values():
        if history.flagged:
            lines.append(f"  history: {history.electrode}: " + "; ".join(history.reasons))
    for warning in record.get("warnings") or []:
        lines.append(f"  warning: {warning}")
    sys.stdout.write(escape_controls("\n".join(lines) + "\n", keep="\n"))
    return 3 if failed else 0


def _private_matplotlib_config() -> None:
    """Point MPLCONFIGDIR at a private temporary folder when matplotlib's default config or
    cache folder cannot be written (matplotlib would otherwise warn on stderr)."""
    if "MPLCONFIGDIR" in os.environ or "matplotlib" in sys.modules:
        return
    try:
        home = Path.home()
    except (RuntimeError, KeyError):
        home = None
    if sys.platform.startswith(("linux", "freebsd")) and home is not None:
        folders = [Path(os.environ.get("XDG_CONFIG_HOME") or home / ".config") / "matplotlib",
                   Path(os.environ.get("XDG_CACHE_HOME") or home / ".cache") / "matplotlib"]
    else:
        folders = [] if home is None else [home / ".matplotlib"]
    writable = bool(folders)
    for folder in folders:
        try:
            folder.mkdir(parents=True, exist_ok=True)
            writable &= folder.is_dir() and os.access(folder, os.W_OK)
        except OSError:
            writable = False
    if not writable:
        import atexit
        import shutil
        import tempfile

        private = tempfile.mkdtemp(prefix="activolt-matplotlib-")
        atexit.register(shutil.rmtree, private, ignore_errors=True)
        os.environ["MPLCONFIGDIR"] = private


def _fixed_per_model(names: list[str], fixed: dict[str, float]) -> dict[str, dict[str, float]]:
    """--fix values for each compared model that has the parameter; one no model has is an
    error."""
    from .activity import get_model

    per_model: dict[str, dict[str, float]] = {}
    for parameter, value in fixed.items():
        owners = [n for n in names if parameter in get_model(n).parameter_names]
        if not owners:
            raise InputError(f"no compared model has a parameter '{parameter}'",
                             file="command line", column="--fix")
        for name in owners:
            per_model.setdefault(name, {})[parameter] = value
    return per_model


def _cell(diagram: str, temperature_C: float, json_path: Path | None,
          standard_pressure_kPa: float = 100.0) -> list[Path]:
    import json

    from .chemistry.cells import DiagramError, cell_summary, format_cell_summary
    from .constants import ATMOSPHERE_PA, STANDARD_PRESSURE_PA, ZERO_CELSIUS_K

    if not 0.0 <= temperature_C <= 100.0:
        raise InputError(f"temperature {temperature_C:g} °C is outside liquid water (0–100 °C)",
                         file="command line", column="--temperature-C")
    if standard_pressure_kPa * 1e3 not in (STANDARD_PRESSURE_PA, ATMOSPHERE_PA):
        raise InputError(f"standard pressure {standard_pressure_kPa:g} kPa: must be 100 (IUPAC) "
                         "or 101.325 (1 atm)", file="command line",
                         column="--standard-pressure-kPa")
    try:
        summary = cell_summary(diagram, temperature_C + ZERO_CELSIUS_K,
                               standard_pressure_kPa * 1e3)
    except DiagramError as error:
        start = max(0, error.position - 12)
        raise InputError(f"{error.message} (at character {error.position + 1}: "
                         f"'{diagram[start:error.position]}▶{diagram[error.position:][:12]}')",
                         file="command line, the cell diagram") from None
    text = escape_controls(format_cell_summary(summary), keep="\n")
    written = []
    if json_path is not None:
        from .io.files import write_outputs

        written = write_outputs({json_path: json.dumps(summary, ensure_ascii=False, indent=2)
                                 + "\n"})
    sys.stdout.write(text if text.endswith("\n") else text + "\n")
    return written


#: Library argument names and the command-line options that set them.
_OPTIONS = {"model": "--model", "fixed": "--fix",
            "reference_temperature_K": "--reference-temperature-C",
            "tolerance_K": "--study"}


def _one_line(error: InputError) -> str:
    """The error as one line; a command-line option is named as an option, not a column."""
    if error.column in _OPTIONS and error.file is None:
        error = InputError(error.problem, column=_OPTIONS[error.column], line=error.line)
    if error.column is not None and error.column.startswith("--"):
        where = "command line" if error.file in (None, "command line") else error.file
        error = InputError(error.problem, file=f"{where}, option '{error.column}'",
                           line=error.line)
    return " ".join(part.strip() for part in str(error).splitlines())


class _Terminated(KeyboardInterrupt):
    """SIGTERM, raised as an exception so that the run stops the way Ctrl-C stops it."""


def _on_sigterm(_signum: int, _frame: object) -> None:
    raise _Terminated


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status.

    Ctrl-C (exit status 130) and SIGTERM (143) stop the run with one line on stderr; outputs are
    then either not written at all or written whole, and no temporary file is left.
    """
    in_main_thread = threading.current_thread() is threading.main_thread()
    previous = signal.signal(signal.SIGTERM, _on_sigterm) if in_main_thread else None
    written: list[Path] = []
    status = 0
    command_token = None
    try:
        args = _parser().parse_args(argv)
        if args.command != "cell":
            _private_matplotlib_config()  # lmfit imports matplotlib
            from .io.record import COMMAND_LINE  # named in every record written

            command_token = COMMAND_LINE.set(
                ("activolt", *(sys.argv[1:] if argv is None else argv)))
        if args.command == "demo":
            run_path = Path(str(files("activolt") / "sample_data" / DEMO_RUN))
            _reduce(run_path, None, "hueckel", {}, args.out, None, None, {}, True,
                    written=written)
        elif args.command == "calibrate":
            status = _calibrate_command(args, written)
        elif args.command == "cell":
            written = _cell(args.diagram, args.temperature_C, args.json,
                            args.standard_pressure_kPa)
        elif args.command != "reduce":
            module = next(m for m in _command_modules() if m.NAME == args.command)
            status = module.run(args, written)
        else:
            status = _reduce_command(args, written)
        if len(written) > 20:  # a batch: the folder and the count, not every file
            print(escape_controls(f"\nwritten: {len(written)} files into {written[0].parent}",
                                  keep="\n"))
        elif written:
            print(escape_controls("\nwritten:\n" + "\n".join(f"  {p}" for p in written),
                                  keep="\n"))
        if getattr(args, "archive_to", None) is not None and written:
            from .commands.archive import archive_written

            archive_written(written, args.archive_to or None)
    except SystemExit as stop:  # --help and --version
        return int(stop.code or 0)
    except BrokenPipeError:  # output piped into a command that stopped reading
        return 0
    except InputError as error:
        print(f"activolt: error: {escape_controls(_one_line(error))}", file=sys.stderr)
        return 2
    except FitError as error:
        hint = (" (on the command line: --fix NAME=VALUE)"
                if "at a given value" in str(error) else "")
        print(f"activolt: the fit could not be done: {escape_controls(str(error))}{hint}",
              file=sys.stderr)
        return 1
    except KeyboardInterrupt as stop:
        what = "terminated" if isinstance(stop, _Terminated) else "interrupted"
        outcome = ("after the outputs were written" if written
                   else "; nothing was written (earlier outputs are unchanged)")
        print(f"activolt: {what}{'' if outcome.startswith(';') else ' '}{outcome}",
              file=sys.stderr)
        return 143 if isinstance(stop, _Terminated) else 130
    finally:
        if command_token is not None:
            command_token.var.reset(command_token)
        if in_main_thread:
            signal.signal(signal.SIGTERM, previous if previous is not None else signal.SIG_DFL)
    return status


def run_command() -> NoReturn:
    """The ``activolt`` command: :func:`main` with the process's arguments, then the exit.

    The process ends as soon as Python's exit handlers have run and the standard streams are
    flushed, without Python freeing, one by one, the objects of the modules imported (numpy,
    scipy, pandas, matplotlib) and of the work done: 0.15–0.3 s at every exit, more after a
    large batch. The handlers registered while :func:`main` runs (the removal of a private
    Matplotlib folder, the clean-up of worker processes) run first, as the last registered
    runs first. An exception that :func:`main` lets through ends it with status 1, after
    its traceback, as Python would.
    """
    import atexit

    status = [1]  # main's status once it returns
    atexit.register(_end_now, status)
    status[0] = main()
    sys.exit(status[0])


def _end_now(status: list[int]) -> NoReturn:
    """End the process with ``status[0]``, the standard streams flushed (a stream that can no
    longer be written, a closed pipe, is left)."""
    for stream in (sys.stdout, sys.stderr):
        if stream is not None:
            with contextlib.suppress(OSError, ValueError):
                stream.flush()
    os._exit(status[0])


if __name__ == "__main__":  # pragma: no cover
    run_command()
