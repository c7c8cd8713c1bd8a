"""The ``activolt`` command line: a thin layer over the library.

Exit status: 0 success, 2 bad input (one line on stderr naming file, line and column), 1 a fit
that could not be done (with the reason).
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from importlib.resources import files
from pathlib import Path
from typing import TYPE_CHECKING, NoReturn

from . import __version__
from .errors import FitError, InputError

if TYPE_CHECKING:
    from .reduce import Reduction

DEMO_RUN = "kestrel_hcl_25C.csv"


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
            trials: int | None = None, seed: int = 0) -> list[Path]:
    from .records import points_csv, record_json
    from .reduce import reduce_run
    from .runs import Exclusion, exclude_points, read_run

    run = read_run(run_path, meta, overrides=overrides, series=series)
    exclusions = [Exclusion.parse(text) for text in exclude]
    if trials is not None and not 10 <= trials <= 1_000_000:
        raise InputError(f"--monte-carlo takes 10 to 1000000 trials, got {trials}",
                         file="command line", column="--monte-carlo")
    if seed < 0:
        raise InputError(f"--seed takes a whole number ≥ 0, got {seed}", file="command line",
                         column="--seed")
    comparison = None
    if model == "all" or "," in model:
        from .model_choice import compare_models
        from .models import MODELS
        from .report.model_table import format_model_comparison

        names = list(MODELS) if model == "all" else [m.strip() for m in model.split(",")]
        if exclusions:
            run = exclude_points(run, exclusions)
        comparison = compare_models(run, names, _fixed_per_model(names, fixed))
        reduction = comparison.recommended_reduction
        if reduction is None:
            raise FitError(comparison.warnings[-1])
        report = reduction.report() + "\n" + format_model_comparison(comparison)
    else:
        reduction = _with_model_choice_reminder(
            reduce_run(run, model=model, fixed=fixed, exclude=exclusions))
        report = reduction.report()
    monte = None
    if trials is not None:
        from .montecarlo import monte_carlo
        from .report.text import format_monte_carlo

        monte = monte_carlo(reduction.run, trials=trials, seed=seed, reduction=reduction,
                            temperature_u_K=run.metadata.u_temperature_K)
        report += "\n" + format_monte_carlo(monte, reduction)
    stem = run_path.stem
    out = out if out is not None else run_path.parent / f"{stem}_activolt"
    outputs: dict[Path, bytes | str] = {
        (json_path or out / f"{stem}.record.json"): record_json(
            reduction, comparison=comparison, monte_carlo=monte),
        out / f"{stem}.points.csv": points_csv(reduction),
        out / f"{stem}.report.txt": report,
    }
    if figures:
        from .report.figures import render_figures

        for name, png in render_figures(reduction).items():
            outputs[out / f"{stem}.{name}.png"] = png
    written = _write_all(outputs)
    sys.stdout.write(report)
    return written


#: Ionic strength beyond which the published models' extrapolations part noticeably [mol/kg].
MODEL_CHOICE_REMINDER_IONIC_STRENGTH = 0.1


def _with_model_choice_reminder(reduction: Reduction) -> Reduction:
    """A single-model reduction over a wide range says that u(E°) leaves out the choice of model
    (simulated runs to 1 mol/kg: Hückel intervals held a Pitzer truth only 70 % of the time)."""
    import dataclasses

    usable = reduction.points["flag"].isna()
    ionic = reduction.electrolyte.ionic_strength(reduction.points.loc[usable, "molality_mol_kg"])
    if float(ionic.max()) <= MODEL_CHOICE_REMINDER_IONIC_STRENGTH:
        return reduction
    reminder = ("u(E°) covers this model only; above I = 0.1 mol/kg the choice of model can move "
                "E° by more — run with --model all to include the model-choice component")
    return dataclasses.replace(reduction, warnings=(*reduction.warnings, reminder))


def _fixed_per_model(names: list[str], fixed: dict[str, float]) -> dict[str, dict[str, float]]:
    """--fix values for each compared model that has the parameter; one no model has is an
    error."""
    from .models import get_model

    per_model: dict[str, dict[str, float]] = {}
    for parameter, value in fixed.items():
        owners = [n for n in names if parameter in get_model(n).parameter_names]
        if not owners:
            raise InputError(f"no compared model has a parameter '{parameter}'",
                             file="command line", column="--fix")
        for name in owners:
            per_model.setdefault(name, {})[parameter] = value
    return per_model


def _write_all(outputs: dict[Path, bytes | str]) -> list[Path]:
    """Create the folders and write every output atomically; an OSError becomes bad input."""
    from .files import write_atomically

    for folder in {p.parent for p in outputs}:
        try:
            folder.mkdir(parents=True, exist_ok=True)
        except OSError as error:
            raise InputError(f"cannot create the output folder ({error.strerror}); choose "
                             "another with --out", file=str(folder)) from None
    written = []
    for path, content in outputs.items():
        try:
            written.append(write_atomically(path, content))
        except OSError as error:
            raise InputError(f"cannot write this file ({error.strerror}); choose another place",
                             file=str(path)) from None
    return written


def _cell(diagram: str, temperature_C: float, json_path: Path | None) -> list[Path]:
    import json

    from .cells import DiagramError, cell_summary, format_cell_summary
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
    text = format_cell_summary(summary)
    written = []
    if json_path is not None:
        written = _write_all({json_path: json.dumps(summary, ensure_ascii=False, indent=2)
                              + "\n"})
    sys.stdout.write(text if text.endswith("\n") else text + "\n")
    return written


def _one_line(error: InputError) -> str:
    """The error as one line; a command-line option is named as an option, not a column."""
    if error.column is not None and error.column.startswith("--"):
        where = "command line" if error.file in (None, "command line") else error.file
        error = InputError(error.problem, file=f"{where}, option '{error.column}'",
                           line=error.line)
    return " ".join(part.strip() for part in str(error).splitlines())


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    try:
        args = _parser().parse_args(argv)
        if args.command == "demo":
            run_path = Path(str(files("activolt") / "sample_data" / DEMO_RUN))
            written = _reduce(run_path, None, "hueckel", {}, args.out, None, None, {}, True)
        elif args.command == "cell":
            written = _cell(args.diagram, args.temperature_C, args.json)
        else:
            overrides = {k: getattr(args, k) for k in
                         ("electrolyte", "electrons", "temperature_C", "standard_pressure_kPa",
                          "cell", "slope_factor", "volt_unit")}
            written = _reduce(args.run, args.meta, args.model, dict(args.fix), args.out,
                              args.json, args.series, overrides, not args.no_figures,
                              tuple(args.exclude), args.monte_carlo, args.seed)
    except SystemExit as stop:  # --help and --version
        return int(stop.code or 0)
    except BrokenPipeError:  # output piped into a command that stopped reading
        return 0
    except InputError as error:
        print(f"activolt: error: {_one_line(error)}", file=sys.stderr)
        return 2
    except FitError as error:
        print(f"activolt: the fit could not be done: {error}", file=sys.stderr)
        return 1
    if written:
        print("\nwritten:\n" + "\n".join(f"  {p}" for p in written))
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
