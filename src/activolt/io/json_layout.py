"""The text of a JSON record: one layout for every record kind, written quickly.

:func:`json_text` writes one document; :func:`json_texts` writes several — a batch's records —
to the same text byte for byte, the rows of their tables (the objects in an array: readings,
published values, derived properties) written together, column by column. The floats of a
column that ``repr`` and Arrow's shortest round-trip formatting spell alike (finite,
non-integral, 10⁻⁴ ≤ |x| < 10⁹: checked on millions of random doubles, and again in each
process before first use) are formatted by Arrow in one call; the rest by ``repr``, as the
standard library's encoder does.
"""

from __future__ import annotations

import functools
import json
import json.encoder
import math
from collections.abc import Sequence
from typing import Any

__all__ = ["json_text", "json_texts"]


def _not_json(value: Any) -> Any:
    """What ``json.JSONEncoder.default`` does: refuse a value JSON cannot hold."""
    raise TypeError(f"Object of type {value.__class__.__name__} is not JSON serializable")


def _chunk_encoder() -> Any:
    """The pieces of ``json.dumps(value, ensure_ascii=False, allow_nan=False)`` (one line,
    ``", "`` and ``": "`` between members): the standard library's C encoder made once, else
    the encoder itself."""
    from json.encoder import c_make_encoder, encode_basestring

    encode = json.JSONEncoder(ensure_ascii=False, allow_nan=False).encode
    try:
        # the arguments JSONEncoder.iterencode gives it (no check for circular references:
        # a record is a tree)
        return c_make_encoder(None, _not_json, encode_basestring, None, ": ", ", ", False,
                              False, False)
    except TypeError:  # no C encoder (None), or one that takes other arguments
        return lambda value, _level: (encode(value),)


_CHUNKS = _chunk_encoder()
_ENCODE_TEXT = json.encoder.encode_basestring  # a string as JSON, UTF-8 kept (C when built)
_CONTAINERS = (dict, list, tuple)


def _one_line(value: Any) -> str:
    """``value`` as JSON on one line."""
    return "".join(_CHUNKS(value, 0))


def json_text(document: Any) -> str:
    r"""A record as its file's text — one format for every record kind, whose bytes the archive
    and the HTML report name by their SHA-256.

    The text is JSON (UTF-8 characters as they are, ``ensure_ascii=False``) laid out for
    reading: an object or an array holding no object or array is written on one line, and so
    is every object inside an array (a row of a table: a reading, a model, an electrode);
    every other object or array is indented by two spaces, one member a line. A final newline
    ends the text. ``json.loads`` of it gives what ``json.dumps(document)`` would.

    Raises
    ------
    ValueError
        A non-finite number.
    TypeError
        A value JSON cannot hold.

    Examples
    --------
    >>> print(json_text({"a": [1, 2.5, None], "b": {}, "c": "γ±",
    ...                  "rows": [{"m": 0.1, "u": {"x": 1}}, {"m": 0.2, "u": {}}],
    ...                  "d": {"e": [[1, 0], [0, 1]]}}), end="")
    {
      "a": [1, 2.5, null],
      "b": {},
      "c": "γ±",
      "rows": [
        {"m": 0.1, "u": {"x": 1}},
        {"m": 0.2, "u": {}}
      ],
      "d": {
        "e": [
          [1, 0],
          [0, 1]
        ]
      }
    }
    """
    pieces: list[str] = []
    _lay_out(document, "\n", pieces)
    pieces.append("\n")
    return "".join(pieces)


def _lay_out(value: Any, newline: str, pieces: list[str], rows: _Rows | None = None) -> None:
    """Append ``value`` as :func:`json_text` lays it out to ``pieces``, ``newline`` being the
    line break and the indentation of the line it starts on. With ``rows``, each row of a table
    (an object in an array) is left as an empty piece that ``rows`` fills in later."""
    if isinstance(value, dict):
        if not any(isinstance(v, _CONTAINERS) for v in value.values()):
            pieces += _CHUNKS(value, 0)
            return
        inner = newline + "  "
        opening = "{" + inner
        for key, member in value.items():
            pieces += (opening, _key(key), ": ")
            _lay_out(member, inner, pieces, rows)
            opening = "," + inner
        pieces.append(newline + "}")
    elif isinstance(value, (list, tuple)):
        if not any(isinstance(v, _CONTAINERS) for v in value):
            pieces += _CHUNKS(value, 0)
            return
        inner = newline + "  "
        opening = "[" + inner
        for member in value:
            pieces.append(opening)
            if not isinstance(member, dict):
                _lay_out(member, inner, pieces, rows)
            elif rows is None:
                pieces += _CHUNKS(member, 0)
            else:
                rows.leave_place(member, pieces)
            opening = "," + inner
        pieces.append(newline + "]")
    else:
        pieces += _CHUNKS(value, 0)


def _key(key: Any) -> str:
    """An object's key as JSON writes it (a number, true, false or null as a string)."""
    if type(key) is str:
        return _ENCODE_TEXT(key)
    return _one_line({key: 0})[1:-4]  # the key of {key: 0} as the encoder converts it


def json_texts(documents: Sequence[Any]) -> list[str]:
    """:func:`json_text` of each document, byte for byte, the rows of all their tables written
    together, column by column (quicker than one document at a time for many rows).

    Raises
    ------
    ValueError
        A non-finite number.
    TypeError
        A value JSON cannot hold.

    Examples
    --------
    >>> documents = [{"rows": [{"m": 0.1, "ok": True}, {"m": 2e-05, "ok": None}]},
    ...              {"rows": [{"m": 1.0, "ok": False}], "n": 3}]
    >>> json_texts(documents) == [json_text(d) for d in documents]
    True
    """
    rows = _Rows()
    laid_out: list[list[str]] = []
    for document in documents:
        pieces: list[str] = []
        _lay_out(document, "\n", pieces, rows)
        pieces.append("\n")
        laid_out.append(pieces)
    rows.fill()
    return ["".join(pieces) for pieces in laid_out]


class _Rows:
    """The rows of the tables of several documents, each left as an empty piece of its
    document's text (:meth:`leave_place`), written together by :meth:`fill`: the rows of one
    set of keys column by column."""

    def __init__(self) -> None:
        self.by_keys: dict[tuple[Any, ...], list[tuple[dict[Any, Any], list[str], int]]] = {}

    def leave_place(self, row: dict[Any, Any], pieces: list[str]) -> None:
        """Leave an empty piece at the end of ``pieces`` for ``row``'s one-line text."""
        self.by_keys.setdefault(tuple(row), []).append((row, pieces, len(pieces)))
        pieces.append("")

    def fill(self) -> None:
        """Every row's one-line text in its place, as the standard library's encoder writes
        it (:func:`_one_line`)."""
        for keys, places in self.by_keys.items():
            if not keys:
                for _row, pieces, at in places:
                    pieces[at] = "{}"
                continue
            columns = zip(*(row.values() for row, _pieces, _at in places), strict=True)
            template = "{" + ", ".join(_key(key).replace("%", "%%") + ": %s"
                                       for key in keys) + "}"
            lines = [template % cells for cells in zip(
                *(_column_texts(column) for column in columns), strict=True)]
            for (_row, pieces, at), line in zip(places, lines, strict=True):
                pieces[at] = line


#: The JSON of True, False and None.
_LITERALS = {True: "true", False: "false", None: "null"}
_NONE = type(None)
#: Below this many values a column is written value by value (Arrow's calls cost more).
_ARROW_FROM = 48


def _column_texts(values: tuple[Any, ...]) -> list[str]:
    """Each value of one column as JSON, as the standard library's encoder writes it."""
    kinds = set(map(type, values))
    if float in kinds and kinds <= {float, _NONE}:
        return _float_texts(values)
    if kinds == {str}:
        return list(map(_ENCODE_TEXT, values))
    if kinds <= {bool, _NONE}:
        return [_LITERALS[value] for value in values]
    if kinds == {int}:
        return list(map(int.__repr__, values))
    return [_one_line(value) for value in values]


def _float_texts(values: tuple[float | None, ...]) -> list[str]:
    """Floats (and None) as JSON: ``repr`` of each, through Arrow where it spells alike.

    Raises
    ------
    ValueError
        A non-finite float (as the standard library's encoder with ``allow_nan=False``).
    """
    texts: list[Any]
    if len(values) >= _ARROW_FROM and _arrow_spells_as_repr():
        import numpy as np
        import pyarrow as pa

        column = pa.array(values, type=pa.float64())
        x = column.to_numpy(zero_copy_only=False)  # (None as NaN)
        size = np.abs(x)
        alike = (size >= _ALIKE_FROM) & (size < _ALIKE_BELOW) & (x != np.trunc(x))
        texts = [None] * len(values)
        at = np.flatnonzero(alike).tolist()
        for i, text in zip(at, pa.array(x[alike]).cast(pa.string()).to_pylist(), strict=True):
            texts[i] = text
        rest = np.flatnonzero(~alike).tolist()
    else:
        texts = list(values)
        rest = range(len(values))
    for i in rest:
        value = values[i]
        if value is None:
            texts[i] = "null"
        elif math.isfinite(value):
            texts[i] = float.__repr__(value)
        else:
            raise ValueError(f"Out of range float values are not JSON compliant: {value!r}")
    return texts


#: The magnitudes between which Arrow's shortest round-trip formatting of a non-integral
#: float is ``repr``'s (positional; outside, the two place the exponent differently).
_ALIKE_FROM, _ALIKE_BELOW = 1e-4, 1e9


@functools.lru_cache(maxsize=1)
def _arrow_spells_as_repr() -> bool:
    """Whether this pyarrow's float formatting is ``repr``'s in the range it is used for,
    checked once on values chosen to catch a difference (the nearest-digit choice, the
    range's ends, long and short digit strings); False (``repr`` for every float) if not."""
    import numpy as np
    import pyarrow as pa

    probes = np.concatenate([
        [1e-4, -1e-4, 0.1, 0.2, 0.3, 1 / 3, 2 / 3, 0.5, 1.5, 123.456, 298.15, 5e-324 + 0.1,
         0.1 + 0.2, 999999999.5, 999999999.9999999, 100000000.00000001, 0.00010000000000000002,
         9.999999999999999e8, 2.5e-4, 1.7976931348623157e8, 0.30000000000000004],
        np.random.default_rng(2026).uniform(-9.0, 9.0, 64) * 10.0 ** np.arange(-4, 12)[
            np.arange(64) % 13]])
    probes = probes[(np.abs(probes) >= _ALIKE_FROM) & (np.abs(probes) < _ALIKE_BELOW)
                    & (probes != np.trunc(probes))]
    try:
        arrow = pa.array(probes).cast(pa.string()).to_pylist()
    except (pa.ArrowException, ValueError):
        return False
    return arrow == [float.__repr__(value) for value in probes.tolist()]
