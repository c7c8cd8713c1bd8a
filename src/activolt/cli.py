"""The ``activolt`` command line: a thin layer over the library.

Exit status: 0 success, 2 bad input (one line on stderr naming file, line and column), 1 a fit
that could not be done (with the reason).
"""

from __future__ import annotations

import argparse
import os
import signal
import sys
import threading
from collections.abc import Sequence
from importlib.resources import files
from pathlib import Path
from typing import NoReturn

from . import __version__
from .errors import FitError, InputError
from .safe_text import escape_controls

DEMO_RUN = "kestrel_hcl_25C.csv"
#: The files of one output set, after ``RUN.`` (or ``RUN.SERIES.`` when a series is picked).
OUTPUT_KINDS = ("record.json", "points.csv", "report.txt", "extrapolation.png", "residuals.png",
                "gamma.png")


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage mistake is one line and exit status 2."""

    def error(self, message: str) -> NoReturn:
        raise InputError(f"{message} (see 'activolt {self.prog.split()[-1]} --help')"
                         if " " in self.prog else f"{message} (see 'activolt --help')")


def _fixed_value(text: str) -> tuple[str, float]:
    name, sep, value = text.partition("=")
    try:
        if not sep:
            raise ValueError
        return name.strip(), float(value)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"'{text}' is not NAME=VALUE, e.g. a_angstrom=4.3") from None


def _slope_value(text: str) -> str | float:
    if text == "fit":
        return text
    try:
        return float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"'{text}' is neither 'fit' nor a number") from None


def _parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="activolt", description="Standard potentials and mean ionic activity "
                     "coefficients from EMF dilution series of cells without liquid junction.")
    parser.add_argument("--version", action="version", version=f"activolt {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    reduce = commands.add_parser("reduce", help="reduce a run to E° and γ±")
    reduce.add_argument("run", type=Path, help="run table (CSV)")
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
    reduce.add_argument("--no-figures", action="store_true", help="skip the figures")

    cell = commands.add_parser("cell", help="a cell's reaction, n, E°, ΔG° and K from its "
                               "diagram")
    cell.add_argument("diagram", help="IUPAC cell diagram in quotes")
    cell.add_argument("--temperature-C", type=float, dest="temperature_C", default=25.0,
                      help="temperature in °C; default 25")
    cell.add_argument("--json", type=Path, help="also write the summary as JSON here")

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
    from .io.files import check_outputs, write_outputs
    from .io.record import points_csv, record_json
    from .procedures.dilution import reduce_run
    from .report.text import format_report

    run = read_run(run_path, meta, overrides=overrides, series=series)
    # Where everything goes, checked before any work: never onto an input, never mixed.
    stem = run_path.stem
    base = stem if series is None else f"{stem}.{series_file_name(series)}"
    out = out if out is not None else run_path.parent / f"{stem}_activolt"
    owned = [f"{base}.{kind}" for kind in OUTPUT_KINDS]
    record_name, record_elsewhere = f"{base}.record.json", None
    if json_path is not None:
        if os.path.realpath(json_path.parent) == os.path.realpath(out):
            record_name = json_path.name
        else:
            record_name, record_elsewhere = None, json_path
    inputs = [run.path, *([run.metadata_path] if run.metadata_path is not None else [])]
    check_outputs(out, [*owned, *([record_name] if record_name else [])],
                  [record_elsewhere] if record_elsewhere else [], inputs)
    exclusions = [Exclusion.parse(text) for text in exclude]
    if trials is not None and not 10 <= trials <= 1_000_000:
        raise InputError(f"--monte-carlo takes 10 to 1000000 trials, got {trials}",
                         file="command line", column="--monte-carlo")
    if seed < 0:
        raise InputError(f"--seed takes a whole number ≥ 0, got {seed}", file="command line",
                         column="--seed")
    comparison = None
    if model == "all" or "," in model:
        from .activity import MODELS
        from .procedures.model_choice import compare_models
        from .report.model_table import format_model_comparison

        names = list(MODELS) if model == "all" else [m.strip() for m in model.split(",")]
        if exclusions:
            run = exclude_points(run, exclusions)
        comparison = compare_models(run, names, _fixed_per_model(names, fixed))
        reduction = comparison.recommended_reduction
        if reduction is None:
            raise FitError(comparison.warnings[-1])
        report = format_report(reduction) + "\n" + format_model_comparison(comparison)
    else:
        reduction = reduce_run(run, model=model, fixed=fixed, exclude=exclusions)
        report = format_report(reduction)
    monte = None
    if trials is not None:
        from .procedures.montecarlo import monte_carlo
        from .report.text import format_monte_carlo

        monte = monte_carlo(reduction.run, trials=trials, seed=seed, reduction=reduction,
                            temperature_u_K=run.metadata.u_temperature_K)
        report += "\n" + format_monte_carlo(monte, reduction)
    report = escape_controls(report if report.endswith("\n") else report + "\n", keep="\n")
    record_folder = (record_elsewhere or out / record_name).parent
    record = record_json(reduction, comparison=comparison, monte_carlo=monte,
                         record_folder=record_folder)
    contents: dict[str, bytes | str] = {record_name: record} if record_name else {}
    contents[f"{base}.points.csv"] = points_csv(reduction)
    contents[f"{base}.report.txt"] = report
    if figures:
        from .report.figures import render_figures

        for name, png in render_figures(reduction).items():
            contents[f"{base}.{name}.png"] = png
    done = write_outputs({record_elsewhere: record} if record_elsewhere else None, folder=out,
                         contents=contents, owned=owned, inputs=inputs)
    if written is not None:
        written.extend(done)
    sys.stdout.write(report)
    return done


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


def _cell(diagram: str, temperature_C: float, json_path: Path | None) -> list[Path]:
    import json

    from .chemistry.cells import DiagramError, cell_summary, format_cell_summary
    from .constants import ZERO_CELSIUS_K

    if not 0.0 <= temperature_C <= 100.0:
        raise InputError(f"temperature {temperature_C:g} °C is outside liquid water (0–100 °C)",
                         file="command line", column="--temperature-C")
    try:
        summary = cell_summary(diagram, temperature_C + ZERO_CELSIUS_K)
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
_OPTIONS = {"model": "--model", "fixed": "--fix"}


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
    try:
        args = _parser().parse_args(argv)
        if args.command != "cell":
            _private_matplotlib_config()  # lmfit imports matplotlib
        if args.command == "demo":
            run_path = Path(str(files("activolt") / "sample_data" / DEMO_RUN))
            _reduce(run_path, None, "hueckel", {}, args.out, None, None, {}, True,
                    written=written)
        elif args.command == "cell":
            written = _cell(args.diagram, args.temperature_C, args.json)
        else:
            overrides = {k: getattr(args, k) for k in
                         ("electrolyte", "electrons", "temperature_C", "standard_pressure_kPa",
                          "cell", "slope_factor", "volt_unit")}
            _reduce(args.run, args.meta, args.model, dict(args.fix), args.out,
                    args.json, args.series, overrides, not args.no_figures,
                    tuple(args.exclude), args.monte_carlo, args.seed, written=written)
        if written:
            print(escape_controls("\nwritten:\n" + "\n".join(f"  {p}" for p in written),
                                  keep="\n"))
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
        if in_main_thread:
            signal.signal(signal.SIGTERM, previous if previous is not None else signal.SIG_DFL)
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
