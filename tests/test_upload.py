"""Upload to a lab-records system: a real HTTP server on 127.0.0.1, started by the tests.

What is checked comes from the standards the exchange is built on, not from the code: HTTP
status semantics (RFC 9110: 2xx accepted, 3xx a redirect, 4xx the client's fault, 5xx the
server's, 408/429 try later, ``Retry-After``), bearer tokens (RFC 6750, ``Authorization: Bearer``),
``multipart/form-data`` (RFC 7578), the ``Idempotency-Key`` header (IETF httpapi draft, common
practice) and exponential back-off with full jitter (common practice). The record hash is checked
against SHA-256 of the canonical JSON made here with the standard library.
"""

from __future__ import annotations

import email.parser
import email.policy
import hashlib
import json
import logging
import random
import shutil
import socket
import threading
import time
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.cli import main
from activolt.io.archive import open_archive
from activolt.io.upload import (
    RetryPolicy,
    Token,
    UploadRefused,
    UploadUnavailable,
    read_token,
    send_record,
)

SAMPLE = Path(__file__).resolve().parents[1] / "src" / "activolt" / "sample_data"
SECRET = "tok-Kestrel-9f8e7d6c5b4a39281706"
FAST = RetryPolicy(retries=3, base_s=0.0, cap_s=0.0, timeout_s=5.0)


# --- a records server ------------------------------------------------------------------------

class RecordsServer:
    """A lab-records endpoint on 127.0.0.1: keeps every request, stores each record once by its
    ``Idempotency-Key``, and answers from a script of ``(status, body, headers, store)`` first,
    then 201 (a new record) or 200 (one it already has)."""

    def __init__(self, script=(), port: int = 0, delay_s: float = 0.0) -> None:
        self.script = list(script)
        self.requests: list[dict] = []
        self.stored: dict[str, bytes] = {}
        self.delay_s = delay_s
        self.lock = threading.Lock()
        server = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self):  # the name http.server calls
                body = self.rfile.read(int(self.headers.get("Content-Length", 0)))
                key = self.headers.get("Idempotency-Key", "")
                with server.lock:
                    server.requests.append({"path": self.path, "headers": dict(self.headers),
                                            "body": body})
                    status, answer, headers, store = (server.script.pop(0) if server.script
                                                      else (None, None, {}, True))
                    if store and key not in server.stored:
                        server.stored[key] = body
                        status = status or 201
                    status = status or 200
                time.sleep(server.delay_s)
                data = (answer if isinstance(answer, bytes)
                        else json.dumps(answer or {"receipt": f"R-{key[:8]}"}).encode())
                self.send_response(status)
                for name, value in headers.items():
                    self.send_header(name, value)
                self.send_header("Content-Type", "application/json")
                self.send_header("Content-Length", str(len(data)))
                self.end_headers()
                self.wfile.write(data)

            def log_message(self, *args):  # quiet
                pass

        self.httpd = ThreadingHTTPServer(("127.0.0.1", port), Handler)
        self.thread = threading.Thread(target=self.httpd.serve_forever, daemon=True)

    @property
    def port(self) -> int:
        return self.httpd.server_address[1]

    def url(self, path: str = "/records") -> str:
        return f"http://127.0.0.1:{self.port}{path}"

    def __enter__(self) -> RecordsServer:
        self.thread.start()
        return self

    def __exit__(self, *exc) -> None:
        self.httpd.shutdown()
        self.httpd.server_close()


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _canonical_sha256(record: dict) -> str:
    """SHA-256 of the record's canonical JSON (keys sorted, no blanks, UTF-8): the hash the
    exchange names its records by (docs/upload.md)."""
    text = json.dumps(record, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


# --- an archive holding one record --------------------------------------------------------------

@pytest.fixture(scope="module")
def output_set(tmp_path_factory):
    """The bundled sample run reduced once (record, report, HTML report), no figures."""
    folder = tmp_path_factory.mktemp("upload")
    shutil.copy(SAMPLE / "kestrel_hcl_25C.csv", folder / "run.csv")
    shutil.copy(SAMPLE / "kestrel_hcl_25C.toml", folder / "run.toml")
    assert main(["reduce", str(folder / "run.csv"), "--no-figures", "--out",
                 str(folder / "out")]) == 0
    return folder / "out"


@pytest.fixture
def archived(tmp_path, output_set, monkeypatch):
    """(archive location, record hash, record) with the token in the environment only."""
    for name in ("ACTIVOLT_UPLOAD_URL", "ACTIVOLT_ARCHIVE"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("ACTIVOLT_UPLOAD_TOKEN", SECRET)
    location = tmp_path / "archive.sqlite"
    record = json.loads((output_set / "run.record.json").read_text(encoding="utf-8"))
    with open_archive(location) as archive:
        digest = archive.add(record, outputs=sorted(output_set.iterdir()))
    return str(location), digest, record


def _pending(location: str):
    with open_archive(location) as archive:
        return archive.pending_uploads()


def _upload(location: str, endpoint: str, *args: str) -> int:
    return main(["upload", "--archive", location, "--endpoint", endpoint, *args])


# --- the exchange ------------------------------------------------------------------------------

def test_a_record_is_posted_with_bearer_token_and_idempotency_key(archived, capsys):
    location, digest, record = archived
    with RecordsServer([(201, {"receipt": "KB-REC-0001"}, {}, True)]) as server:
        assert _upload(location, server.url(), digest[:10]) == 0
    (request,) = server.requests
    headers = {k.lower(): v for k, v in request["headers"].items()}
    assert request["path"] == "/records"
    assert headers["authorization"] == f"Bearer {SECRET}"  # RFC 6750, 2.1
    assert headers["content-type"] == "application/json"
    body = json.loads(request["body"])
    assert body["protocol"] == "activolt-upload/1"
    assert body["record"] == record
    # the key is the record's hash, SHA-256 of its canonical JSON, made here independently
    assert headers["idempotency-key"] == body["record_hash"] == digest == _canonical_sha256(
        record)
    assert "sent" in capsys.readouterr().out
    assert _pending(location) == []
    with open_archive(location) as archive:
        (upload,) = archive.uploads(digest)
    assert upload["receipt"] == "KB-REC-0001" and upload["sent_utc"] is not None


def test_attachments_go_as_multipart_form_data(archived, output_set, capsys):
    location, digest, record = archived
    with RecordsServer() as server:
        assert _upload(location, server.url(), digest, "--attach", "report.html") == 0
    (request,) = server.requests
    kind = {k.lower(): v for k, v in request["headers"].items()}["content-type"]
    assert kind.startswith("multipart/form-data; boundary=")
    message = email.parser.BytesParser(policy=email.policy.HTTP).parsebytes(
        f"Content-Type: {kind}\r\n\r\n".encode() + request["body"])
    parts = list(message.iter_parts())
    assert [p.get_param("name", header="content-disposition") for p in parts] == [
        "envelope", "attachment"]
    envelope = json.loads(parts[0].get_payload(decode=True))
    html = (output_set / "run.report.html").read_bytes()
    assert parts[1].get_filename() == "run.report.html"
    assert parts[1].get_payload(decode=True) == html
    assert envelope["record"] == record and envelope["attachments"] == [
        {"name": "run.report.html", "media_type": "text/html; charset=utf-8",
         "size": len(html), "sha256": hashlib.sha256(html).hexdigest()}]


def test_server_down_the_record_stays_queued_then_goes_once_it_is_up(archived, capsys):
    location, digest, _ = archived
    port = _free_port()  # nothing listens there: connection refused
    status = _upload(location, f"http://127.0.0.1:{port}/records", digest, "--retries", "1")
    captured = capsys.readouterr()
    assert status == 4
    assert "stay" in captured.err and "--all-pending" in captured.err
    (waiting,) = _pending(location)
    assert waiting.record_hash == digest and waiting.attempts == 1
    assert waiting.last_error and "2 attempts" in waiting.last_error
    with RecordsServer(port=port) as server:
        assert _upload(location, server.url(), "--all-pending") == 0
    assert len(server.requests) == 1 and list(server.stored) == [digest]
    assert _pending(location) == []


def test_500_then_200_leaves_exactly_one_record_on_the_server(archived, capsys):
    # The server stores the record, then fails before it answers (500): the retry carries the
    # same Idempotency-Key, so the server recognises it and keeps one copy.
    location, digest, _ = archived
    with RecordsServer([(500, {"error": "database timeout"}, {}, True)]) as server:
        assert _upload(location, server.url(), digest, "--retries", "2") == 0
    assert len(server.requests) == 2
    keys = [{k.lower(): v for k, v in r["headers"].items()}["idempotency-key"]
            for r in server.requests]
    assert keys == [digest, digest]
    assert len(server.stored) == 1
    assert _pending(location) == []


def test_401_is_one_clear_line_exit_2_and_nothing_lost(archived, capsys):
    location, digest, record = archived
    with RecordsServer([(401, {"error": "invalid token"}, {}, False)]) as server:
        assert _upload(location, server.url(), digest) == 2
    captured = capsys.readouterr()
    err = captured.err.strip().splitlines()
    assert len(err) == 1
    assert "401" in err[0] and "invalid token" in err[0] and "ACTIVOLT_UPLOAD_TOKEN" in err[0]
    assert len(server.requests) == 1  # a refusal is not retried
    (waiting,) = _pending(location)  # nothing lost: still queued, the reason kept
    assert waiting.record_hash == digest and "401" in waiting.last_error
    with open_archive(location) as archive:
        assert archive.record(digest) == record


def test_409_means_the_endpoint_already_has_it(archived, capsys):
    location, digest, _ = archived
    with RecordsServer([(409, {"error": "duplicate"}, {}, False)]) as server:
        assert _upload(location, server.url(), digest) == 0
    assert "already had it" in capsys.readouterr().out
    assert _pending(location) == []


def test_a_redirect_is_not_followed_and_the_token_goes_nowhere_else(archived, capsys):
    location, digest, _ = archived
    with RecordsServer() as other, RecordsServer(
            [(307, {"error": "moved"}, {"Location": "REPLACED"}, False)]) as server:
        server.script[0][2]["Location"] = other.url("/elsewhere")
        assert _upload(location, server.url(), digest) == 2
    assert other.requests == [] and len(server.requests) == 1
    assert "redirect" in capsys.readouterr().err
    assert len(_pending(location)) == 1


def test_retry_after_and_5xx_are_retried_until_the_retries_run_out(archived):
    record = archived[2]
    pauses: list[float] = []
    script = [(503, b"", {"Retry-After": "0"}, False)] * 4
    with RecordsServer(script) as server:
        with pytest.raises(UploadUnavailable, match=r"after 4 attempts \(last: 503"):
            send_record(server.url(), record, Token(SECRET), policy=FAST, sleep=pauses.append)
    assert len(server.requests) == 4 and pauses == [0.0, 0.0, 0.0]


def test_a_server_that_does_not_answer_in_time_is_retried(archived):
    _, _, record = archived
    policy = RetryPolicy(retries=1, base_s=0.0, cap_s=0.0, timeout_s=0.3)
    with RecordsServer(delay_s=1.0) as server:
        with pytest.raises(UploadUnavailable, match=r"no answer within 0\.3 s"):
            send_record(server.url(), record, Token(SECRET), policy=policy, sleep=lambda s: None)
    assert len(server.requests) == 2


# --- the token is never shown ---------------------------------------------------------------------

def test_the_token_appears_in_no_output_log_or_exception(archived, capsys, caplog):
    location, digest, record = archived
    caplog.set_level(logging.DEBUG)
    texts: list[str] = []
    echo = {"error": f"bad request from Bearer {SECRET}"}  # a server that echoes the header
    with RecordsServer([(500, echo, {}, False), (400, echo, {}, False)]) as server:
        assert _upload(location, server.url(), digest, "--retries", "1") == 2
        server.script.append((403, echo, {}, False))
        with pytest.raises(UploadRefused) as refused:
            send_record(server.url(), record, Token(SECRET), policy=FAST, sleep=lambda s: None)
        texts += [str(refused.value), repr(refused.value), *map(str, refused.value.args)]
    port = _free_port()
    with pytest.raises(UploadUnavailable) as down:
        send_record(f"http://127.0.0.1:{port}/r", record, Token(SECRET),
                    policy=RetryPolicy(retries=1, base_s=0.0, cap_s=0.0), sleep=lambda s: None)
    texts += [str(down.value), repr(down.value)]
    assert main(["upload", "--archive", location, "--endpoint", server.url(), digest,
                 "--token", SECRET]) == 2  # typed on the command line: refused, not echoed
    captured = capsys.readouterr()
    texts += [captured.out, captured.err, caplog.text,
              *(r.getMessage() for r in caplog.records), repr(Token(SECRET)),
              f"{Token(SECRET)}"]
    with open_archive(location) as archive:
        texts += [str(p) for p in archive.pending_uploads()]
        texts += [json.dumps(u) for u in archive.uploads(digest)]
    assert "bad request from Bearer" in captured.err  # the server's words are shown …
    assert all(SECRET not in t for t in texts)  # … but never the token
    assert any("attempt 1 of 2" in r.getMessage() for r in caplog.records)


def test_the_token_comes_from_the_environment_or_a_file_only(tmp_path, monkeypatch, capsys):
    monkeypatch.delenv("ACTIVOLT_UPLOAD_TOKEN", raising=False)
    with pytest.raises(Exception, match="no upload token"):
        read_token()
    file = tmp_path / "token"
    file.write_text(f"  {SECRET}\n", encoding="utf-8")
    assert read_token(file).reveal() == SECRET
    monkeypatch.setenv("ACTIVOLT_UPLOAD_TOKEN", "from-environment")
    assert read_token(file).reveal() == SECRET  # the file, when given, wins
    assert read_token().reveal() == "from-environment"
    file.write_text(f"{SECRET}\nsecond line\n", encoding="utf-8")
    with pytest.raises(Exception, match="more than one line") as error:
        read_token(file)
    assert SECRET not in str(error.value)


@pytest.mark.parametrize(("endpoint", "says"), [
    ("http://records.example/in", "plain http"),  # a token in clear over the network
    ("https://user:pw@records.example/in", "holds credentials"),
    ("ftp://records.example/in", "not an http(s) URL"),
])
def test_unfit_endpoints_are_bad_input(archived, capsys, endpoint, says):
    location, digest, _ = archived
    assert _upload(location, endpoint, digest) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and says in err[0] and "pw" not in err[0]
    assert _pending(location) == []  # nothing queued for an endpoint that cannot be used


def test_no_endpoint_and_no_records_are_bad_input(archived, capsys):
    location, digest, _ = archived
    assert main(["upload", "--archive", location, digest]) == 2
    assert "ACTIVOLT_UPLOAD_URL" in capsys.readouterr().err
    assert main(["upload", "--archive", location, "--endpoint", "https://records.example/"]
                ) == 2
    assert "--all-pending" in capsys.readouterr().err


def test_a_missing_attachment_queues_nothing(archived, capsys):
    location, digest, _ = archived
    with RecordsServer() as server:
        assert _upload(location, server.url(), digest, "--attach", "certificate.html") == 2
    assert "certificate.html" in capsys.readouterr().err
    assert server.requests == [] and _pending(location) == []


# --- the back-off ---------------------------------------------------------------------------

@settings(derandomize=True, max_examples=200)
@given(retry=st.integers(0, 30), base=st.floats(0.0, 5.0), cap=st.floats(0.0, 120.0),
       seed=st.integers(0, 2**32 - 1),
       retry_after=st.none() | st.floats(0.0, 1000.0))
def test_pauses_grow_exponentially_jittered_and_capped(retry, base, cap, seed, retry_after):
    policy = RetryPolicy(base_s=base, cap_s=cap)
    pause = policy.pause(retry, random.Random(seed), retry_after)
    assert 0.0 <= pause <= cap
    ceiling = min(cap, base * 2.0**retry)
    assert pause <= max(ceiling, min(retry_after or 0.0, cap))
    if retry_after is not None:
        assert pause >= min(retry_after, cap)
