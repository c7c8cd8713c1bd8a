"""``activolt upload``: send archived records to the lab-records system, through the outbox.

    activolt upload RECORD_HASH… [--attach report.html …]   # queue these, then send them
    activolt upload --all-pending                            # send what waits for the endpoint

The endpoint is ``--endpoint URL`` or ``ACTIVOLT_UPLOAD_URL``; the token ``ACTIVOLT_UPLOAD_TOKEN``
or ``--token-file FILE`` (never on the command line); the archive ``--archive LOCATION`` or
``ACTIVOLT_ARCHIVE``. The exchange is described in ``docs/upload.md``.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..safe_text import escape_controls

NAME = "upload"
#: Exit status when the endpoint could not be reached or kept failing: the records wait in the
#: outbox for a later ``activolt upload --all-pending``.
EXIT_QUEUED = 4
#: The exit statuses (``activolt upload --help`` shows them).
EXIT_STATUS = f"""exit status:
  0  every record was sent (or the endpoint already had it)
  {EXIT_QUEUED}  the endpoint could not be reached or kept failing; the records stay queued in
     the archive's outbox: run 'activolt upload --all-pending' later
  2  bad input, or the endpoint refused a record (4xx): one line each on stderr; the records
     stay queued"""


def add_parser(commands: Any) -> argparse.ArgumentParser:
    """The ``upload`` parser."""
    parser = commands.add_parser(
        NAME, help="send archived records (and their report or certificate) to the lab's "
                   "records system",
        description="Queue records of the archive for an HTTP endpoint and send them: one POST "
                    "per record with the record's hash as Idempotency-Key, retried with "
                    "exponential back-off on timeouts, lost connections and 5xx. What cannot "
                    "be sent now stays in the archive's outbox. The token is read from "
                    "ACTIVOLT_UPLOAD_TOKEN or --token-file, never from the command line. The "
                    "exchange is described in docs/upload.md.",
        epilog=EXIT_STATUS, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("records", nargs="*", metavar="RECORD_HASH",
                        help="archived records to queue and send (a hash or a unique prefix of "
                             "at least 4 hex digits)")
    parser.add_argument("--all-pending", action="store_true", dest="all_pending",
                        help="send every record waiting in the outbox for the endpoint")
    parser.add_argument("--archive", dest="archive_location", metavar="LOCATION",
                        help="the archive: an SQLite file's path or an SQLAlchemy URL; default "
                             "ACTIVOLT_ARCHIVE, else ~/.local/share/activolt/archive.sqlite")
    parser.add_argument("--endpoint", metavar="URL",
                        help="the endpoint's URL (https; http only to this machine); default "
                             "ACTIVOLT_UPLOAD_URL")
    parser.add_argument("--token-file", type=Path, dest="token_file", metavar="FILE",
                        help="file holding the bearer token (one line); default "
                             "ACTIVOLT_UPLOAD_TOKEN")
    parser.add_argument("--attach", action="append", default=[], metavar="NAME",
                        help="an archived output sent with each record named, by its name or "
                             "the end of it: report.html, certificate.html (repeatable)")
    parser.add_argument("--retries", type=int, default=4,
                        help="attempts after the first for each record; default 4")
    parser.add_argument("--timeout", type=float, default=30.0, metavar="SECONDS",
                        help="how long one attempt waits for an answer; default 30")
    # Caught so that a token typed on the command line is refused without being echoed back.
    parser.add_argument("--token", help=argparse.SUPPRESS)
    return parser


def run(args: argparse.Namespace, written: list[Path]) -> int:
    """Queue the records named, send what is pending; the exit status (see
    :data:`EXIT_STATUS`)."""
    if args.token is not None:
        args.token = None
        raise InputError("the token is never taken from the command line (it would stay in the "
                         "shell history and the process list); set ACTIVOLT_UPLOAD_TOKEN or "
                         "give --token-file FILE", column="--token")
    if not args.records and not args.all_pending:
        raise InputError("name the records to send (their hashes) or give --all-pending",
                         file="command line")
    if args.retries < 0 or args.retries > 20:
        raise InputError(f"--retries takes 0 to 20, got {args.retries}", column="--retries")
    if not 0.0 < args.timeout <= 600.0:
        raise InputError(f"--timeout takes more than 0 and at most 600 seconds, got "
                         f"{args.timeout:g}", column="--timeout")
    from ..io.archive import open_archive
    from ..io.upload import RetryPolicy, attachments_of, endpoint_from, read_token, send_pending

    endpoint = endpoint_from(args.endpoint)
    token = read_token(args.token_file)
    with open_archive(args.archive_location) as archive:
        hashes = [archive.resolve(h) for h in dict.fromkeys(args.records)]
        for digest in hashes:  # every attachment is there before anything is queued
            attachments_of(archive, digest, args.attach)
        for digest in hashes:
            archive.queue_upload(digest, endpoint, attachments=args.attach)
        report = send_pending(archive, endpoint, token,
                              hashes=None if args.all_pending else hashes,
                              policy=RetryPolicy(retries=args.retries, timeout_s=args.timeout))
        waiting = len(archive.pending_uploads(endpoint))
    lines = []
    for result in report.sent:
        lines.append(f"sent {result.record_hash[:12]}"
                     + (" (the endpoint already had it)" if result.already_there else "")
                     + (f", receipt {result.receipt}" if result.receipt else ""))
    if not report.sent and not report.refused and not report.unavailable:
        lines.append("nothing to send: the outbox holds no record for this endpoint")
    if waiting:
        lines.append(f"{waiting} record{'s' if waiting > 1 else ''} wait in the outbox for this "
                     "endpoint")
    if lines:
        sys.stdout.write(escape_controls("\n".join(lines) + "\n", keep="\n"))
    for problem in [*report.refused, *report.unavailable]:
        print(f"activolt: error: {escape_controls(problem.message)}", file=sys.stderr)
    if report.not_tried:
        print(f"activolt: {len(report.not_tried)} more record"
              f"{'s' if len(report.not_tried) > 1 else ''} not tried; they stay queued",
              file=sys.stderr)
    if report.refused:
        return 2
    if report.unavailable:
        print("activolt: the records stay in the outbox; run 'activolt upload --all-pending' "
              "later", file=sys.stderr)
        return EXIT_QUEUED
    return 0
