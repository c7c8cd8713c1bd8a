"""``activolt archive``: add records to the archive, find them, show them, export them, and
re-reduce their archived inputs with today's version.

    activolt archive add RECORD.json…            # with the inputs it names and its output set
    activolt archive list [--electrolyte …] [--electrode …] [--since …] …
    activolt archive show HASH [--json | --file NAME]
    activolt archive history ELECTRODE
    activolt archive export --format csv|jsonl|parquet [--output FILE] [filters]
    activolt archive rereduce [HASH…]

Every subcommand takes ``--archive LOCATION`` (an SQLite path or an SQLAlchemy URL); without
it, ``ACTIVOLT_ARCHIVE``, else the per-user archive (:func:`activolt.io.archive.archive_url`).
"""

from __future__ import annotations

import argparse
import hashlib
import json
import math
import sys
import tempfile
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from ..errors import FitError, InputError
from ..safe_text import escape_controls

NAME = "archive"
#: The subcommands, in the order ``activolt archive --help`` lists them.
SUBCOMMANDS = ("add", "list", "show", "history", "export", "rereduce")
#: Filters of ``list`` and ``export`` (option → ``Archive.find`` argument).
FILTERS = ("electrolyte", "cell", "electrode", "lab", "operator", "model", "since", "until",
           "kind")


def _location_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--archive", dest="archive_location", metavar="LOCATION",
                        help="the archive: an SQLite file's path or an SQLAlchemy URL; default "
                             "ACTIVOLT_ARCHIVE, else ~/.local/share/activolt/archive.sqlite")


def _filter_options(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--electrolyte", help="electrolyte formula, exactly (HCl)")
    parser.add_argument("--cell", help="cell diagram (blanks ignored)")
    parser.add_argument("--electrode", help="an electrode ID the record names")
    parser.add_argument("--lab", help="part of the lab's name (any case)")
    parser.add_argument("--operator", help="part of the operator's name (any case)")
    parser.add_argument("--model", help="activity-coefficient model (hueckel, pitzer, …)")
    parser.add_argument("--since", metavar="DATE", help="made on or after (ISO 8601, UTC)")
    parser.add_argument("--until", metavar="DATE", help="made on or before (ISO 8601, UTC)")
    parser.add_argument("--kind", help="kind of record: reduction, calibration, "
                        "temperature_study, ph")
    parser.add_argument("--all", action="store_true", dest="include_superseded",
                        help="also records superseded by a re-reduction")


def add_parser(commands: Any) -> argparse.ArgumentParser:
    """The ``archive`` parser and its subcommands."""
    parser = commands.add_parser(
        NAME, help="the archive of records: add, list, show, history, export, rereduce",
        description="Keep records with their input files and outputs in one database (SQLite "
                    "by default, or any SQLAlchemy URL), find them again, export them and "
                    "re-reduce their inputs with today's version.")
    base = type(parser)

    class _Sub(base):  # type: ignore[misc, valid-type]
        def error(self, message: str) -> Any:
            raise InputError(f"{message} (see '{self.prog} --help')")

    sub = parser.add_subparsers(dest="archive_command", required=True, parser_class=_Sub,
                                metavar="{" + ",".join(SUBCOMMANDS) + "}")
    add = sub.add_parser("add", help="add records with the inputs they name and their outputs")
    add.add_argument("records", type=Path, nargs="+", metavar="RECORD.json",
                     help="record files; the run table and metadata are found where the record "
                          "names them (else beside it), the output set beside it")
    listing = sub.add_parser("list", help="list records, filtered")
    _filter_options(listing)
    show = sub.add_parser("show", help="one record: summary and files")
    show.add_argument("hash", metavar="HASH", help="the record's hash or a prefix (≥ 4 digits)")
    what = show.add_mutually_exclusive_group()
    what.add_argument("--json", action="store_true", help="print the record's JSON")
    what.add_argument("--file", metavar="NAME",
                      help="write a stored input or output file to standard output")
    history = sub.add_parser("history", help="an electrode's calibrations, drift and control "
                             "chart rules")
    history.add_argument("electrode", metavar="ELECTRODE", help="electrode ID")
    export = sub.add_parser("export", help="export records as CSV, JSON Lines or Parquet")
    export.add_argument("--format", required=True, choices=("csv", "jsonl", "parquet"),
                        dest="export_format")
    export.add_argument("--output", type=Path, metavar="FILE",
                        help="write here (atomically) instead of standard output")
    _filter_options(export)
    rereduce = sub.add_parser(
        "rereduce", help="re-reduce archived inputs with today's version; report ΔE° in u")
    rereduce.add_argument("hashes", nargs="*", metavar="HASH",
                          help="records to re-reduce (default: every current reduction and "
                               "calibration)")
    for each in (add, listing, show, history, export, rereduce):
        _location_option(each)
    return parser


def _open(args: argparse.Namespace) -> Any:
    from ..io.archive import open_archive

    return open_archive(getattr(args, "archive_location", None))


def _filters(args: argparse.Namespace) -> dict[str, Any]:
    found = {name: getattr(args, name) for name in FILTERS if getattr(args, name, None)}
    found["current_only"] = not getattr(args, "include_superseded", False)
    return found


def _out(text: str) -> None:
    sys.stdout.write(escape_controls(text, keep="\n"))


def run(args: argparse.Namespace, written: list[Path]) -> int:
    """Run ``activolt archive …``; returns the exit status."""
    command = args.archive_command
    with _open(args) as archive:
        if command == "add":
            return _add(archive, args.records)
        if command == "list":
            return _list(archive, _filters(args))
        if command == "show":
            return _show(archive, args.hash, args.json, args.file)
        if command == "history":
            return _history(archive, args.electrode)
        if command == "export":
            return _export(archive, args.export_format, args.output, _filters(args), written)
        return _rereduce(archive, args.hashes)


# -------------------------------------------------------------------------------- add

def _input_paths(record_path: Path, record: dict[str, Any]) -> dict[str, Path]:
    """The input files a record names (table and metadata), found where the record says
    (relative to its folder) or beside it, each checked against its SHA-256."""
    folder = record_path.parent
    entries = [record.get("input") or {}, *(record.get("inputs") or [])]
    found: dict[str, Path] = {}
    for entry in entries:
        if not isinstance(entry, dict):
            continue
        for file_key, sha_key in (("file", "sha256"), ("metadata_file", "metadata_sha256")):
            named = entry.get(file_key)
            if not isinstance(named, str) or not named:
                continue
            given = Path(named)
            candidates = [given if given.is_absolute() else folder / given, folder / given.name]
            path = next((p for p in candidates if p.is_file()), None)
            if path is None:
                raise InputError(f"the record's input '{named}' is neither where the record "
                                 "names it nor beside the record; put it there to archive it",
                                 file=str(record_path))
            expected = entry.get(sha_key)
            if expected and hashlib.sha256(path.read_bytes()).hexdigest() != expected:
                raise InputError(f"the input {path} has changed since the record was made (its "
                                 "SHA-256 differs); archive the record with the input it was "
                                 "made from", file=str(record_path))
            name = given.name if given.name not in found or found[given.name] == path \
                else given.as_posix()
            found[name] = path
    return found


def _base(path: Path) -> str:
    name = path.name
    return name[:-len(".record.json")] if name.endswith(".record.json") else path.stem


def _output_paths(record_path: Path) -> dict[str, Path]:
    """The record file and the files of its output set beside it (``BASE.*``), files of
    another record's set in the same folder (``BASE.SERIES.*``) left out."""
    folder = record_path.parent
    base = _base(record_path)
    others = [_base(p) for p in folder.glob("*.record.json")
              if p != record_path and _base(p).startswith(base + ".")]
    found = {record_path.name: record_path}
    for path in sorted(folder.glob(base + ".*")):
        if not path.is_file() or path == record_path or path.name.startswith("."):
            continue
        if any(path.name.startswith(other + ".") for other in others):
            continue
        found[path.name] = path
    return found


def _load(path: Path) -> dict[str, Any]:
    from ..io.record import load_record

    try:
        return load_record(path)
    except OSError as error:
        raise InputError(f"cannot read the record: {error.strerror}", file=str(path)) from None
    except UnicodeDecodeError:
        raise InputError("the record is not UTF-8 text", file=str(path)) from None


def _add(archive: Any, paths: Sequence[Path]) -> int:
    items = []
    for path in paths:
        record = _load(path)
        items.append((path, record, _input_paths(path, record), _output_paths(path)))
    before = {h for h in (_record_hash(record) for _, record, *_ in items) if h in archive}
    hashes = archive.add_many([(record, inputs, outputs, None)
                               for _, record, inputs, outputs in items])
    for (path, _, inputs, outputs), digest in zip(items, hashes, strict=True):
        state = "already archived" if digest in before else "added"
        _out(f"{digest[:12]}  {state}: {path.name} ({len(inputs)} input, "
             f"{len(outputs)} output files)\n")
    _out(f"archive: {archive.url}\n")
    return 0


def _record_hash(record: dict[str, Any]) -> str:
    from ..io.archive import record_hash

    return record_hash(record)


def add_archive_option(parser: argparse.ArgumentParser, what: str) -> None:
    """``--archive [LOCATION]`` on a command that writes records: ``what`` it files."""
    parser.add_argument("--archive", nargs="?", const="", dest="archive_to", metavar="LOCATION",
                        help=f"also add {what} to the archive (an SQLite path or an SQLAlchemy "
                             "URL; without LOCATION, ACTIVOLT_ARCHIVE or the per-user "
                             "archive); put it after the input tables or write "
                             "--archive=LOCATION")


def archive_written(written: Sequence[Path], location: str | None) -> list[str]:
    """Add the records among ``written`` (the files a command wrote) to the archive, each with
    the inputs it names and its outputs among ``written``; prints one line per record.

    One record: every other file written is its output. Several (a batch): each file goes to
    the record whose name (before ``.record.json``) begins it, the longest such name winning.
    """
    from ..io.archive import open_archive

    if location and Path(location).suffix.lower() in (".csv", ".toml", ".json"):
        raise InputError(f"'{location}' looks like an input, not an archive; the outputs are "
                         "written but not archived: write --archive=LOCATION, or put "
                         "--archive after the run tables", column="--archive")
    paths = [Path(p) for p in written]
    records: dict[Path, dict[str, Any]] = {}
    for path in paths:
        if path.suffix == ".json":
            try:
                data = json.loads(path.read_text(encoding="utf-8"))
            except (OSError, ValueError):
                continue
            if isinstance(data, dict) and str(data.get("record_schema", "")).startswith(
                    "activolt-record/"):
                records[path] = _load(path)
    if not records:
        return []
    outputs: dict[Path, dict[str, Path]] = {path: {path.name: path} for path in records}
    for path in paths:
        if path in records:
            continue
        if len(records) == 1:
            owner: Path | None = next(iter(records))
        else:
            owners = [r for r in records if path.name.startswith(_base(r) + ".")]
            owner = max(owners, key=lambda r: len(_base(r)), default=None)
        if owner is not None:
            outputs[owner][path.name] = path
    with open_archive(location) as archive:
        hashes = archive.add_many([(record, _input_paths(path, record), outputs[path], None)
                                   for path, record in records.items()])
        for path, digest in zip(records, hashes, strict=True):
            _out(f"archived: {digest[:12]} {path.name} ({archive.url})\n")
    return hashes


# -------------------------------------------------------------------------------- list, show

def _mV(value: float | None, u: float | None) -> str:
    from ..rounding import format_with_uncertainty

    if value is None or not math.isfinite(value):
        return "—"
    if u is None or not math.isfinite(u) or u <= 0:
        return f"{value * 1e3:.4f} mV"
    return "E° = " + format_with_uncertainty(value * 1e3, u * 1e3, "mV")


def _line(entry: Any) -> str:
    electrodes = ",".join(entry.electrodes[:4]) + ("…" if len(entry.electrodes) > 4 else "")
    parts = [entry.hash[:12], entry.created_utc or "—", f"{entry.kind:<11}",
             entry.electrolyte or "—", entry.model or "—",
             _mV(entry.standard_potential_V, entry.u_standard_potential_V),
             electrodes or "—", entry.lab or "—"]
    return "  ".join(parts) + ("  supersedes " + entry.supersedes[:12] if entry.supersedes
                               else "") + "\n"


def _list(archive: Any, filters: dict[str, Any]) -> int:
    entries = archive.find(**filters)
    for entry in entries:
        _out(_line(entry))
    _out(f"{len(entries)} record{'s' if len(entries) != 1 else ''} ({archive.url})\n")
    return 0


def _show(archive: Any, prefix: str, as_json: bool, file: str | None) -> int:
    archived = archive.get(prefix)
    if as_json:
        _out(json.dumps(archived.record, ensure_ascii=False, indent=2) + "\n")
        return 0
    if file is not None:
        try:
            data = archive.output(archived.hash, file)
        except InputError:
            data = archive.input(archived.hash, file)
        sys.stdout.buffer.write(data) if hasattr(sys.stdout, "buffer") else _out(
            data.decode("utf-8", "replace"))
        return 0
    e, record = archived.entry, archived.record
    provenance = record.get("provenance") or {}
    lines = [f"record {e.hash}", f"  kind: {e.kind}", f"  made: {e.created_utc or '—'} (UTC), "
             f"archived {e.added_utc}", f"  software: activolt {e.software_version or '—'}"]
    if provenance.get("command_line"):
        lines.append("  command line: " + " ".join(provenance["command_line"]))
    for label, value in (("electrolyte", e.electrolyte), ("cell", e.cell), ("model", e.model),
                         ("lab", e.lab), ("operator", e.operator),
                         ("instrument", e.instrument)):
        if value:
            lines.append(f"  {label}: {value}")
    if e.standard_potential_V is not None:
        lines.append(f"  {_mV(e.standard_potential_V, e.u_standard_potential_V)} (k = 1)")
    for entry in record.get("electrodes") or []:
        potential = entry.get("standard_potential_V") or {}
        lines.append(f"  electrode {entry.get('electrode')}: "
                     f"{_mV(potential.get('value'), potential.get('uncertainty'))} (k = 1), "
                     f"{entry.get('verdict')}")
    if e.electrodes and not record.get("electrodes"):
        lines.append("  electrodes: " + ", ".join(e.electrodes))
    if e.input_sha256:
        lines.append(f"  input SHA-256: {e.input_sha256}")
    lines.append("  inputs: " + (", ".join(archived.inputs) or "none archived"))
    lines.append("  outputs: " + (", ".join(archived.outputs) or "none archived"))
    if e.supersedes:
        lines.append(f"  supersedes: {e.supersedes}")
    for later in archived.superseded_by:
        lines.append(f"  superseded by: {later}")
    for upload in archive.uploads(archived.hash):
        lines.append(f"  upload to {upload['endpoint']}: "
                     + (f"sent {upload['sent_utc']}" if upload["sent_utc"]
                        else f"pending ({upload['attempts']} failed attempts)"))
    _out("\n".join(lines) + "\n")
    return 0


def _per_month(drift_V: float, u_V: float | None) -> str:
    from ..rounding import format_with_uncertainty

    if u_V is None or not math.isfinite(u_V) or u_V <= 0:
        return f"{drift_V * 1e6:+.1f} µV per month"
    return format_with_uncertainty(drift_V * 1e6, u_V * 1e6, "µV per month")


def _history(archive: Any, electrode: str) -> int:
    from ..procedures.calibration import electrode_history
    from ..rounding import format_potential

    records = archive.electrode_history(electrode)
    if not records:
        raise InputError(f"no calibration of electrode '{electrode}' in the archive "
                         f"{archive.url}")
    lines = [f"electrode {electrode}: {len(records)} calibration"
             f"{'s' if len(records) != 1 else ''}"]
    for record in records:
        entry = record["electrodes"][0]
        value, expanded = format_potential((entry.get("standard_potential_V") or {}).get("value"),
                                           entry.get("expanded_uncertainty_V"))
        when = record.get("date") or str(record.get("created_utc") or "")[:10]
        k = entry.get("coverage_factor")
        lines.append(f"  {when}  {value} ± {expanded} mV"
                     + (f" (k = {k:.2f})" if isinstance(k, (int, float)) else "")
                     + f"  {entry.get('verdict')}  {record.get('archive_hash', '')[:12]}")
    if len(records) >= 2:
        history = electrode_history(records)[electrode]
        if history.drift_V_per_month is not None:
            lines.append("  drift: " + _per_month(history.drift_V_per_month,
                                                  history.u_drift_V_per_month))
        if history.flagged:
            lines.append("  flagged: " + "; ".join(history.reasons))
    _out("\n".join(lines) + "\n")
    return 0


# -------------------------------------------------------------------------------- export

def _export(archive: Any, format: str, output: Path | None, filters: dict[str, Any],
            written: list[Path]) -> int:
    import io

    if output is None:
        if format == "parquet" and sys.stdout.isatty():
            raise InputError("Parquet is binary: give --output FILE, or send standard output to "
                             "a file or a pipe", column="--output")
        target = getattr(sys.stdout, "buffer", None)
        if target is None:
            buffer = io.BytesIO()
            archive.export(format, buffer, **filters)
            sys.stdout.write(buffer.getvalue().decode("utf-8"))
        else:
            sys.stdout.flush()
            archive.export(format, target, **filters)
            target.flush()
        return 0
    from ..io.files import write_atomically

    buffer = io.BytesIO()
    count = archive.export(format, buffer, **filters)
    written.append(write_atomically(output, buffer.getvalue()))
    _out(f"exported {count} record{'s' if count != 1 else ''} as {format}\n")
    return 0


# -------------------------------------------------------------------------------- rereduce

def _fixed_from_command_line(command: Sequence[str] | None) -> dict[str, Any]:
    """``--fix NAME=VALUE[±U]`` values of the recorded command line."""
    fixed: dict[str, Any] = {}
    words = list(command or [])
    for i, word in enumerate(words):
        text = words[i + 1] if word == "--fix" and i + 1 < len(words) else (
            word.removeprefix("--fix=") if word.startswith("--fix=") else None)
        if not text or "=" not in text:
            continue
        name, _, value = text.partition("=")
        for mark in ("±", "+/-", "+-"):
            if mark in value:
                central, _, u = value.partition(mark)
                fixed[name.strip()] = (float(central), float(u))
                break
        else:
            fixed[name.strip()] = float(value)
    return fixed


def _original_command_line(record: dict[str, Any]) -> list[str] | None:
    """The command line that first made the record (a re-reduction carries it on)."""
    provenance = record.get("provenance") or {}
    return provenance.get("replayed_command_line") or provenance.get("command_line")


def _rereduce_reduction(record: dict[str, Any], folder: Path, names: dict[str, str]
                        ) -> tuple[dict[str, Any], dict[str, bytes | str]]:
    from ..data.runs import Exclusion, exclude_points, read_run
    from ..io.outputs import reduction_output_files
    from ..io.record import json_text
    from ..procedures.dilution import reduce_run

    source = record["input"]
    table = folder / names[Path(source["file"]).name]
    meta = (folder / names[Path(source["metadata_file"]).name]
            if source.get("metadata_file") else None)
    overrides: dict[str, object] = {
        "standard_pressure_kPa": record.get("standard_pressure_kPa"),
        "volt_unit": (record.get("volt_unit") or {}).get("input")}
    if record.get("cell"):
        overrides["cell"] = record["cell"]
    else:
        overrides.update(electrolyte=record.get("electrolyte"), electrons=record.get("electrons"))
    run = read_run(table, meta, overrides={k: v for k, v in overrides.items() if v is not None},
                   series=record.get("series"))
    exclusions = [Exclusion(reason=str(p["flag"]).removeprefix("excluded:").strip(),
                            line=int(p["line"]))
                  for p in record.get("points") or []
                  if isinstance(p.get("flag"), str) and p["flag"].startswith("excluded")]
    fixed = _fixed_from_command_line(_original_command_line(record))
    comparison = None
    compared = record.get("model_comparison")
    if compared:
        from ..procedures.model_choice import compare_models

        model_names = [m["name"] for m in compared.get("models") or []] + [
            s["name"] for s in compared.get("skipped") or []]
        from ..activity import get_model

        per_model = {n: {k: v for k, v in fixed.items() if k in get_model(n).parameter_names}
                     for n in model_names} if fixed else None
        comparison = compare_models(exclude_points(run, exclusions) if exclusions else run,
                                    model_names, per_model)
        reduction = comparison.recommended_reduction
        if reduction is None:
            raise FitError(comparison.warnings[-1] if comparison.warnings
                           else "no compared model is adequate")
    else:
        reduction = reduce_run(run, model=record["model"]["name"], fixed=fixed or None,
                               exclude=exclusions)
    monte = None
    if record.get("monte_carlo"):
        from ..procedures.montecarlo import monte_carlo

        monte = monte_carlo(reduction.run, trials=int(record["monte_carlo"]["trials"]),
                            seed=int(record["monte_carlo"]["seed"]), reduction=reduction,
                            temperature_u_K=run.metadata.u_temperature_K, progress=False)
    base = table.stem
    outputs = reduction_output_files(reduction, base, folder, comparison, monte)
    text = outputs[f"{base}.record.json"]
    assert isinstance(text, str)
    new = json.loads(text)
    original = _original_command_line(record)
    if original and isinstance(new.get("provenance"), dict):
        new["provenance"]["replayed_command_line"] = list(original)
        text = json_text(new)
        outputs[f"{base}.record.json"] = text
    return new, outputs


def _rereduce_calibration(record: dict[str, Any], folder: Path, names: dict[str, str]
                          ) -> tuple[dict[str, Any], dict[str, bytes | str]]:
    from ..io.record import (
        build_calibration_record,
        calibration_electrodes_csv,
        calibration_points_csv,
        json_text,
    )
    from ..procedures.calibration import calibrate

    source = record["input"]
    table = folder / names[Path(source["file"]).name]
    meta = (folder / names[Path(source["metadata_file"]).name]
            if source.get("metadata_file") else None)
    batch = calibrate(table, meta)
    new = build_calibration_record(batch, record_folder=folder)
    text = json_text(new)
    outputs: dict[str, bytes | str] = {
        f"{table.stem}.record.json": text,
        f"{table.stem}.electrodes.csv": calibration_electrodes_csv(new),
        f"{table.stem}.points.csv": calibration_points_csv(batch)}
    return json.loads(text), outputs


def _difference(label: str, old: dict[str, Any], new: dict[str, Any]) -> str:
    """ΔE° = new − old in mV and in units of the archived u(E°) (k = 1)."""
    before, after = old.get("value"), new.get("value")
    u = old.get("uncertainty")
    if before is None or after is None:
        return f"{label}: E° not comparable"
    delta = float(after) - float(before)
    ratio = (f"{delta / float(u):+.2f} u" if u and float(u) > 0 else "u not stated")
    return (f"{label}: E° {float(before) * 1e3:.5f} → {float(after) * 1e3:.5f} mV, "
            f"ΔE° = {delta * 1e3:+.5f} mV = {ratio}")


def _rereduce(archive: Any, hashes: Sequence[str]) -> int:
    """Re-reduce archived inputs; the new record supersedes the old. Exit 1 when one could not
    be re-reduced (each named with its reason), 0 otherwise."""
    if hashes:
        chosen = [archive.resolve(h) for h in hashes]
    else:
        chosen = [e.hash for e in archive.find(current_only=True)
                  if e.kind in ("reduction", "calibration")]
    failed = 0
    for digest in chosen:
        archived = archive.get(digest)
        record, kind = archived.record, archived.entry.kind
        if kind not in ("reduction", "calibration"):
            _out(f"{digest[:12]}: not re-reduced: a {kind.replace('_', ' ')} is re-reduced by "
                 "running it again\n")
            continue
        if not archived.inputs:
            _out(f"{digest[:12]}: not re-reduced: its inputs are not in the archive\n")
            failed += 1
            continue
        with tempfile.TemporaryDirectory(prefix="activolt-rereduce-") as temporary:
            folder = Path(temporary)
            names: dict[str, str] = {}
            for name in archived.inputs:
                plain = Path(name).name
                (folder / plain).write_bytes(archive.input(digest, name))
                names[plain] = plain
            try:
                if kind == "reduction":
                    new, outputs = _rereduce_reduction(record, folder, names)
                else:
                    new, outputs = _rereduce_calibration(record, folder, names)
            except (FitError, InputError, KeyError) as error:
                failed += 1
                _out(f"{digest[:12]}: not re-reduced: {error}\n")
                continue
            inputs = {name: archive.input(digest, name) for name in archived.inputs}
            new_hash = archive.add(new, inputs=inputs, outputs=outputs, supersedes=digest)
        if kind == "reduction":
            _out(_difference(f"{digest[:12]} → {new_hash[:12]}", record["standard_potential_V"],
                             new["standard_potential_V"]) + "\n")
        else:
            _out(f"{digest[:12]} → {new_hash[:12]} (calibration)\n")
            before = {str(e["electrode"]): e for e in record.get("electrodes") or []}
            for entry in new.get("electrodes") or []:
                old = before.get(str(entry["electrode"]))
                if old is None:
                    _out(f"  {entry['electrode']}: new in this calibration\n")
                    continue
                _out("  " + _difference(str(entry["electrode"]), old["standard_potential_V"],
                                        entry["standard_potential_V"]) + "\n")
        _out(f"  versions: {(record.get('software') or {}).get('version')} → "
             f"{(new.get('software') or {}).get('version')}\n")
    _out(f"{len(chosen) - failed} of {len(chosen)} re-reduced ({archive.url})\n")
    return 1 if failed else 0
