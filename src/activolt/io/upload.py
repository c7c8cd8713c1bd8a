"""Sending records to a lab-records system over HTTP, with an outbox in the archive.

One record is one ``POST`` to the endpoint the lab configures, carrying the record (and, when
asked, outputs such as ``report.html`` or ``certificate.html`` as attachments), a bearer token
and an ``Idempotency-Key`` equal to the record's hash, so that a retry of a send whose answer
was lost never makes a second copy at the receiving end. The exchange is documented for the
lab's IT in ``docs/upload.md`` (:data:`PROTOCOL`).

- Answers: any 2xx is *sent*; 409 is *already there* (also sent); 408, 429 and 5xx, a
  timeout or a connection that fails are retried with exponential back-off and full jitter
  (:class:`RetryPolicy`; ``Retry-After`` honoured up to the cap) and, when the retries run
  out, :class:`UploadUnavailable`; any other answer (4xx, a redirect) is
  :class:`UploadRefused`, with one line that says what to check. Redirects are never
  followed, so the token goes to the configured host only.
- The token comes from ``ACTIVOLT_UPLOAD_TOKEN`` or a file (:func:`read_token`), never from the
  command line; it is held by :class:`Token`, whose ``repr`` and ``str`` hide it, and it is
  removed from every message built here (a server that echoes it back does not get it shown).
  A URL with credentials in it is refused, and plain ``http`` only to this machine (loopback),
  so that the token never travels in clear.
- The outbox (:func:`send_pending`): the archive keeps each queued record until the endpoint
  has accepted it (:meth:`activolt.io.archive.Archive.mark_uploaded`); a failed send is counted
  with its reason (:meth:`~activolt.io.archive.Archive.note_upload_failure`) and stays queued.

Standard library HTTP (:mod:`urllib.request`); no third-party client.
"""

from __future__ import annotations

import hashlib
import json
import logging
import os
import random
import re
import time
import urllib.error
import urllib.request
import uuid
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from email.message import Message
from pathlib import Path
from typing import Any
from urllib.parse import urlsplit, urlunsplit

from .. import __version__
from ..errors import InputError
from ..safe_text import escape_controls
from .archive import Archive, record_hash

__all__ = ["PROTOCOL", "TOKEN_VARIABLE", "URL_VARIABLE", "Attachment", "OutboxReport",
           "RetryPolicy", "Token", "UploadError", "UploadRefused", "UploadResult",
           "UploadUnavailable", "attachments_of", "check_endpoint", "endpoint_from", "media_type",
           "read_token", "request_body", "send_pending", "send_record", "shown_url"]

#: The name and version of the exchange, sent in the body (``protocol``).
PROTOCOL = "activolt-upload/1"
#: The environment variable holding the endpoint's URL.
URL_VARIABLE = "ACTIVOLT_UPLOAD_URL"
#: The environment variable holding the bearer token.
TOKEN_VARIABLE = "ACTIVOLT_UPLOAD_TOKEN"
#: Answers that are retried (besides every 5xx): Request Timeout, Too Early, Too Many Requests.
RETRIED_STATUSES = frozenset({408, 425, 429})
#: Answers that say the endpoint itself (not the record) is wrong: later records would fail too.
ENDPOINT_STATUSES = frozenset({401, 403, 404, 405})
#: Media types of the attachments, by the end of their names.
MEDIA_TYPES = {".html": "text/html; charset=utf-8", ".json": "application/json",
               ".csv": "text/csv; charset=utf-8", ".txt": "text/plain; charset=utf-8",
               ".png": "image/png", ".pdf": "application/pdf"}
_LOOPBACK = ("localhost", "127.0.0.1", "::1")
_log = logging.getLogger("activolt.upload")


class Token:
    """A bearer token that does not show itself: ``repr``, ``str`` and formatting give
    ``Token(…)``; :meth:`reveal` gives the secret to the one place that sends it.

    Examples
    --------
    >>> token = Token("s3cr3t")
    >>> f"{token} {token!r}", token.reveal()
    ('Token(…) Token(…)', 's3cr3t')
    """

    __slots__ = ("_secret",)

    def __init__(self, secret: str) -> None:
        self._secret = secret

    def reveal(self) -> str:
        """The secret, for the ``Authorization`` header only."""
        return self._secret

    def hide(self, message: str) -> str:
        """``message`` with every occurrence of the secret replaced by ``…``."""
        return message.replace(self._secret, "…") if self._secret else message

    def __repr__(self) -> str:
        return "Token(…)"

    __str__ = __repr__

    def __format__(self, spec: str) -> str:
        return "Token(…)"

    def __reduce__(self) -> Any:
        raise TypeError("a token is not pickled")


def read_token(token_file: str | os.PathLike[str] | None = None,
               environ: Mapping[str, str] | None = None) -> Token:
    """The bearer token: the line in ``token_file`` when given, else ``ACTIVOLT_UPLOAD_TOKEN``.

    Surrounding blanks and the line end are removed. The token is never shown, also not when
    it is unfit (empty, several lines, characters an HTTP header cannot carry).

    Raises
    ------
    InputError
        No token, an unreadable file, or a token an HTTP header cannot carry.
    """
    environ = os.environ if environ is None else environ
    if token_file is not None:
        where = str(token_file)
        try:
            text = Path(token_file).read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError) as error:
            reason = getattr(error, "strerror", None) or "not UTF-8 text"
            raise InputError(f"cannot read the token file: {reason}", file=where,
                             column="--token-file") from None
        lines = [line.strip() for line in text.splitlines() if line.strip()]
        if len(lines) > 1:
            raise InputError("the token file holds more than one line; put the token alone in "
                             "it", file=where, column="--token-file")
        secret = lines[0] if lines else ""
    else:
        where = f"environment variable {TOKEN_VARIABLE}"
        secret = environ.get(TOKEN_VARIABLE, "").strip()
    if not secret:
        raise InputError(f"no upload token: set {TOKEN_VARIABLE} or give --token-file FILE "
                         "(never the token itself on the command line)",
                         file=where if token_file is not None else None)
    if not re.fullmatch(r"[\x21-\x7e]+", secret):
        raise InputError("the token holds blanks or characters an HTTP header cannot carry "
                         "(printable ASCII only)", file=where)
    return Token(secret)


def shown_url(url: str) -> str:
    """The URL as messages show it: no credentials, no query, no fragment.

    Examples
    --------
    >>> shown_url("https://user:pw@records.example/api/in?key=abc#x")
    'https://records.example/api/in'
    """
    try:
        parts = urlsplit(url)
        host = parts.hostname or ""
        if ":" in host:
            host = f"[{host}]"
        netloc = host + (f":{parts.port}" if parts.port else "")
    except ValueError:
        return "(an unreadable URL)"
    return escape_controls(urlunsplit((parts.scheme, netloc, parts.path, "", "")))


def check_endpoint(url: str) -> str:
    """``url`` when it is fit to receive records and a token, else InputError.

    An ``https`` URL, or ``http`` to this machine only (``localhost``, ``127.0.0.1``, ``::1``);
    no credentials in it (the token goes in a header, from a variable or a file).

    Examples
    --------
    >>> check_endpoint("https://records.example/activolt")
    'https://records.example/activolt'
    """
    try:
        parts = urlsplit(url.strip())
        parts.port  # noqa: B018 — raises ValueError on a bad port
    except ValueError:
        raise InputError("the upload endpoint is not a URL; give https://HOST/PATH",
                         column="--endpoint") from None
    if parts.scheme not in ("https", "http") or not parts.hostname:
        raise InputError(f"the upload endpoint '{shown_url(url)}' is not an http(s) URL; give "
                         "https://HOST/PATH", column="--endpoint")
    if parts.username is not None or parts.password is not None:
        raise InputError("the upload endpoint holds credentials; give the URL without them and "
                         f"the token in {TOKEN_VARIABLE} or --token-file", column="--endpoint")
    if parts.scheme == "http" and parts.hostname not in _LOOPBACK:
        raise InputError(f"the upload endpoint '{shown_url(url)}' is plain http: the token would "
                         "travel in clear; use https (http is accepted for this machine only)",
                         column="--endpoint")
    return url.strip()


def endpoint_from(option: str | None, environ: Mapping[str, str] | None = None) -> str:
    """The endpoint: ``--endpoint`` when given, else ``ACTIVOLT_UPLOAD_URL``; checked."""
    environ = os.environ if environ is None else environ
    url = option if option else environ.get(URL_VARIABLE, "")
    if not url.strip():
        raise InputError(f"no upload endpoint: give --endpoint URL or set {URL_VARIABLE}",
                         column="--endpoint")
    return check_endpoint(url)


@dataclass(frozen=True)
class RetryPolicy:
    """How a send is tried again: ``retries`` more attempts after the first, each after a
    pause drawn uniformly from [0, min(``cap_s``, ``base_s`` · 2ⁿ)] ("full jitter", common
    practice for clients that share a server), ``timeout_s`` for each attempt.

    Examples
    --------
    >>> policy = RetryPolicy(base_s=0.5, cap_s=4.0)
    >>> [policy.ceiling(n) for n in range(5)]
    [0.5, 1.0, 2.0, 4.0, 4.0]
    """

    retries: int = 4
    base_s: float = 0.5
    cap_s: float = 30.0
    timeout_s: float = 30.0

    def __post_init__(self) -> None:
        if self.retries < 0 or self.base_s < 0 or self.cap_s < 0 or self.timeout_s <= 0:
            raise ValueError("retries, base_s and cap_s must be ≥ 0 and timeout_s > 0")

    def ceiling(self, retry: int) -> float:
        """The longest pause before retry number ``retry`` (0 for the first retry) [s]."""
        return min(self.cap_s, self.base_s * 2.0**retry)

    def pause(self, retry: int, rng: random.Random, retry_after: float | None = None) -> float:
        """The pause before retry ``retry`` [s]: full jitter, or the server's ``Retry-After``
        when it asks for longer (never beyond ``cap_s``)."""
        pause = rng.uniform(0.0, self.ceiling(retry))
        if retry_after is not None:
            pause = max(pause, min(retry_after, self.cap_s))
        return pause


@dataclass(frozen=True)
class Attachment:
    """An output sent with a record: its file name, its bytes and its media type."""

    name: str
    content: bytes
    media_type: str


def media_type(name: str) -> str:
    """The media type of an attachment by the end of its name.

    Examples
    --------
    >>> media_type("run.report.html"), media_type("run.bin")
    ('text/html; charset=utf-8', 'application/octet-stream')
    """
    for ending, kind in MEDIA_TYPES.items():
        if name.lower().endswith(ending):
            return kind
    return "application/octet-stream"


@dataclass(frozen=True)
class UploadResult:
    """A record the endpoint accepted: its answer's status, its receipt (the body's
    ``receipt`` or ``id``, else the ``Location`` header), how many attempts it took, and
    whether the endpoint already had it (409)."""

    record_hash: str
    status: int
    receipt: str | None
    attempts: int
    already_there: bool = False


class UploadError(Exception):
    """A send that did not succeed; the message is one line, without the token."""

    def __init__(self, message: str, record_hash: str, status: int | None = None,
                 attempts: int = 1) -> None:
        super().__init__(message)
        self.message = message
        self.record_hash = record_hash
        self.status = status
        self.attempts = attempts

    def __str__(self) -> str:
        return self.message


class UploadRefused(UploadError):
    """The endpoint answered with a refusal (4xx other than 408/409/425/429, or a redirect):
    trying again would not help; the answer says what to check."""

    @property
    def endpoint_wide(self) -> bool:
        """Whether the refusal concerns the endpoint (token, address) rather than the record."""
        return self.status is None or self.status in ENDPOINT_STATUSES or self.status < 400


class UploadUnavailable(UploadError):
    """The endpoint could not be reached, timed out or answered 5xx (or 408/429) on every
    attempt; the record stays queued."""


def request_body(record: Mapping[str, Any], digest: str,
                 attachments: Sequence[Attachment] = (), boundary: str | None = None
                 ) -> tuple[bytes, str]:
    """The body of the ``POST`` and its ``Content-Type``.

    The envelope is JSON: ``{"protocol": "activolt-upload/1", "record_hash": …,
    "record": {…}, "attachments": [{"name", "media_type", "size", "sha256"}, …]}``; without
    attachments it is the whole body (``application/json``), with attachments it is the first
    part (``name="envelope"``) of a ``multipart/form-data`` body (RFC 7578) whose further parts
    (``name="attachment"``) carry the files.

    Examples
    --------
    >>> body, kind = request_body({"a": 1}, "ab" * 32)
    >>> kind, json.loads(body)["protocol"]
    ('application/json', 'activolt-upload/1')
    """
    envelope = {
        "protocol": PROTOCOL, "record_hash": digest, "record": record,
        "attachments": [{"name": a.name, "media_type": a.media_type, "size": len(a.content),
                         "sha256": hashlib.sha256(a.content).hexdigest()}
                        for a in attachments],
    }
    text = json.dumps(envelope, ensure_ascii=False, allow_nan=False,
                      separators=(",", ":")).encode("utf-8")
    if not attachments:
        return text, "application/json"
    boundary = boundary or f"activolt-{uuid.uuid4().hex}"
    parts = [_part(boundary, 'form-data; name="envelope"; filename="envelope.json"',
                   "application/json", text)]
    for a in attachments:
        parts.append(_part(boundary, f'form-data; name="attachment"; '
                                     f'filename="{_quoted(a.name)}"', a.media_type, a.content))
    body = b"".join(parts) + f"--{boundary}--\r\n".encode("ascii")
    return body, f"multipart/form-data; boundary={boundary}"


def _quoted(name: str) -> str:
    """A file name for a quoted header parameter: ASCII, no quote, backslash or line end."""
    return "".join(c if 0x20 <= ord(c) < 0x7f and c not in '"\\' else "_" for c in name)


def _part(boundary: str, disposition: str, kind: str, content: bytes) -> bytes:
    head = (f"--{boundary}\r\nContent-Disposition: {disposition}\r\n"
            f"Content-Type: {kind}\r\n\r\n").encode("ascii")
    return head + content + b"\r\n"


class _NoRedirect(urllib.request.HTTPRedirectHandler):
    """Redirects are answers, not hops: the token must not follow them to another place."""

    def redirect_request(self, *args: Any, **kwargs: Any) -> None:
        return None


_OPENER = urllib.request.build_opener(_NoRedirect())


def _retry_after(headers: Message | None) -> float | None:
    """``Retry-After`` in seconds (the delay form; a date is ignored)."""
    value = headers.get("Retry-After") if headers is not None else None
    try:
        return max(0.0, float(value)) if value is not None else None
    except ValueError:
        return None


def _answer_text(body: bytes, token: Token, limit: int = 200) -> str:
    """What the endpoint said, as one short line: the JSON body's ``error``/``message``/
    ``detail`` when it has one, else its text; the token removed, controls escaped."""
    text = body[:4096].decode("utf-8", errors="replace")
    try:
        data = json.loads(text)
        if isinstance(data, dict):
            for key in ("error", "message", "detail", "title"):
                if isinstance(data.get(key), str):
                    text = data[key]
                    break
    except ValueError:
        pass
    text = " ".join(token.hide(text).split())
    text = escape_controls(text)
    return text[:limit] + ("…" if len(text) > limit else "")


def _receipt(body: bytes, headers: Message | None, token: Token) -> str | None:
    """The endpoint's receipt: the JSON body's ``receipt`` or ``id``, else ``Location``."""
    try:
        data = json.loads(body[:65536].decode("utf-8"))
    except (ValueError, UnicodeDecodeError):
        data = None
    found = None
    if isinstance(data, dict):
        for key in ("receipt", "id"):
            if isinstance(data.get(key), (str, int)) and not isinstance(data.get(key), bool):
                found = str(data[key])
                break
    if found is None and headers is not None:
        found = headers.get("Location")
    if not found:
        return None
    return escape_controls(token.hide(" ".join(found.split())))[:200]


_HINTS = {
    400: "the endpoint does not accept this record as sent; ask its administrator",
    401: f"check the token ({TOKEN_VARIABLE} or --token-file)",
    403: "the token is not allowed to send records there; ask the endpoint's administrator",
    404: f"check the endpoint's address (--endpoint or {URL_VARIABLE})",
    405: f"check the endpoint's address (--endpoint or {URL_VARIABLE}); it takes POST",
    413: "the record or its attachments are too large for the endpoint; send without "
         "--attach, or ask its administrator",
    415: "the endpoint does not take this format; it must accept the exchange in docs/upload.md",
    422: "the endpoint does not accept this record; ask its administrator",
}


def send_record(endpoint: str, record: Mapping[str, Any], token: Token,
                attachments: Sequence[Attachment] = (), digest: str | None = None,
                policy: RetryPolicy | None = None, rng: random.Random | None = None,
                sleep: Callable[[float], None] = time.sleep) -> UploadResult:
    """Send one record to ``endpoint`` (``POST``), retrying what may pass later.

    Parameters
    ----------
    endpoint : str
        The endpoint's URL (see :func:`check_endpoint`).
    record : mapping
        The record (``activolt-record/1``).
    token : Token
        The bearer token (:func:`read_token`).
    attachments : sequence of Attachment
        Outputs sent with it (multipart body).
    digest : str, optional
        The record's hash; :func:`activolt.io.archive.record_hash` of it by default. It is the
        ``Idempotency-Key``: every attempt of this record carries the same one.
    policy : RetryPolicy, optional
        Retries, pauses and the timeout of each attempt.
    rng : random.Random, optional
        Source of the jitter.
    sleep : callable
        Waits between attempts (``time.sleep``).

    Returns
    -------
    UploadResult

    Raises
    ------
    UploadRefused
        A 4xx answer (but 408, 409, 425, 429) or a redirect: not retried.
    UploadUnavailable
        No usable answer after every attempt (connection refused, timeout, 5xx, 408, 429).
    """
    policy = policy or RetryPolicy()
    rng = rng or random.Random()
    digest = digest or record_hash(record)
    body, kind = request_body(record, digest, attachments)
    shown = shown_url(endpoint)
    short = digest[:12]
    attempts = policy.retries + 1
    last = ""
    for attempt in range(1, attempts + 1):
        request = urllib.request.Request(endpoint, data=body, method="POST", headers={
            "Content-Type": kind, "Accept": "application/json",
            "User-Agent": f"activolt/{__version__}", "Idempotency-Key": digest,
            "Authorization": f"Bearer {token.reveal()}"})
        retry_after = None
        try:
            with _OPENER.open(request, timeout=policy.timeout_s) as answer:
                content = answer.read()
                status = answer.status
                _log.info("record %s sent to %s: %s", short, shown, status)
                return UploadResult(digest, status, _receipt(content, answer.headers, token),
                                    attempt)
        except urllib.error.HTTPError as error:
            status = error.code
            try:
                content = error.read()
            except (OSError, ValueError):
                content = b""
            finally:
                error.close()
            said = _answer_text(content, token)
            if status == 409:
                _log.info("record %s already at %s (409)", short, shown)
                return UploadResult(digest, status, _receipt(content, error.headers, token)
                                    or "already there", attempt, already_there=True)
            if 300 <= status < 400:
                raise UploadRefused(
                    f"the endpoint {shown} answered {status} (a redirect to "
                    f"{shown_url(error.headers.get('Location', '') or '?')}); give the final "
                    "address with --endpoint (redirects are not followed, so that the token "
                    "goes nowhere else)", digest, status, attempt) from None
            if status < 500 and status not in RETRIED_STATUSES:
                hint = _HINTS.get(status, "the endpoint refused it; ask its administrator")
                raise UploadRefused(
                    f"the endpoint {shown} refused record {short}: {status} "
                    f"{_reason(status)}" + (f" — {said}" if said else "") + f"; {hint}",
                    digest, status, attempt) from None
            last = f"{status} {_reason(status)}" + (f" — {said}" if said else "")
            retry_after = _retry_after(error.headers)
        except OSError as error:  # URLError, timeouts and refused connections alike
            status = None
            reason = getattr(error, "reason", error)
            if isinstance(reason, TimeoutError):
                last = f"no answer within {policy.timeout_s:g} s"
            else:
                last = escape_controls(token.hide(" ".join(
                    str(getattr(reason, "strerror", None) or reason).split())))
        if attempt < attempts:
            pause = policy.pause(attempt - 1, rng, retry_after)
            _log.info("record %s: attempt %d of %d to %s failed (%s); again in %.2f s", short,
                      attempt, attempts, shown, last, pause)
            sleep(pause)
    raise UploadUnavailable(
        f"the endpoint {shown} did not take record {short} after {attempts} attempt"
        f"{'s' if attempts > 1 else ''} (last: {last})", digest, status, attempts)


def _reason(status: int) -> str:
    """The standard reason phrase of an HTTP status (RFC 9110), or ''."""
    from http import HTTPStatus

    try:
        return HTTPStatus(status).phrase
    except ValueError:
        return ""


@dataclass
class OutboxReport:
    """What one pass over the outbox did: records sent, refused (with the one-line reason),
    and left queued (not reached, or the endpoint unavailable)."""

    sent: list[UploadResult] = field(default_factory=list)
    refused: list[UploadRefused] = field(default_factory=list)
    unavailable: list[UploadUnavailable] = field(default_factory=list)
    not_tried: list[str] = field(default_factory=list)

    @property
    def still_queued(self) -> int:
        """Records still in the outbox after the pass (refused ones included: nothing is
        dropped)."""
        return len(self.refused) + len(self.unavailable) + len(self.not_tried)


def attachments_of(archive: Archive, digest: str, names: Sequence[str]) -> list[Attachment]:
    """The archived outputs of a record named in ``names`` (``report.html`` finds
    ``RUN.report.html``) as attachments under their archived file names; InputError for one the
    archive does not hold."""
    if not names:
        return []
    stored = archive.get(digest).outputs
    found = []
    for name in names:
        content = archive.output(digest, name)
        matches = [s for s in stored if s == name or s.endswith("." + name)]
        file_name = matches[0] if len(matches) == 1 else name
        found.append(Attachment(file_name, content, media_type(file_name)))
    return found


def send_pending(archive: Archive, endpoint: str, token: Token,
                 hashes: Sequence[str] | None = None, policy: RetryPolicy | None = None,
                 rng: random.Random | None = None,
                 sleep: Callable[[float], None] = time.sleep) -> OutboxReport:
    """Send what waits in the archive's outbox for ``endpoint`` (only ``hashes``, when given),
    oldest first; each accepted record is marked sent, each failure noted and left queued.

    A refusal that concerns the endpoint (401, 403, 404, 405, a redirect) or an endpoint that
    cannot be reached ends the pass: the records after it are not tried (they stay queued).
    """
    report = OutboxReport()
    wanted = None if hashes is None else set(hashes)
    pending = [p for p in archive.pending_uploads(endpoint)
               if wanted is None or p.record_hash in wanted]
    for index, item in enumerate(pending):
        record = archive.record(item.record_hash)
        files = attachments_of(archive, item.record_hash, item.attachments)
        try:
            result = send_record(endpoint, record, token, files, digest=item.record_hash,
                                 policy=policy, rng=rng, sleep=sleep)
        except UploadRefused as refusal:
            archive.note_upload_failure(item.record_hash, endpoint, refusal.message)
            report.refused.append(refusal)
            if refusal.endpoint_wide:
                report.not_tried = [p.record_hash for p in pending[index + 1:]]
                break
            continue
        except UploadUnavailable as failure:
            archive.note_upload_failure(item.record_hash, endpoint, failure.message)
            report.unavailable.append(failure)
            report.not_tried = [p.record_hash for p in pending[index + 1:]]
            break
        archive.mark_uploaded(item.record_hash, endpoint, result.receipt)
        report.sent.append(result)
    return report

