"""A batch's records written together (``json_texts``) are, byte for byte, each one written alone.

``json_texts`` walks the documents of a batch together: a place they share is laid out once as
a template over columns, the floats of every column are written by one Arrow call (spelled as
``repr`` spells them), and documents that differ are written in groups of one shape, or alone.
Whatever the documents, the texts must be those of ``json_text``, document by document; an
error must be the one ``json_text`` raises.

Reference behaviour: :func:`activolt.io.json_layout.json_text`, the single-document layout
(itself checked against the standard library's ``json`` in test_output_speed_paths.py), and
``repr`` for every float (what the standard library's encoder writes).
Readings: the bundled sample run (Kestrel Bay, HCl at 25 °C, invented laboratory) as read,
with readings excluded and with an electrode of odd characters, and a table of synthetic series
of the tests' generator (odd series names, different lengths and temperatures).
"""

from __future__ import annotations

import json
import math
import shutil
from collections import OrderedDict
from importlib.resources import files
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from synthetic import emf_from_gamma

from activolt.data.runs import Exclusion, exclude_points, read_run, read_runs
from activolt.io.json_layout import json_bytes, json_text, json_texts
from activolt.io.record import build_record
from activolt.procedures.many import series_reducer
from activolt.procedures.properties import derive_results_of_many

SAMPLE = Path(str(files("activolt") / "sample_data" / "kestrel_hcl_25C.csv"))
#: Enough documents to be written together (``json_texts`` writes a dozen or fewer one at a
#: time, as ``json_text`` does).
MANY = 16


def _each_alone(documents):
    return [json_text(document) for document in documents]


# --- floats: the column formatter against the scalar one ------------------------------------

#: Floats the two spellings could differ on: the ends of each range the column formatter
#: puts right (10⁻⁹, 10⁻⁶, 10⁻⁵, 10⁻⁴, 10⁹), integral values and signed zeros, subnormals and the
#: extremes, the neighbours of round numbers, and random bit patterns.
_EDGES = [0.0, -0.0, 1.0, -1.0, 1e-4, -1e-4, 1e-5, 1e-6, 1e-7, 1e-9, -1e-10, 1e9, 5e-324, -5e-324,
          2.2250738585072014e-308, 1.7976931348623157e308, 0.1, 2 / 3, 0.5, 2.5e-5, 2e-05]
_FLOATS = (st.floats(allow_nan=False, allow_infinity=False)
           | st.floats(min_value=1e-8, max_value=1e-3) | st.floats(min_value=-1e-3, max_value=1e-8)
           | st.floats(min_value=1e7, max_value=1e11)
           | st.integers(-10**12, 10**12).map(float)
           | st.integers(-10**6, 10**6).map(lambda n: n / 8.0)  # exact halves and eighths
           | st.sampled_from(_EDGES).flatmap(lambda x: st.sampled_from(
               [x, math.nextafter(x, math.inf), math.nextafter(x, -math.inf)]))
           | st.integers(0, 2**64 - 1).map(lambda bits: float(np.uint64(bits).view(np.float64)))
           ).filter(math.isfinite)


@settings(max_examples=200, deadline=None)
@given(st.lists(_FLOATS | st.none(), min_size=4 * MANY, max_size=12 * MANY))
def test_floats_written_together_are_each_float_written_alone(values):
    size = len(values) // MANY
    documents = [{"x": values[i * size:(i + 1) * size], "rows": [{"y": value} for value in
                                                                 values[i::MANY]]}
                 for i in range(MANY)]
    assert json_texts(documents) == _each_alone(documents)


def test_floats_written_together_are_repr_on_random_doubles():
    rng = np.random.default_rng(20261203)
    values = np.concatenate([
        rng.normal(size=50_000) * 10.0 ** rng.uniform(-12, 12, 50_000),
        rng.integers(0, 2**63, 50_000, dtype=np.uint64).view(np.float64),
        np.round(rng.normal(size=5_000) * 10.0 ** rng.integers(0, 9, 5_000)),
        rng.uniform(-1e-4, 1e-4, 20_000)])
    values = values[np.isfinite(values)].tolist()
    size = len(values) // MANY + 1
    documents = [{"rows": [{"x": x} for x in values[i * size:(i + 1) * size]]}
                 for i in range(MANY)]
    written = json_texts(documents)
    assert written == _each_alone(documents)
    assert [row["x"] for text in written for row in json.loads(text)["rows"]] == values


# --- documents of any shape -----------------------------------------------------------------

_TEXTS = st.text(max_size=6) | st.sampled_from(["%s", "a%%b", 'q"', "γ±", "\\", "\n", "é,=1+2"])
_SCALARS = (st.none() | st.booleans() | st.integers(-10**20, 10**20) | _FLOATS | _TEXTS
            | _FLOATS.map(np.float64))  # a subclass of float, written as a float
_KEYS = _TEXTS | st.integers(-9, 9) | st.booleans() | st.none() | st.floats(
    allow_nan=False, allow_infinity=False)
_DOCUMENTS = st.recursive(
    _SCALARS,
    lambda inner: (st.lists(inner, max_size=4) | st.tuples(inner, inner)
                   | st.dictionaries(_TEXTS, inner, max_size=4)
                   | st.dictionaries(_KEYS, inner, max_size=3)
                   | st.dictionaries(_TEXTS, inner, max_size=3).map(OrderedDict)),
    max_leaves=30)


@st.composite
def _variant(draw, value):
    """``value`` with its scalars drawn anew, and now and then its shape changed (another
    value, a key left out, the keys in another order, a member more or fewer)."""
    change = draw(st.integers(0, 30))
    if change == 0:
        return draw(_DOCUMENTS)
    if type(value) is dict:
        items = [(key, draw(_variant(member))) for key, member in value.items()]
        if change == 1 and items:
            items.pop()
        elif change in (2, 3, 4):
            items.reverse()
        return dict(items)
    if type(value) in (list, tuple):
        members = [draw(_variant(member)) for member in value]
        if change == 1 and members:
            members.pop()
        elif change == 2 and members:
            members.append(members[0])
        return type(value)(members)
    if isinstance(value, (dict, list, tuple)):
        return value
    return draw(_SCALARS)


@st.composite
def _batches(draw):
    """Documents mostly of one shape, as a batch's records are."""
    first = draw(_DOCUMENTS)
    return [first] + [draw(_variant(first)) for _ in range(draw(st.integers(MANY, 2 * MANY)))]


@settings(max_examples=300, deadline=None)
@given(_batches())
def test_documents_written_together_are_each_written_alone(documents):
    assert json_texts(documents) == _each_alone(documents)


@settings(max_examples=100, deadline=None)
@given(st.lists(_DOCUMENTS, min_size=MANY, max_size=2 * MANY))
def test_documents_of_any_shapes_written_together_are_each_written_alone(documents):
    assert json_texts(documents) == _each_alone(documents)


@st.composite
def _tables(draw):
    """Documents holding tables of the same columns and of any lengths (some empty), the
    cells of a column of one kind or of several."""
    keys = draw(st.lists(_TEXTS, min_size=1, max_size=5, unique=True))
    kinds = [draw(st.sampled_from([_FLOATS, _FLOATS | st.none(), st.booleans(), _TEXTS,
                                   st.integers(-99, 99), _SCALARS,
                                   st.dictionaries(_TEXTS, _FLOATS, max_size=2)]))
             for _ in keys]
    return [{"n": draw(_SCALARS),
             "rows": [{key: draw(kind) for key, kind in zip(keys, kinds, strict=True)}
                      for _ in range(draw(st.sampled_from([0, 1, 3, 15])))],
             "more": {"rows": [{"x": draw(_FLOATS)}]}}
            for _ in range(draw(st.integers(MANY, 2 * MANY)))]


@settings(max_examples=150, deadline=None)
@given(_tables())
def test_tables_written_together_are_each_written_alone(documents):
    assert json_texts(documents) == _each_alone(documents)


@pytest.mark.parametrize("bad, error", [
    ({"x": float("nan")}, ValueError), ({"rows": [{"x": 0.5}] * 60 + [{"x": -math.inf}]},
                                        ValueError),
    ({"x": [1, math.inf]}, ValueError), ({"x": {1, 2}}, TypeError), ({(1, 2): 0.5}, TypeError),
    ({"rows": [{"x": object()}]}, TypeError),
])
def test_written_together_refuses_what_each_alone_refuses(bad, error):
    documents = [{"x": 0.25, "rows": [{"x": 0.5}]}] * MANY + [bad]
    with pytest.raises(error):
        _each_alone(documents)
    with pytest.raises(error):
        json_texts(documents)


def test_objects_of_the_same_keys_in_another_order_are_written_in_their_order():
    documents = [{"a": 1.5, "b": "x", "rows": [{"m": 0.1, "n": None}, {"m": 0.2, "n": 1}]}] * MANY
    documents += [{"b": "y", "a": 2.5, "rows": [{"n": True, "m": 0.3}]},
                  {"a": 3.5, "rows": [{"m": 0.4, "n": None}], "b": "z"}]
    assert json_texts(documents) == _each_alone(documents)


@settings(max_examples=100, deadline=None)
@given(_batches())
def test_bytes_written_together_are_each_text_encoded(documents):
    assert json_bytes(documents) == [text.encode("utf-8") for text in _each_alone(documents)]


def test_bytes_of_a_few_documents_and_of_texts_beyond_ascii():
    documents = [{"name": "γ± é 😀", "x": [0.1, 2e-05]}, {"name": "\u2028", "x": [3.0, None]}]
    for count in (0, 2, MANY):
        written = json_bytes(documents * (count // 2))
        assert written == [text.encode("utf-8") for text in _each_alone(documents * (count // 2))]
        assert all(type(data) is bytes for data in written)


def test_a_few_documents_are_written_alone():
    documents = [{"x": [0.1, 2e-05]}, {"x": [3.0, None]}]
    assert json_texts(documents) == _each_alone(documents)
    assert json_texts([]) == []


# --- the records of a batch -----------------------------------------------------------------

@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """The sample as read, with readings excluded, with an electrode of odd characters; and
    synthetic series of different lengths and temperatures, with odd names."""
    folder = tmp_path_factory.mktemp("json_texts")
    sample = read_run(SAMPLE)
    text = SAMPLE.read_text(encoding="utf-8").replace("KB-AgCl-08,", "KB-AgCl-08 é,=1+2 %s")
    (folder / "odd.csv").write_text(text, encoding="utf-8")
    shutil.copy(SAMPLE.with_suffix(".toml"), folder / "odd.toml")
    excluded = exclude_points(sample, [Exclusion("bubbles <b>", line=7),
                                       Exclusion("drift", molality_mol_kg=0.5)])
    lines = ["series,molality_mol_kg,emf_V,u_emf_V"]
    rng = np.random.default_rng(7)
    for name, size in [('"odd", 50 %', 15), ("série γ±", 9), ("s3", 15), ("s4", 6)]:
        m = np.geomspace(0.001, 0.5, size)
        emf = emf_from_gamma(m, np.exp(-1.17 * np.sqrt(m) / (1 + 1.5 * np.sqrt(m)) + 0.1 * m),
                             0.2224) + rng.normal(0, 2e-5, size)
        quoted = '"' + name.replace('"', '""') + '"'
        lines += [f"{quoted},{a!r},{b!r},2e-05"
                  for a, b in zip(m.tolist(), emf.tolist(), strict=True)]
    (folder / "many.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    (folder / "many.toml").write_text('electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25\n',
                                      encoding="utf-8")
    return [sample, excluded, read_run(folder / "odd.csv"), *read_runs(folder / "many.csv")]


def _records(runs, model, fixed=None):
    outcomes = [o for o in series_reducer(model, fixed or {}).batch(runs)
                if o.reduction is not None]
    derived = derive_results_of_many([o.reduction for o in outcomes])
    return [build_record(o.reduction, comparison=o.comparison, derived=d)
            for o, d in zip(outcomes, derived, strict=True)]


@pytest.fixture(scope="module")
def records(runs):
    by_case = {model: _records(runs, model)
               for model in ("limiting", "hueckel", "davies", "sit", "pitzer", "all")}
    by_case["held"] = _records(runs, "hueckel", {"b_kg_mol": 0.1})
    return by_case


@pytest.mark.parametrize("case", ["limiting", "hueckel", "davies", "sit", "pitzer", "all",
                                  "held"])
def test_records_written_together_are_each_written_alone(records, case):
    chunk = records[case]
    assert chunk, case
    documents = (chunk * MANY)[:max(MANY, len(chunk))]
    assert json_texts(documents) == _each_alone(documents)


def test_records_of_every_kind_written_together_are_each_written_alone(records):
    documents = [record for chunk in records.values() for record in chunk]
    assert len(documents) >= MANY
    assert json_texts(documents) == _each_alone(documents)


def test_cases_cover_what_they_are_meant_to(records, runs):
    # excluded readings, held parameters, a model comparison, odd series names, several
    # table lengths, and missing values written as null
    assert {p["flag"] for r in records["hueckel"] for p in r["points"]} - {None}
    assert any(p["fixed"] for r in records["held"] for p in r["model"]["parameters"].values())
    assert all(r["model_comparison"] for r in records["all"])
    assert {len(r["points"]) for r in records["hueckel"]} >= {6, 9, 15}
    assert '"odd", 50 %' in {r["series"] for r in records["hueckel"]}
    assert any(value is None for r in records["hueckel"] for p in r["points"]
               for value in p.values())
