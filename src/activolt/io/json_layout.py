"""The text of a JSON record: one layout for every record kind, written quickly.

:func:`json_text` writes one document; :func:`json_texts` writes several — a batch's records —
to the same texts byte for byte (:func:`json_bytes`: to their UTF-8 bytes, as files are
written), walking them together: a place they share is laid out once, its scalars written a
column at a time and the texts put together by Arrow. The floats of all the columns are written
by one Arrow cast (its shortest round-trip formatting has ``repr``'s digits; where it places
them otherwise — integral floats, magnitudes below 10⁻⁴ — they are put right), checked against
``repr`` once in each process before first use (``repr`` for every float if this pyarrow spells
them otherwise), as the standard library's encoder writes them.
"""

from __future__ import annotations

import functools
import json
import json.encoder
import math
from collections.abc import Callable, Sequence
from itertools import chain
from typing import Any

__all__ = ["json_bytes", "json_text", "json_texts"]


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


def _lay_out(value: Any, newline: str, pieces: list[str]) -> None:
    """Append ``value`` as :func:`json_text` lays it out to ``pieces``, ``newline`` being the
    line break and the indentation of the line it starts on."""
    if isinstance(value, dict):
        if not any(isinstance(v, _CONTAINERS) for v in value.values()):
            pieces += _CHUNKS(value, 0)
            return
        inner = newline + "  "
        opening = "{" + inner
        for key, member in value.items():
            pieces += (opening, _key(key), ": ")
            _lay_out(member, inner, pieces)
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
            if isinstance(member, dict):
                pieces += _CHUNKS(member, 0)
            else:
                _lay_out(member, inner, pieces)
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
    """:func:`json_text` of each document, byte for byte, written together: quicker than one
    document at a time when the documents share their shape (as a batch's records do).

    The documents are walked together, place by place. Where they all hold objects with the
    same keys in the same order, or arrays of the same length, the place is laid out once for
    all of them — a template of fixed text and columns, one text per document each — and each
    scalar place is a column written in one go: the floats of all the columns in one call
    (:func:`_float_array`), each distinct string of a column encoded once. The rows of the
    tables (the objects of an array laid out over lines) of all the documents are written
    together, each with the bracket or comma before it, so that a table's text is its rows'
    text as it is. The texts are put together by Arrow, a column at a time. Where the
    documents differ, they are written in groups of one shape; what is not plain JSON (a
    subclass of a container, a key that is not a string) is written one value at a time, as
    :func:`json_text` writes it. Fewer than ``_TOGETHER_FROM`` documents are written one at a
    time (the calls on columns would cost more than they save).

    Raises
    ------
    ValueError
        A non-finite number.
    TypeError
        A value JSON cannot hold.

    Examples
    --------
    >>> documents = [{"rows": [{"m": 0.1, "ok": True}, {"m": 2e-05, "ok": None}]},
    ...              {"rows": [{"m": 1.0, "ok": False}], "n": 3}] * 6
    >>> json_texts(documents) == [json_text(d) for d in documents]
    True
    """
    documents = list(documents)
    if len(documents) < _TOGETHER_FROM:
        return list(map(json_text, documents))
    return _written_together(documents).to_pylist()


def json_bytes(documents: Sequence[Any]) -> list[bytes]:
    """:func:`json_texts` of ``documents`` as UTF-8 bytes (as their files are written), taken
    from the texts put together without making each a Python string first.

    Raises
    ------
    ValueError
        A non-finite number.
    TypeError
        A value JSON cannot hold.

    Examples
    --------
    >>> documents = [{"name": "é", "m": [0.1, 2e-05]}] * 16
    >>> json_bytes(documents) == [text.encode() for text in json_texts(documents)]
    True
    """
    import pyarrow as pa

    documents = list(documents)
    if len(documents) < _TOGETHER_FROM:
        return [json_text(document).encode("utf-8") for document in documents]
    return _written_together(documents).cast(pa.large_binary()).to_pylist()


def _written_together(documents: list[Any]) -> Any:
    """The texts of :func:`json_texts` as an Arrow array of strings, ``documents`` walked
    together."""
    chunk = _Chunk()
    pieces = chunk.template(documents, "\n")
    chunk.fill()
    return chunk.joined([*pieces, "\n"], len(documents))


#: Below this many documents, :func:`json_texts` writes them one at a time (the calls on
#: columns cost more than they save).
_TOGETHER_FROM = 12  # (the tests write 16 or more together)
#: The types of the scalars written a column at a time (exactly these: a subclass is written
#: one value at a time, as the standard library's encoder writes it).
_NONE = type(None)
_SCALARS = frozenset({str, int, float, bool, _NONE})
_FLOATS = frozenset({float, _NONE})
_DICTS = frozenset({dict})
_ARRAYS = frozenset({list, tuple})
_PLAIN_CONTAINERS = _DICTS | _ARRAYS
#: The JSON of True, False and None.
_LITERALS = {True: "true", False: "false", None: "null"}
#: How the standard library's encoder writes a scalar of each type.
_SCALAR_TEXTS: dict[type, Callable[[Any], str]] = {
    str: _ENCODE_TEXT, int: int.__repr__, bool: _LITERALS.__getitem__,
    _NONE: _LITERALS.__getitem__, float: lambda value: _float_text(value)}

#: A piece of a template: fixed text, a column of texts (an Arrow array), or what gives one,
#: called once the chunk is filled (:meth:`_Chunk.fill`).
_Piece = Any  # str | pyarrow.Array | Callable[[], pyarrow.Array]


def _common_keys(objects: Sequence[dict[Any, Any]]) -> list[str] | None:
    """The keys of every object, in the same order, when they are strings; else None."""
    keys = list(objects[0])
    if not all(type(key) is str for key in keys) or list(
            chain.from_iterable(objects)) != keys * len(objects):
        return None
    return keys


def _columns(members: list[Any], size: int) -> list[list[Any]]:
    """The columns of ``members``, the members of several objects or arrays of ``size``
    members each, one after another."""
    return [members[i::size] for i in range(size)]


def _holds_containers(kinds: set[type]) -> bool:
    """Whether values of these types include an object or an array."""
    return not kinds <= _SCALARS and any(issubclass(kind, _CONTAINERS) for kind in kinds)


def _flat(value: Any) -> bool:
    """Whether an object or an array holds no object or array (and is written on one line)."""
    members = value.values() if isinstance(value, dict) else value
    return not any(isinstance(member, _CONTAINERS) for member in members)


def _shape(value: Any, laid_out: bool) -> Any:
    """What decides how :func:`json_text` writes ``value`` at a place laid out over lines
    (``laid_out``) or on one line — values of one shape are written with one template — or
    None for a value written on its own."""
    kind = type(value)
    if kind in _SCALARS:
        return "scalar"
    if kind is dict:
        return dict, tuple(value), laid_out and _flat(value)
    if kind in _ARRAYS:
        return list, len(value), laid_out and _flat(value)
    return None


class _Chunk:
    """Several documents written together: their layout as templates (lists of pieces:
    :meth:`template`), whose columns are made once the scalars are written (:meth:`fill`) and
    put together by :meth:`joined`."""

    def __init__(self) -> None:
        #: The scalars of all the columns, one column after another: the floats (and None of
        #: float columns), and the texts of the other scalars; then (:meth:`fill`) each list's
        #: texts as an Arrow array.
        self.scalars: dict[str, Any] = {"floats": [], "texts": []}

    def template(self, values: Sequence[Any], newline: str | None, row: bool = False,
                 kinds: set[type] | None = None) -> list[_Piece]:
        """The template of ``values`` (one value of each document, at one place of it) as
        :func:`json_text` lays them out.

        ``newline`` is the line break and indentation of the place (None: on one line);
        ``row``: the place is a member of an array (where an object is on one line);
        ``kinds``: the types of ``values``, when known."""
        if kinds is None:
            kinds = set(map(type, values))
        if kinds <= _SCALARS:
            return [self.column(values, kinds)]
        if kinds == _DICTS:
            keys = _common_keys(values)
            if keys is not None:
                if not keys:
                    return ["{}"]
                pieces = self.members(values, _columns(list(chain.from_iterable(
                                          map(dict.values, values))), len(keys)),
                                      [_ENCODE_TEXT(key) + ": " for key in keys], "{}",
                                      None if row else newline)
                if pieces is not None:
                    return pieces
        elif kinds <= _ARRAYS:
            if newline is not None and set(map(type, chain.from_iterable(values))) == _DICTS:
                return [self.table(values, newline)]
            size = len(values[0])
            if all(map(size.__eq__, map(len, values))):
                if not size:
                    return ["[]"]
                pieces = self.members(values, _columns(list(chain.from_iterable(values)), size),
                                      [""] * size, "[]", newline)
                if pieces is not None:
                    return pieces
        return [self.split(values, newline, row)]

    def members(self, values: Sequence[Any], columns: list[list[Any]], heads: list[str],
                brackets: str, newline: str | None) -> list[_Piece] | None:
        """The template of objects of the same keys, or of arrays of the same length, from
        their members' ``columns``, each member after its head (its key and ``": "``, or
        nothing) between ``brackets``; None if some are laid out over lines and others not."""
        kinds = [set(map(type, column)) for column in columns]
        if newline is not None:
            if not any(map(_holds_containers, kinds)):
                newline = None
            elif not any(column_kinds <= _PLAIN_CONTAINERS for column_kinds in kinds):
                flat = {_flat(value) for value in values}
                if len(flat) > 1:
                    return None
                if flat.pop():
                    newline = None
        opening, closing = brackets
        inner = None if newline is None else newline + "  "
        between = ", " if inner is None else "," + inner
        row = opening == "["
        pieces: list[_Piece] = [opening if inner is None else opening + inner]
        for head, column, column_kinds in zip(heads, columns, kinds, strict=True):
            pieces.append(head)
            pieces += self.template(column, inner, row, column_kinds)
            pieces.append(between)
        pieces[-1] = closing if newline is None else newline + closing
        return pieces

    def column(self, values: Sequence[Any], kinds: set[type]) -> _Piece:
        """The column of texts of scalars of the types ``kinds`` (the floats written by
        :meth:`fill`)."""
        kind = "floats" if float in kinds and kinds <= _FLOATS else "texts"
        scalars = self.scalars[kind]
        start = len(scalars)
        if kind == "floats":
            scalars += values
        elif kinds == {str}:  # each string written once (a chunk's records share many)
            texts = {value: _ENCODE_TEXT(value) for value in dict.fromkeys(values)}
            scalars += map(texts.__getitem__, values)
        elif len(kinds) == 1:
            scalars += map(_SCALAR_TEXTS[next(iter(kinds))], values)
        else:
            scalars += [_SCALAR_TEXTS[type(value)](value) for value in values]
        return functools.partial(self.written, kind, start, len(values))

    def written(self, kind: str, start: int, count: int) -> Any:
        """A column of ``count`` texts of the scalars of a ``kind``, from ``start``."""
        return self.scalars[kind].slice(start, count)

    def table(self, arrays: Sequence[Any], newline: str) -> _Piece:
        """The column of texts of arrays of objects laid out over lines (an object a line),
        the rows of all of them written together."""
        return functools.partial(self.tables, self.template(list(chain.from_iterable(arrays)),
                                                            None), list(map(len, arrays)),
                                 newline)

    def tables(self, rows: list[_Piece], counts: list[int], newline: str) -> Any:
        """The texts of tables of ``counts`` rows each, of the rows' template ``rows``: each
        row written with what comes before it (the opening bracket, or a comma) and after it
        (the closing bracket after the last), so that each table is its rows one after
        another, the text of the rows taken as it is."""
        import numpy as np
        import pyarrow as pa
        import pyarrow.compute as pc

        ends = np.cumsum(counts)
        inner = newline + "  "
        first = np.zeros(ends[-1], dtype=bool)
        last = first.copy()
        first[(ends - counts)[np.not_equal(counts, 0)]] = True
        last[ends[np.not_equal(counts, 0)] - 1] = True
        lines = self.joined([pc.if_else(pa.array(first), _text("[" + inner), _text("," + inner)),
                             *rows, pc.if_else(pa.array(last), _text(newline + "]"), _text(""))],
                            len(first))
        _validity, offsets, text = lines.buffers()
        starts = np.frombuffer(offsets, dtype=np.int64)[lines.offset + np.concatenate([[0], ends])]
        tables = pa.LargeStringArray.from_buffers(len(counts), pa.py_buffer(starts), text)
        if not all(counts):
            tables = pc.if_else(pa.array(np.equal(counts, 0)), _text("[]"), tables)
        return tables

    def split(self, values: Sequence[Any], newline: str | None, row: bool) -> _Piece:
        """The column of texts of values of different shapes: those of one shape written
        from one template, those of none one at a time, as :func:`json_text` writes them."""
        laid_out = newline is not None and not row
        groups: dict[Any, list[int]] = {}
        alone: list[int] = []
        for i, value in enumerate(values):
            shape = _shape(value, laid_out)
            if shape is None:
                alone.append(i)
            else:
                groups.setdefault(shape, []).append(i)
        if len(groups) == 1 and not alone:  # one shape, yet not written with one template
            groups, alone = {}, list(range(len(values)))
        texts = []
        for i in alone:
            value = values[i]
            if newline is None or (row and isinstance(value, dict)):
                texts.append(_one_line(value))
            else:
                pieces: list[str] = []
                _lay_out(value, newline, pieces)
                texts.append("".join(pieces))
        parts = [(at, self.template([values[i] for i in at], newline, row))
                 for at in groups.values()]
        return functools.partial(self.split_texts, parts, alone, texts)

    def split_texts(self, parts: list[tuple[list[int], list[_Piece]]], alone: list[int],
                    texts: list[str]) -> Any:
        """The texts of values written in groups: each group's ``parts`` (the places of its
        values and their template) and the values ``alone`` (their places and texts), in
        the order of their places."""
        import numpy as np
        import pyarrow as pa

        places = [i for at, _pieces in parts for i in at] + alone
        written = [self.joined(pieces, len(at)) for at, pieces in parts]
        written.append(pa.array(texts, pa.large_string()))
        return pa.concat_arrays(written).take(np.argsort(places))

    def fill(self) -> None:
        """Write the scalars: the floats in one call (:func:`_float_array`), the other
        scalars' texts as one array."""
        import pyarrow as pa

        self.scalars["floats"] = _float_array(self.scalars["floats"])
        self.scalars["texts"] = pa.array(self.scalars["texts"], pa.large_string())

    def joined(self, pieces: list[_Piece], count: int) -> Any:
        """The ``count`` texts of a template, as an Arrow array (once the chunk is filled)."""
        import pyarrow as pa
        import pyarrow.compute as pc

        parts: list[Any] = []
        for piece in pieces:
            if not isinstance(piece, str):
                parts.append(piece() if callable(piece) else piece)
            elif parts and isinstance(parts[-1], str):
                parts[-1] += piece
            else:
                parts.append(piece)
        if len(parts) == 1:
            part = parts[0]
            return pa.array([part] * count, pa.large_string()) if isinstance(part, str) \
                else part
        return pc.binary_join_element_wise(
            *[_text(part) if isinstance(part, str) else part for part in parts], _text(""))


@functools.lru_cache(maxsize=1024)
def _text(text: str) -> Any:
    """``text`` as an Arrow scalar of the type of the chunk's columns (remembered: the chunks
    of a batch share their templates' fixed text)."""
    import pyarrow as pa

    return pa.scalar(text, pa.large_string())


#: Below this many values, floats are written value by value (Arrow's calls cost more).
_ARROW_FROM = 48
#: Floats of magnitude below this are written by Arrow (:func:`_arrow_texts`); the rest, and
#: every float when this pyarrow writes them otherwise (:func:`_arrow_spells_as_repr`), by
#: ``repr``.
_ARROW_BELOW = 1e9
#: Arrow's shortest round-trip formatting has ``repr``'s digits (both the shortest that read
#: back as the float, the nearest to it when several are as short); it places them otherwise
#: in these ranges of magnitude, put right as :func:`_put_right` says. Elsewhere they spell
#: alike.
_ARROW_PLACES = ("integral", "e-05", "e-06", "e-0")


def _put_right(place: str, texts: Any, x: Any) -> Any:
    """Arrow's ``texts`` of the floats ``x`` of one range (``_ARROW_PLACES``) spelled as
    ``repr`` spells them: an integral float (Arrow ``-0``, repr ``-0.0``); 10⁻⁵ ≤ |x| < 10⁻⁴
    and 10⁻⁶ ≤ |x| < 10⁻⁵ (Arrow ``0.0000123``, repr ``1.23e-05``); 10⁻⁹ ≤ |x| < 10⁻⁶
    (Arrow ``1.2e-7``, repr ``1.2e-07``)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    if place == "integral":
        return pc.binary_join_element_wise(texts, _text(".0"), _text(""))
    if place == "e-0":
        return pc.replace_substring(texts, "e-", "e-0")
    digits = pc.utf8_ltrim(texts, "-0.")  # the digits, from the first that is not 0
    written = pc.binary_join_element_wise(
        pc.if_else(pa.array(x < 0), _text("-"), _text("")),
        pc.utf8_slice_codeunits(digits, 0, 1), _text("."), pc.utf8_slice_codeunits(digits, 1),
        _text(place), _text(""))
    return pc.replace_substring(written, ".e", "e")  # one digit: 1e-05, not 1.e-05


def _float_text(value: float | None) -> str:
    """A float (or None) as JSON, as the standard library's encoder writes it: ``repr``.

    Raises
    ------
    ValueError
        A non-finite float (as the standard library's encoder with ``allow_nan=False``).
    """
    if value is None:
        return "null"
    if math.isfinite(value):
        return float.__repr__(value)
    raise ValueError(f"Out of range float values are not JSON compliant: {value!r}")


def _float_array(values: Sequence[float | None]) -> Any:
    """:func:`_float_text` of each value, as an Arrow array of strings, most of them written
    by Arrow in one call (:func:`_arrow_texts`).

    Raises
    ------
    ValueError
        A non-finite float (as the standard library's encoder with ``allow_nan=False``).
    """
    import numpy as np
    import pyarrow as pa

    if len(values) < _ARROW_FROM or not _arrow_spells_as_repr():
        return pa.array(list(map(_float_text, values)), pa.large_string())
    x = np.array(values, dtype=np.float64)  # (None as NaN)
    texts = _arrow_texts(x)
    by_repr = np.flatnonzero(~(np.abs(x) < _ARROW_BELOW)).tolist()  # (NaN too)
    if by_repr:
        texts = pa.concat_arrays([texts, pa.array([_float_text(values[i]) for i in by_repr],
                                                  pa.large_string())])
        places = np.arange(len(x))
        places[by_repr] = len(x) + np.arange(len(by_repr))
        texts = texts.take(places)
    return texts


def _arrow_texts(x: Any) -> Any:
    """The ``repr`` of each float of the array ``x`` whose magnitude is below
    ``_ARROW_BELOW``, as an Arrow array of strings: written by Arrow, and put right where it
    places the digits otherwise (:func:`_put_right`); the others as Arrow writes them."""
    import numpy as np
    import pyarrow as pa

    size = np.abs(x)
    ranges = np.select([x == np.trunc(x), (size >= 1e-5) & (size < 1e-4),
                        (size >= 1e-6) & (size < 1e-5), (size >= 1e-9) & (size < 1e-6)],
                       np.arange(1, 1 + len(_ARROW_PLACES), dtype=np.int8), np.int8(0))
    if not ranges.any():
        return pa.array(x).cast(pa.large_string())
    order = np.argsort(ranges, kind="stable")  # the floats of each range together
    x = x[order]
    texts = pa.array(x).cast(pa.large_string())
    parts = []
    start = 0
    for count, place in zip(np.bincount(ranges, minlength=1 + len(_ARROW_PLACES)).tolist(),
                            (None, *_ARROW_PLACES), strict=True):
        part = texts.slice(start, count)
        parts.append(part if place is None or not count else
                     _put_right(place, part, x[start:start + count]))
        start += count
    places = np.empty_like(order)
    places[order] = np.arange(len(order))
    return pa.concat_arrays(parts).take(places)


@functools.lru_cache(maxsize=1)
def _arrow_spells_as_repr() -> bool:
    """Whether this pyarrow, with the rewrites, writes floats as ``repr`` does, checked once on
    values chosen to catch a difference (the nearest-digit choice, the ends of each range, long
    and short digit strings, signed zeros, subnormals); False (``repr`` for every float) if
    not."""
    import numpy as np
    import pyarrow as pa

    probes = np.concatenate([
        [0.0, -0.0, 1.0, -2.0, 100.0, 123456789.0, 999999999.0, 5e-324, -5e-324,
         2.2250738585072014e-308, 1e-300, 1e-10, 9.999999999999999e-10, 1e-9, -1.5e-9, 1e-7,
         9.99e-7, 1e-6, 1.0000000000000002e-06,
         9.999999999999999e-06, 1e-5, 2e-05, -3.5e-05, 1.2345e-06, 9.999999999999999e-05,
         1e-4, -1e-4, 0.1, 0.2, 0.3, 1 / 3, 2 / 3, 0.5, 1.5, 123.456, 298.15, 0.1 + 0.2,
         999999999.5, 999999999.9999999, 100000000.00000001, 0.00010000000000000002,
         9.999999999999999e8, 2.5e-4, 1.7976931348623157e8, 0.30000000000000004],
        np.random.default_rng(2026).uniform(-9.0, 9.0, 96) * 10.0 ** np.arange(-12, 12)[
            np.arange(96) % 24]])
    probes = probes[np.abs(probes) < _ARROW_BELOW]
    try:
        texts = _arrow_texts(probes).to_pylist()
    except (pa.ArrowException, ValueError):
        return False
    return texts == [float.__repr__(value) for value in probes.tolist()]
