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
from typing import NoReturn

from . import __version__
from .errors import FitError, InputError

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


def _parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="activolt", description="Standard potentials and mean ionic activity "
                     "coefficients from EMF dilution series of cells without liquid junction.")
    parser.add_argument("--version", action="version", version=f"activolt {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    reduce = commands.add_parser("reduce", help="reduce a run to E° and γ±")
    reduce.add_argument("run", type=Path, help="run table (CSV)")
    reduce.add_argument("--meta", type=Path, help="run metadata (TOML); default RUN.toml")
    reduce.add_argument("--model", default="hueckel",
                        help="activity-coefficient model (limiting, hueckel); default hueckel")
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
    reduce.add_argument("--no-figures", action="store_true", help="skip the figures")

    demo = commands.add_parser("demo", help="reduce the bundled sample run")
    demo.add_argument("--out", type=Path, default=Path("demo_output"),
                      help="folder for the outputs; default ./demo_output")
    return parser


def _reduce(run_path: Path, meta: Path | None, model: str, fixed: dict[str, float],
            out: Path | None, json_path: Path | None, series: str | None,
            overrides: dict[str, object], figures: bool) -> list[Path]:
    from .files import write_atomically
    from .records import points_csv, record_json
    from .reduce import reduce_run
    from .runs import read_run

    run = read_run(run_path, meta, overrides=overrides, series=series)
    reduction = reduce_run(run, model=model, fixed=fixed)
    stem = run_path.stem
    out = out if out is not None else run_path.parent / f"{stem}_activolt"
    report = reduction.report()
    outputs: dict[Path, bytes | str] = {
        (json_path or out / f"{stem}.record.json"): record_json(reduction),
        out / f"{stem}.points.csv": points_csv(reduction),
        out / f"{stem}.report.txt": report,
    }
    if figures:
        from .report.figures import render_figures

        for name, png in render_figures(reduction).items():
            outputs[out / f"{stem}.{name}.png"] = png
    for folder in {p.parent for p in outputs}:
        try:
            folder.mkdir(parents=True, exist_ok=True)
        except OSError as error:
            raise InputError(f"cannot create the output folder ({error.strerror}); choose "
                             "another with --out", file=str(folder)) from None
    written = [write_atomically(path, content) for path, content in outputs.items()]
    sys.stdout.write(report)
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
        else:
            overrides = {k: getattr(args, k) for k in
                         ("electrolyte", "electrons", "temperature_C", "standard_pressure_kPa")}
            written = _reduce(args.run, args.meta, args.model, dict(args.fix), args.out,
                              args.json, args.series, overrides, not args.no_figures)
    except InputError as error:
        print(f"activolt: error: {_one_line(error)}", file=sys.stderr)
        return 2
    except FitError as error:
        print(f"activolt: the fit could not be done: {error}", file=sys.stderr)
        return 1
    print("\nwritten:\n" + "\n".join(f"  {p}" for p in written))
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
