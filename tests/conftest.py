"""Shared fixtures."""

from __future__ import annotations

import numpy as np
import pytest


@pytest.fixture
def rng() -> np.random.Generator:
    return np.random.default_rng(12345)


@pytest.fixture(scope="session", autouse=True)
def records_match_their_schema(tmp_path_factory):
    """Every record the suite writes (any ``*.json`` under the session's temporary folders
    whose ``record_schema`` is ``activolt-record/1``) is validated against
    ``record_schema.json`` (JSON Schema 2020-12) when the session ends."""
    yield
    import json

    import jsonschema

    from activolt.io.record import RECORD_SCHEMA, record_schema

    validator = jsonschema.Draft202012Validator(record_schema())
    failures = []
    for path in sorted(tmp_path_factory.getbasetemp().rglob("*.json")):
        try:
            record = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue  # not a record (a test's deliberately broken file)
        if not isinstance(record, dict) or record.get("record_schema") != RECORD_SCHEMA:
            continue
        error = jsonschema.exceptions.best_match(validator.iter_errors(record))
        if error is not None:
            failures.append(f"{path}: {error.json_path}: {error.message[:200]}")
    assert not failures, "records that do not match their schema:\n" + "\n".join(failures)
