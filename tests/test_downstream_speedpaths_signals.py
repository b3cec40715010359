"""The fast paths of the signals stage give the same answers as the plain pandas ones.

The rules' identifier codes (`resolve.signals.codebook`) are derived from the cluster stage's
shared codes instead of factorising cleaned text row by row; the counting and pairing helpers
in `resolve.signals.context` and `resolve.signals.contacts` use sorted integer keys instead of
merges. Each is compared here with the computation it replaces, on small messy tables.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
from hypothesis import given, settings
from hypothesis import strategies as st

from resolve.signals.codebook import category, clean_already, clean_text, shared_value_codes, text_code
from resolve.signals.contacts import same_value
from resolve.signals.context import Inputs, entities_per_row, entities_per_value, entity_pairs, rows_where

TEXTS = ["555", " 555", "555 ", "", "  ", "a@b.c", "x", "\u00a0x", "x\u2003"]
"""Keys with leading, trailing and non-breaking or em spaces, blanks (common practice: extracts
carry all of these)."""


def strings(values) -> pd.Series:
    parts = [pa.array(values[i:i + 4], type=pa.large_string()) for i in range(0, len(values), 4)]
    return pd.Series(pd.arrays.ArrowStringArray(pa.chunked_array(parts or [pa.array([], pa.large_string())])))


identifier_rows = st.lists(
    st.tuples(st.one_of(st.none(), st.sampled_from(TEXTS)), st.one_of(st.none(), st.sampled_from(TEXTS)),
              st.one_of(st.none(), st.sampled_from(["phone", "email", " phone", ""]))),
    max_size=30,
)


def frame_of(rows) -> pd.DataFrame:
    return pd.DataFrame({
        "key": strings([k for k, _, _ in rows]),
        "value": strings([v for _, v, _ in rows]),
        "kind": pd.Series(pd.Categorical([t for _, _, t in rows])),
    })


def plain_string(series: pd.Series) -> pd.Series:
    s = series.astype("string").str.strip()
    return s.mask(s == "")


@settings(max_examples=80, deadline=None)
@given(identifier_rows)
def test_text_code_matches_factorising_the_cleaned_text(rows):
    frame = frame_of(rows)
    expected = pd.factorize(plain_string(frame["key"]).fillna(plain_string(frame["value"])))[0]
    assert text_code(frame).tolist() == expected.tolist()


@settings(max_examples=80, deadline=None)
@given(identifier_rows)
def test_shared_value_codes_match_the_row_by_row_codes(rows):
    frame = frame_of(rows)
    kind = category(frame, "kind")
    key_code = pd.factorize(plain_string(frame["key"]).fillna(plain_string(frame["value"])))[0].astype(np.int64)
    wide = np.where(key_code >= 0, key_code * (len(kind.categories) + 1) + kind.codes, -1)
    expected = np.full(len(wide), -1)
    expected[wide >= 0] = pd.factorize(wide[wide >= 0])[0]
    assert shared_value_codes(frame, kind).tolist() == expected.tolist()


@settings(max_examples=60, deadline=None)
@given(st.lists(st.one_of(st.none(), st.sampled_from(TEXTS + ["ok", "fine"])), max_size=20), st.booleans())
def test_category_matches_cleaning_every_row(values, as_category):
    column = pd.Series(pd.Categorical(values)) if as_category else strings(values)
    got = category(pd.DataFrame({"c": column}), "c")
    codes, uniques = pd.factorize(column, use_na_sentinel=True)
    clean = plain_string(pd.Series(uniques, dtype="string"))
    again, categories = pd.factorize(clean, use_na_sentinel=True)
    expected = pd.Categorical.from_codes(np.where(codes >= 0, np.append(again, -1)[codes], -1),
                                         categories=pd.Index(categories, dtype="string"))
    assert got.tolist() == expected.tolist() and list(got.categories) == list(expected.categories)


@settings(max_examples=80, deadline=None)
@given(st.lists(st.text(alphabet=" \t\u00a0\u2003\u3000ab", max_size=4), max_size=8))
def test_clean_already_agrees_with_stripping(values):
    series = pd.Series(values, dtype="string")
    unchanged = bool((plain_string(series) == series).fillna(False).all())
    assert clean_already(pa.array(values, type=pa.large_string())) == unchanged


# --- counting and pairing -------------------------------------------------------------------


def inputs_of(kid, ent) -> Inputs:
    ids = pd.DataFrame({"kid": np.array(kid, dtype=np.int64), "ent": np.array(ent, dtype=np.int64),
                        "kind": pd.Categorical(["phone"] * len(kid)),
                        "status": pd.Categorical(["valid"] * len(kid))})
    return Inputs(records=pd.DataFrame(), ids=ids, source=pd.DataFrame(), links=None, groups=None,
                  today=pd.Timestamp("2026-01-01"))


@settings(max_examples=80, deadline=None)
@given(st.lists(st.tuples(st.integers(-1, 6), st.integers(0, 5)), max_size=40), st.data())
def test_entities_per_row_matches_entities_per_value(rows, data):
    inp = inputs_of([k for k, _ in rows], [e for _, e in rows])
    valued = rows_where(inp)
    for _ in range(2):  # the second call reuses the sorted order kept on inp
        chosen = np.array(sorted(data.draw(st.sets(st.sampled_from(valued.tolist())) if len(valued) else
                                           st.just(set()))), dtype=np.int64)
        expected = entities_per_value(inp.ids.iloc[chosen])
        assert entities_per_row(inp, chosen).tolist() == expected.tolist()


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 6), st.integers(0, 8)), max_size=40))
def test_entity_pairs_match_a_self_merge(rows):
    incidence = pd.DataFrame({"kid": [k for k, _ in rows], "ent": [e for _, e in rows]}, dtype=np.int64)
    left = incidence.drop_duplicates()
    merged = left.merge(left, on="kid", suffixes=("_a", "_b"))
    expected = merged[merged["ent_a"] < merged["ent_b"]].reset_index(drop=True)
    pd.testing.assert_frame_equal(entity_pairs(incidence), expected)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 7), st.integers(0, 7)), max_size=15),
       st.lists(st.tuples(st.integers(0, 7), st.integers(-3, 4)), max_size=25))
def test_same_value_matches_merging_holders(pairs, holders):
    pairs = pd.DataFrame(pairs, columns=["ent_a", "ent_b"], dtype=np.int64)
    holders = pd.DataFrame(holders, columns=["ent", "v"], dtype=np.int64)
    both = pairs.merge(holders.rename(columns={"ent": "ent_a"}), on="ent_a")
    both = both.merge(holders.rename(columns={"ent": "ent_b"}), on=["ent_b", "v"])
    hit = set(zip(both["ent_a"], both["ent_b"]))
    expected = [(a, b) in hit for a, b in zip(pairs["ent_a"], pairs["ent_b"])]
    assert same_value(pairs, holders).tolist() == expected
