"""The text of a JSON record: one layout for every record kind, written quickly.

:func:`json_text` writes one document; :func:`json_texts` writes several — a batch's records —
to the same text byte for byte, walking them together: a place they share is laid out once,
and its scalars are written a column at a time. The floats of all the columns are written by
Arrow's shortest round-trip formatting in one call, spelled as ``repr`` spells them (the same
digits, placed as ``repr`` places them: checked on millions of random doubles, and again in
each process before first use), as the standard library's encoder writes them.
"""

from __future__ import annotations

import functools
import json
import json.encoder
import math
from collections.abc import Callable, Sequence
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
    same keys, or arrays of the same length, the place is laid out once for all of them as a
    ``%`` template, and each scalar place becomes a column of texts written in one go (the
    floats of every column in one call, :func:`_float_texts`); the rows of the tables (the
    objects of an array laid out over lines) of all the documents are written together the
    same way. Where the documents differ, they are written in groups of one shape; what is
    not plain JSON (a subclass of a container, a key that is not a string) is written one
    value at a time, as :func:`json_text` writes it.

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
    documents = list(documents)
    chunk = _Chunk()
    template, columns = chunk.template(documents, "\n")
    chunk.fill()
    return _filled(template + "\n", columns, len(documents))


#: The types of the scalars written a column at a time (exactly these: a subclass is written
#: one value at a time, as the standard library's encoder writes it).
_NONE = type(None)
_SCALARS = frozenset({str, int, float, bool, _NONE})
_FLOATS = frozenset({float, _NONE})
_LITERAL_KINDS = frozenset({bool, _NONE})
_DICTS = frozenset({dict})
_ARRAYS = frozenset({list, tuple})
_PLAIN_CONTAINERS = _DICTS | _ARRAYS
#: The JSON of True, False and None.
_LITERALS = {True: "true", False: "false", None: "null"}

#: A template of one place of several documents and its columns of texts, one text per
#: document each (in the order of the template's ``%s``).
_Shaped = tuple[str, list[list[Any]]]


def _filled(template: str, columns: list[list[Any]], count: int) -> list[str]:
    """The ``count`` texts of ``template`` over ``columns``."""
    if not columns:
        return [template % ()] * count
    return [template % cells for cells in zip(*columns, strict=True)]


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
    if kind is dict and all(type(key) is str for key in value):
        return dict, tuple(value), laid_out and _flat(value)
    if kind in _ARRAYS:
        return list, len(value), laid_out and _flat(value)
    return None


class _Chunk:
    """Several documents written together: their layout as ``%`` templates over columns of
    texts (:meth:`template`), some columns filled in later (:meth:`fill`)."""

    def __init__(self) -> None:
        #: The columns of floats (and None), written together by :meth:`fill`.
        self.floats: list[list[Any]] = []
        #: What fills in the columns of texts made from templates, in order (each template's
        #: columns filled before).
        self.later: list[Callable[[], None]] = []

    def template(self, values: Sequence[Any], newline: str | None, row: bool = False,
                 kinds: set[type] | None = None) -> _Shaped:
        """The template of ``values`` (one value of each document, at one place of it) as
        :func:`json_text` lays them out.

        ``newline`` is the line break and indentation of the place (None: on one line);
        ``row``: the place is a member of an array (where an object is on one line);
        ``kinds``: the types of ``values``, when known."""
        if kinds is None:
            kinds = set(map(type, values))
        if kinds <= _SCALARS:
            return "%s", [self.scalars(values, kinds)]
        if kinds == _DICTS:
            keys = tuple(values[0])
            if all(type(key) is str for key in keys) and all(
                    map(keys.__eq__, map(tuple, values))):
                if not keys:
                    return "{}", []
                shaped = self.members(
                    values, list(zip(*[value.values() for value in values], strict=True)),
                    [_key(key).replace("%", "%%") + ": " for key in keys], "{}",
                    None if row else newline)
                if shaped is not None:
                    return shaped
        elif kinds <= _ARRAYS:
            if newline is not None and set(map(type, (member for value in values
                                                       for member in value))) == _DICTS:
                return "%s", [self.table(values, newline)]
            size = len(values[0])
            if all(len(value) == size for value in values):
                if not size:
                    return "[]", []
                shaped = self.members(values, list(zip(*values, strict=True)), [""] * size,
                                      "[]", newline)
                if shaped is not None:
                    return shaped
        return "%s", [self.split(values, newline, row)]

    def members(self, values: Sequence[Any], columns: list[tuple[Any, ...]], heads: list[str],
                brackets: str, newline: str | None) -> _Shaped | None:
        """The template of objects of the same keys, or of arrays of the same length, from
        their members' ``columns``, each member after its head (its key and ``": "``, or
        nothing) between ``brackets``; None if some are laid out over lines and others not."""
        kinds = [set(map(type, column)) for column in columns]
        if newline is not None:
            held = [_holds_containers(column_kinds) for column_kinds in kinds]
            if not any(held):
                newline = None
            elif not any(column_kinds <= _PLAIN_CONTAINERS for column_kinds in kinds):
                flat = {_flat(value) for value in values}
                if len(flat) > 1:
                    return None
                if flat.pop():
                    newline = None
        inner = None if newline is None else newline + "  "
        row = brackets == "[]"
        templates: list[str] = []
        cells: list[list[Any]] = []
        for head, column, column_kinds in zip(heads, columns, kinds, strict=True):
            template, more = self.template(column, inner, row, column_kinds)
            templates.append(head + template)
            cells += more
        opening, closing = brackets
        if newline is None:
            return opening + ", ".join(templates) + closing, cells
        return opening + inner + ("," + inner).join(templates) + newline + closing, cells

    def scalars(self, values: Sequence[Any], kinds: set[type]) -> list[Any]:
        """Scalars of the types ``kinds`` as JSON (floats filled in by :meth:`fill`)."""
        if kinds <= _FLOATS and float in kinds:
            column = list(values)
            self.floats.append(column)
            return column
        if kinds == {str}:
            return list(map(_ENCODE_TEXT, values))
        if kinds <= _LITERAL_KINDS:
            return list(map(_LITERALS.__getitem__, values))
        if kinds == {int}:
            return list(map(int.__repr__, values))
        return list(map(_one_line, values))

    def table(self, arrays: Sequence[Any], newline: str) -> list[Any]:
        """The texts of arrays of objects laid out over lines (an object a line), the rows of
        all of them written together (filled in by :meth:`fill`)."""
        rows = [row for array in arrays for row in array]
        template, columns = self.template(rows, None)
        texts: list[Any] = [None] * len(arrays)
        inner = newline + "  "

        def fill() -> None:
            lines = _filled(template, columns, len(rows))
            start = 0
            for i, array in enumerate(arrays):
                end = start + len(array)
                texts[i] = ("[" + inner + ("," + inner).join(lines[start:end]) + newline + "]"
                            if end > start else "[]")
                start = end

        self.later.append(fill)
        return texts

    def split(self, values: Sequence[Any], newline: str | None, row: bool) -> list[Any]:
        """The texts of values of different shapes: those of one shape from one template
        (filled in by :meth:`fill`), those of none one at a time, as :func:`json_text`
        writes them."""
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
        texts: list[Any] = [None] * len(values)
        for i in alone:
            value = values[i]
            if newline is None or (row and isinstance(value, dict)):
                texts[i] = _one_line(value)
            else:
                pieces: list[str] = []
                _lay_out(value, newline, pieces)
                texts[i] = "".join(pieces)
        for at in groups.values():
            self.later.append(functools.partial(
                _put, texts, at, self.template([values[i] for i in at], newline, row)))
        return texts

    def fill(self) -> None:
        """Fill in the columns: the floats, then the texts made from templates."""
        if self.floats:
            texts = _float_texts([value for column in self.floats for value in column])
            start = 0
            for column in self.floats:
                end = start + len(column)
                column[:] = texts[start:end]
                start = end
        for fill in self.later:
            fill()


def _put(texts: list[Any], at: list[int], shaped: _Shaped) -> None:
    """Put the texts of ``shaped`` at the places ``at`` of ``texts``."""
    for i, text in zip(at, _filled(*shaped, len(at)), strict=True):
        texts[i] = text


#: Below this many values, floats are written value by value (Arrow's calls cost more).
_ARROW_FROM = 48
#: Floats of magnitude below this are written by Arrow (:func:`_arrow_texts`); the rest, and
#: every float when this pyarrow writes them otherwise (:func:`_arrow_spells_as_repr`), by
#: ``repr``.
_ARROW_BELOW = 1e9
#: Arrow's shortest round-trip formatting has ``repr``'s digits (both the shortest that read
#: back as the float, the nearest to it when several are as short); it places them otherwise
#: in these ranges, put right by these rewrites (RE2): an integral float (Arrow ``-0``, repr
#: ``-0.0``); 10⁻⁵ ≤ |x| < 10⁻⁴ and 10⁻⁶ ≤ |x| < 10⁻⁵ (Arrow positional ``0.000012``, repr
#: ``1.2e-05``); |x| < 10⁻⁶ (Arrow ``1.2e-7``, repr ``1.2e-07``). Elsewhere they spell alike.
_ARROW_REWRITES = (
    (r"^(-?[0-9]+)$", r"\1.0"),
    (r"^(-?)0\.0000([1-9])([0-9]*)$", r"\1\2.\3e-05"),
    (r"^(-?)0\.00000([1-9])([0-9]*)$", r"\1\2.\3e-06"),
    (r"e-([0-9])$", r"e-0\1"),
)


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


def _float_texts(values: Sequence[float | None]) -> list[str]:
    """:func:`_float_text` of each value, most of them written by Arrow in one call
    (:func:`_arrow_texts`).

    Raises
    ------
    ValueError
        A non-finite float (as the standard library's encoder with ``allow_nan=False``).
    """
    if len(values) < _ARROW_FROM or not _arrow_spells_as_repr():
        return list(map(_float_text, values))
    import numpy as np

    x = np.array(values, dtype=np.float64)  # (None as NaN)
    by_arrow = np.abs(x) < _ARROW_BELOW  # (False for NaN)
    texts = np.empty(len(values), dtype=object)
    texts[by_arrow] = _arrow_texts(x[by_arrow])
    for i in np.flatnonzero(~by_arrow).tolist():
        texts[i] = _float_text(values[i])
    return texts.tolist()


def _arrow_texts(x: Any) -> Any:
    """The ``repr`` of each float of the array ``x`` (finite, of magnitude below
    ``_ARROW_BELOW``) as a NumPy array of strings, written by Arrow and put right where it
    spells otherwise (``_ARROW_REWRITES``)."""
    import numpy as np
    import pyarrow as pa
    import pyarrow.compute as pc

    texts = pa.array(x).cast(pa.string())
    size = np.abs(x)
    places = (x == np.trunc(x), (size >= 1e-5) & (size < 1e-4), (size >= 1e-6) & (size < 1e-5),
              (size < 1e-6) & (x != 0))
    for place, (pattern, rewrite) in zip(places, _ARROW_REWRITES, strict=True):
        if place.any():
            mask = pa.array(place)
            put_right = pc.replace_substring_regex(texts.filter(mask), pattern, rewrite)
            if rewrite.endswith(("e-05", "e-06")):  # one digit: 1e-05, not 1.e-05
                put_right = pc.replace_substring(put_right, ".e", "e")
            texts = pc.replace_with_mask(texts, mask, put_right)
    return texts.to_numpy(zero_copy_only=False)


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
         2.2250738585072014e-308, 1e-300, 1e-7, 9.99e-7, 1e-6, 1.0000000000000002e-06,
         9.999999999999999e-06, 1e-5, 2e-05, -3.5e-05, 1.2345e-06, 9.999999999999999e-05,
         1e-4, -1e-4, 0.1, 0.2, 0.3, 1 / 3, 2 / 3, 0.5, 1.5, 123.456, 298.15, 0.1 + 0.2,
         999999999.5, 999999999.9999999, 100000000.00000001, 0.00010000000000000002,
         9.999999999999999e8, 2.5e-4, 1.7976931348623157e8, 0.30000000000000004],
        np.random.default_rng(2026).uniform(-9.0, 9.0, 96) * 10.0 ** np.arange(-12, 12)[
            np.arange(96) % 24]])
    probes = probes[np.abs(probes) < _ARROW_BELOW]
    try:
        texts = _arrow_texts(probes).tolist()
    except (pa.ArrowException, ValueError):
        return False
    return texts == [float.__repr__(value) for value in probes.tolist()]
