"""Tests for resolve.compare: string-similarity check values, every agreement level, invariants.

The people and identifier frames are small and hand-made in the shape of the contract in
docs/architecture.md; names and numbers are invented.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from rapidfuzz.distance import OSA, DamerauLevenshtein, Jaro, JaroWinkler, Levenshtein

import resolve.compare.records as records
from resolve.compare import FIELDS, compare_pairs, level_columns, prepare_records
from resolve.compare.align import Vocabulary, pair_scores, text_column
from resolve.compare.identifiers import IdentifierSlots, one_edit_keys
from resolve.compare.levels import (
    ADDRESS,
    BIRTH_DATE,
    EMAIL,
    FAMILY_NAME,
    GIVEN_NAME,
    NATIONAL_ID,
    PHONE,
    SUFFIX,
)
from resolve.errors import InputError

TEXT = [
    "record_id",
    "given_key",
    "given_root",
    "given_initial",
    "given_phonetic",
    "middle_key",
    "family_key",
    "family_core",
    "family_first",
    "family_phonetic",
    "suffix",
    "birth_date",
    "house_number",
    "unit",
    "street_name",
    "postcode",
    "city",
    "address_key",
    "country",
]


def people_frame(rows: list[dict]) -> pd.DataFrame:
    """People table of the contract's shape; unspecified values are <NA>.

    given_root defaults to given_key, family_core/family_first to family_key, and the birth
    parts are derived from birth_date, as the normaliser would.
    """
    out = []
    for i, row in enumerate(rows):
        r = {col: None for col in TEXT}
        r.update(row)
        r["record_id"] = r["record_id"] or f"r{i}"
        if r["given_key"] and not r["given_root"]:
            r["given_root"] = r["given_key"]
        if r["given_key"] and not r["given_initial"]:
            r["given_initial"] = r["given_key"][0]
        for col in ("family_core", "family_first"):
            if r["family_key"] and not r[col]:
                r[col] = r["family_key"]
        y = m = d = None
        if r["birth_date"]:
            parts = [int(x) for x in r["birth_date"].split("-")]
            y, m, d = (parts + [None, None])[:3]
        r.setdefault("birth_year", y)
        r.setdefault("birth_month", m)
        r.setdefault("birth_day", d)
        out.append(r)
    df = pd.DataFrame(out)
    df = df.astype({col: "string" for col in TEXT})
    df = df.astype({"birth_year": "Int16", "birth_month": "Int8", "birth_day": "Int8"})
    df.index = pd.RangeIndex(len(df), name="rec")
    return df


def id_frame(rows: list[tuple]) -> pd.DataFrame:
    """Identifier table from (rec, kind, key[, status[, detail]]) tuples."""
    full = [(r + ("valid", None))[:5] if len(r) == 3 else (r + (None,))[:5] for r in rows]
    df = pd.DataFrame(full, columns=["rec", "kind", "key", "status", "detail"])
    df["value"] = df["key"]
    df["rec"] = df["rec"].astype("int32")
    return df.astype({c: "string" for c in ("kind", "key", "status", "detail", "value")})


def levels_for(a: dict, b: dict, ids: list[tuple] = (), field: str | None = None):
    """Compare two records (rec 0 and rec 1); return all levels, or one field's level."""
    people = people_frame([a, b])
    pairs = pd.DataFrame({"rec_a": np.array([0], "int32"), "rec_b": np.array([1], "int32")})
    out = compare_pairs(pairs, people, id_frame(list(ids)))
    row = {spec.name: int(out[spec.column].iloc[0]) for spec in FIELDS}
    return row[field] if field else row


# ----- check values through the exact rapidfuzz functions the comparisons call ------------


@pytest.mark.parametrize(
    ("a", "b", "jw", "jaro"),
    [
        # Winkler 1990; Jaro 1989 (JASA 84:414-420), prefix scale 0.1 — CHECKS.md, confirmed
        ("MARTHA", "MARHTA", 0.9611, 0.9444),
        ("DWAYNE", "DUANE", 0.8400, 0.8222),
        ("DIXON", "DICKSONX", 0.8133, 0.7667),
    ],
)
def test_jaro_winkler_check_values(a, b, jw, jaro):
    assert JaroWinkler.normalized_similarity(a, b) == pytest.approx(jw, abs=5e-5)
    assert Jaro.similarity(a, b) == pytest.approx(jaro, abs=5e-5)
    # ... and through our batch path with its pruning (threshold low enough to keep them)
    vocab = Vocabulary({}, np.array([a, b], dtype=object))
    got = vocab.jaro_winkler(np.array([0]), np.array([1]), threshold=0.8)
    assert got[0] == pytest.approx(jw, abs=5e-5)


@pytest.mark.parametrize(
    ("a", "b", "distance"),
    [
        # Levenshtein check values — CHECKS.md, confirmed
        ("kitten", "sitting", 3),
        ("flaw", "lawn", 2),
        ("saturday", "sunday", 3),
    ],
)
def test_levenshtein_check_values(a, b, distance):
    assert Levenshtein.distance(a, b) == distance
    # OSA (what the national-ID comparison calls) agrees here: no adjacent transpositions help
    assert OSA.distance(a, b) == distance
    values = np.array([a, b], dtype=object)
    batch = pair_scores(np.array([0]), np.array([1]), values, OSA.distance, dtype=np.int32)
    assert batch[0] == distance


def test_osa_is_not_damerau_levenshtein():
    # Optimal string alignment vs true Damerau-Levenshtein: CA/ABC is 3 vs 2 — CHECKS.md
    assert OSA.distance("CA", "ABC") == 3
    assert DamerauLevenshtein.distance("CA", "ABC") == 2


@settings(max_examples=300, deadline=None)
@given(
    st.lists(st.text(alphabet="abcdeéhilmnorst-", max_size=12), min_size=2, max_size=8),
    st.sampled_from([0.7, 0.85, 0.88, 0.9, 0.94]),
)
def test_jaro_winkler_pruning_never_drops_a_similar_pair(words, threshold):
    values = np.array(words, dtype=object)
    a, b = np.meshgrid(np.arange(len(words)), np.arange(len(words)))
    a, b = a.ravel(), b.ravel()
    got = Vocabulary({}, values).jaro_winkler(a, b, threshold)
    jw = JaroWinkler.normalized_similarity
    truth = np.array([jw(values[i], values[j]) for i, j in zip(a, b)])
    above = truth >= threshold
    np.testing.assert_allclose(got[above], truth[above], atol=1e-6)
    assert np.all(got[~above] < threshold)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.text(alphabet="0123ab", max_size=9), min_size=2, max_size=10, unique=True))
def test_one_edit_prefilter_never_misses(digits):
    import pyarrow as pa

    keys = [f"t:{d}" for d in digits] + [f"u:{digits[0]}"]
    h = one_edit_keys(pa.array(keys, pa.large_string()))
    n = len(keys)
    for i in range(n):
        for j in range(n):
            same_type = keys[i][0] == keys[j][0]
            if same_type and OSA.distance(keys[i][2:], keys[j][2:]) <= 1:
                maybe = (h["pre"][i] == h["pre"][j]) or (h["suf"][i] == h["suf"][j])
                maybe |= (h["pre1"][i] == h["pre"][j]) or (h["suf1"][i] == h["suf"][j])
                maybe |= (h["pre"][i] == h["pre1"][j]) or (h["suf"][i] == h["suf1"][j])
                assert maybe, (keys[i], keys[j])
            if not same_type:  # different ID types never pass
                assert h["pre"][i] != h["pre"][j] and h["suf"][i] != h["suf"][j]


@settings(max_examples=300, deadline=None)
@given(st.lists(st.text(alphabet="abcdeéhilnorst", max_size=7), min_size=2, max_size=8))
def test_one_slip_test_agrees_with_the_plain_rule(words):
    """The vectorised slip test (with its pruning) equals the rule applied pair by pair."""
    values = np.array(words, dtype=object)
    a, b = np.meshgrid(np.arange(len(words)), np.arange(len(words)))
    a, b = a.ravel(), b.ravel()
    got = Vocabulary({}, values).one_edit(a, b, 4)
    for i, j, hit in zip(a, b, got):
        x, y = values[i], values[j]
        one = OSA.distance(x, y) == 1
        if min(len(x), len(y)) < 4:  # short names: only two neighbours swapped
            one = one and len(x) == len(y) >= 2 and Levenshtein.distance(x, y) == 2
        assert hit == one, (x, y)


# ----- given and family names ---------------------------------------------------------------

G, F = GIVEN_NAME.code_of, FAMILY_NAME.code_of


@pytest.mark.parametrize(
    ("a", "b", "given", "family"),
    [
        ({"given_key": "anna"}, {"given_key": "anna"}, G("exact"), 0),
        (
            {"given_key": "bill", "given_root": "william"},
            {"given_key": "william"},
            G("equivalent"),
            0,
        ),
        ({"given_key": "micheal"}, {"given_key": "michael"}, G("close"), 0),  # JW 0.971
        ({"given_key": "steven"}, {"given_key": "stephen"}, G("similar"), 0),  # JW 0.894
        ({"given_key": "catherine"}, {"given_key": "katherine"}, G("similar"), 0),  # 0.926
        ({"given_key": "lee"}, {"given_key": "leigh"}, G("different"), 0),  # JW 0.689
        ({"given_key": "j"}, {"given_key": "john"}, G("initial"), 0),
        ({"given_key": "k"}, {"given_key": "john"}, G("different"), 0),
        ({"given_key": "anna"}, {}, 0, 0),
        # one typing slip that Jaro-Winkler leaves below the "similar" band (common practice)
        ({"given_key": "june"}, {"given_key": "uune"}, G("one_edit"), 0),  # JW 0.833
        ({"given_key": "mark"}, {"given_key": "matk"}, G("one_edit"), 0),  # JW 0.867
        ({"given_key": "steven"}, {"given_key": "eteven"}, G("one_edit"), 0),
        ({"given_key": "roy"}, {"given_key": "ryo"}, G("one_edit"), 0),  # short: swap counts
        ({"given_key": "dan"}, {"given_key": "don"}, G("different"), 0),  # short: change not
        ({"given_key": "ana"}, {"given_key": "aa"}, G("different"), 0),  # short: drop not
        ({"given_key": "jon"}, {"given_key": "john"}, G("similar"), 0),  # JW 0.933 first
        ({"given_key": "june"}, {"given_key": "uuno"}, G("different"), 0),  # two slips
        ({"family_key": "wood"}, {"family_key": "wold"}, 0, F("one_edit")),
        ({"family_key": "vu"}, {"family_key": "uv"}, 0, F("one_edit")),
        ({"family_key": "lee"}, {"family_key": "lse"}, 0, F("different")),
        ({"family_key": "thompson"}, {"family_key": "thompson"}, 0, F("exact")),
        ({"family_key": "thompson"}, {"family_key": "thomson"}, 0, F("close")),  # JW 0.975
        ({"family_key": "smith"}, {"family_key": "smyth"}, 0, F("similar")),  # JW 0.893
        ({"family_key": "smith"}, {"family_key": "jones"}, 0, F("different")),
        ({"family_key": "s"}, {"family_key": "smith"}, 0, F("initial")),
        (
            {"family_key": "garcia lopez", "family_first": "garcia"},
            {"family_key": "garcia"},
            0,
            F("part"),
        ),
        ({"family_key": "garcia lopez"}, {"family_key": "lopez"}, 0, F("part")),
        (
            {"family_key": "van den berg", "family_core": "berg"},
            {"family_key": "berg"},
            0,
            F("part"),
        ),
    ],
)
def test_name_levels(a, b, given, family):
    got = levels_for(a, b)
    assert (got["given_name"], got["family_name"]) == (given, family)


def test_swapped_names_are_weighed_once_under_given_name():
    exact = levels_for(
        {"given_key": "chen", "family_key": "wei"}, {"given_key": "wei", "family_key": "chen"}
    )
    assert exact["given_name"] == G("swapped")
    assert exact["family_name"] == F("swapped")
    assert FAMILY_NAME.level(F("swapped")).neutral
    fuzzy = levels_for(
        {"given_key": "martha", "family_key": "johnson"},
        {"given_key": "jonson", "family_key": "marhta"},
    )
    assert (fuzzy["given_name"], fuzzy["family_name"]) == (G("swapped"), F("swapped"))


@pytest.mark.parametrize(
    ("a", "b"),
    [
        # the swapped family name is a compound holding the given name
        (
            {"given_key": "juan", "family_key": "sotelo"},
            {"given_key": "sotelo", "family_key": "juan carlos", "family_first": "juan"},
        ),
        # the swapped family name is a typing slip away from the given name
        (
            {"given_key": "laura", "family_key": "hanson"},
            {"given_key": "hanson", "family_key": "laurz"},
        ),
        (
            {"given_key": "greg", "family_key": "payne"},
            {"given_key": "pyane", "family_key": "greg"},
        ),
    ],
)
def test_swaps_with_compounds_and_slips(a, b):
    got = levels_for(a, b)
    assert (got["given_name"], got["family_name"]) == (G("swapped"), F("swapped"))


def test_swap_with_a_nickname_uses_the_name_root_where_known():
    people = people_frame(
        [
            {"given_key": "daniel", "family_key": "cooper"},
            {"given_key": "cooper", "family_key": "danny"},
            # a third record tells that "danny" is a form of "daniel"
            {"given_key": "danny", "given_root": "daniel", "family_key": "ortiz"},
        ]
    )
    pairs = pd.DataFrame({"rec_a": np.array([0], "int32"), "rec_b": np.array([1], "int32")})
    out = compare_pairs(pairs, people)
    assert int(out["lvl_given_name"].iloc[0]) == G("swapped")
    unknown = compare_pairs(pairs, people.iloc[:2])
    assert int(unknown["lvl_given_name"].iloc[0]) == G("different")


def test_level_codes_are_ordered_and_named():
    """Codes are dense from 0, 0 is missing, 1 is different; users look levels up by name."""
    for spec in FIELDS:
        codes = [lvl.code for lvl in spec.levels]
        assert codes == list(range(len(codes)))
        assert spec.level(0).name == "missing" and spec.level(1).name == "different"
        assert len({lvl.name for lvl in spec.levels}) == len(codes)
    assert G("initial") < G("one_edit") < G("similar") < G("close") < G("exact")
    assert F("initial") < F("one_edit") < F("similar") < F("close") < F("exact")


def test_exact_agreement_beats_swap():
    same = {"given_key": "james", "family_key": "james"}
    got = levels_for(same, same)
    assert (got["given_name"], got["family_name"]) == (G("exact"), F("exact"))


@pytest.mark.parametrize(
    ("a", "b", "level"),
    [
        ("jr", "jr", SUFFIX.code_of("same")),
        ("jr", "sr", SUFFIX.code_of("different")),
        ("jr", None, 0),
        (None, None, 0),
    ],
)
def test_suffix_levels(a, b, level):
    assert levels_for({"suffix": a}, {"suffix": b}, field="suffix") == level


# ----- birth dates --------------------------------------------------------------------------

BD = BIRTH_DATE.code_of


@pytest.mark.parametrize(
    ("a", "b", "level"),
    [
        ("1980-03-04", "1980-03-04", BD("exact")),
        ("1980-03-04", "1980-04-03", BD("day_month_swapped")),
        ("1980-03-04", "1981-03-04", BD("year_off_by_one")),
        ("1980-03-04", "1980-03-14", BD("one_part")),
        ("1980-03-04", "1980-08-04", BD("one_part")),
        ("1980-03-04", "1985-03-04", BD("one_part")),
        ("1980-03-03", "1980-03-03", BD("exact")),
        ("1980-03-04", "1980", BD("same_year")),
        ("1980-03-04", "1979", BD("different")),
        ("1980-03-04", "1991-07-22", BD("different")),
        ("1980-03-04", None, 0),
    ],
)
def test_birth_date_levels(a, b, level):
    assert levels_for({"birth_date": a}, {"birth_date": b}, field="birth_date") == level


# ----- identifiers --------------------------------------------------------------------------

N = NATIONAL_ID.code_of


def nid(*keys: str, status: str = "valid") -> list[tuple]:
    """National-ID rows: the first key on record 0, the second (if any) on record 1."""
    return [(rec, "national_id", key, status) for rec, key in enumerate(keys)]


@pytest.mark.parametrize(
    ("ids", "level"),
    [
        (nid("us_ssn:536904399", "us_ssn:536904399"), N("exact")),
        # two adjacent digits swapped, and one digit changed: one typing slip each
        (nid("us_ssn:536904399", "us_ssn:539604399"), N("one_edit")),
        (nid("us_ssn:536904399", "us_ssn:536904398"), N("one_edit")),
        (nid("us_ssn:536904399", "us_ssn:123456789"), N("different")),
        # one edit apart but different ID types: not a typing slip
        (nid("us_ssn:536904399", "us_itin:536904398"), N("different")),
        (nid("us_ssn:536904399"), 0),
        # a placeholder counts as missing, even when both records carry it
        (nid("us_ssn:000000000", "us_ssn:000000000", status="placeholder"), 0),
    ],
)
def test_national_id_levels(ids, level):
    assert levels_for({}, {}, ids, field="national_id") == level


P = PHONE.code_of


def phones(*numbers: tuple[int, str, str | None], status: str = "valid") -> list[tuple]:
    """Phone rows from (rec, number, number type) triples."""
    return [(rec, "phone", number, status, kind) for rec, number, kind in numbers]


@pytest.mark.parametrize(
    ("ids", "level"),
    [
        (phones((0, "+15550100", "mobile"), (1, "+15550100", "mobile")), P("shared_mobile")),
        (
            phones((0, "+15550100", "FIXED_LINE"), (1, "+15550100", "FIXED_LINE")),
            P("shared_fixed"),
        ),
        # US numbers are usually "fixed line or mobile": treated as personal numbers
        (
            phones((0, "+15550100", "fixed_line_or_mobile"), (1, "+15550100", None)),
            P("shared_mobile"),
        ),
        (phones((0, "+15550100", None), (1, "+15550101", None)), P("different")),
        (phones((0, "+15550100", None)), 0),
        (
            phones((0, "+15550100", None), (1, "+15550100", None), status="placeholder"),
            0,
        ),
        # multi-valued: the second phone of record 0 is the first of record 1
        (
            phones(
                (0, "+15550100", "mobile"),
                (0, "+15550177", "fixed_line"),
                (1, "+15550177", "fixed_line"),
                (1, "+15550199", "mobile"),
            ),
            P("shared_fixed"),
        ),
        # sharing both a landline and a mobile: the stronger level wins
        (
            phones(
                (0, "+15550177", "fixed_line"),
                (0, "+15550100", "mobile"),
                (1, "+15550177", "fixed_line"),
                (1, "+15550100", "mobile"),
            ),
            P("shared_mobile"),
        ),
    ],
)
def test_phone_levels(ids, level):
    assert levels_for({}, {}, ids, field="phone") == level


E = EMAIL.code_of


@pytest.mark.parametrize(
    ("ids", "level"),
    [
        ([(0, "email", "jsmith@gmail.com"), (1, "email", "jsmith@gmail.com")], E("shared")),
        (
            [(0, "email", "jsmith@gmail.com"), (1, "email", "jsmith@example.org")],
            E("same_local_part"),
        ),
        ([(0, "email", "jsmith@gmail.com"), (1, "email", "ann@gmail.com")], E("different")),
        ([(1, "email", "ann@gmail.com")], 0),
        (
            [
                (0, "email", "a@x.test"),
                (0, "email", "jsmith@gmail.com"),
                (1, "email", "jsmith@gmail.com"),
            ],
            E("shared"),
        ),
    ],
)
def test_email_levels(ids, level):
    assert levels_for({}, {}, ids, field="email") == level


# ----- addresses ----------------------------------------------------------------------------

A = ADDRESS.code_of
HOME = {
    "house_number": "12",
    "street_name": "harbour road",
    "postcode": "ab1 2cd",
    "city": "portwell",
    "address_key": "12|harbour road|ab1 2cd",
}


def near_home(**changes: str | None) -> dict:
    """HOME with some parts changed and the address key rebuilt from the parts."""
    row = HOME | changes
    parts = (row["house_number"], row["street_name"], row["postcode"])
    return row | {"address_key": "|".join(p for p in parts if p)}


@pytest.mark.parametrize(
    ("b", "level"),
    [
        (HOME, A("exact")),
        (near_home(street_name="harbor rd"), A("number_postcode")),
        (near_home(house_number="14", street_name="harbor road"), A("close")),
        # same city is enough for "close" when the postcode is missing
        (near_home(house_number="14", street_name="harbor road", postcode=None), A("close")),
        (
            near_home(house_number="3", street_name="mill lane", postcode="zz9 9zz", city=None),
            A("different"),
        ),
        ({"city": "portwell"}, 0),
        ({}, 0),
    ],
)
def test_address_levels(b, level):
    assert levels_for(HOME, b, field="address") == level


# ----- table behaviour ----------------------------------------------------------------------


def small_run():
    people = people_frame(
        [
            {"given_key": "anna", "family_key": "berg", "birth_date": "1980-03-04"},
            {"given_key": "ana", "family_key": "berg", "birth_date": "1980-04-03"},
            {"given_key": "bob", "family_key": "stone", "birth_date": "1975-01-01"},
            {"given_key": "anna", "family_key": "bergh", "birth_date": None},
            {"given_key": "j", "family_key": "stone", "suffix": "jr"},
        ]
    )
    ids = id_frame(
        [
            (0, "phone", "+15550100", "valid", "mobile"),
            (1, "phone", "+15550100", "valid", "mobile"),
            (2, "email", "bob@x.test"),
            (4, "email", "bob@y.test"),
            (3, "national_id", "us_ssn:536904399"),
            (0, "national_id", "us_ssn:536904398"),
        ]
    )
    a, b = np.triu_indices(len(people), k=1)
    pairs = pd.DataFrame({"rec_a": a.astype("int32"), "rec_b": b.astype("int32")})
    pairs["keys"] = np.arange(len(pairs), dtype="int64")
    return people, ids, pairs


def test_output_columns_dtypes_and_pass_through():
    people, ids, pairs = small_run()
    out = compare_pairs(pairs, people, ids)
    assert list(out.columns) == ["rec_a", "rec_b", "keys"] + level_columns()
    assert all(out[c].dtype == np.int8 for c in level_columns())
    assert out["keys"].tolist() == pairs["keys"].tolist()
    for spec in FIELDS:
        assert set(out[spec.column]) <= {lvl.code for lvl in spec.levels}


def test_missing_everything_gives_level_zero():
    got = levels_for({}, {})
    assert set(got.values()) == {0}


def test_same_result_in_small_chunks_and_repeatable(monkeypatch):
    people, ids, pairs = small_run()
    whole = compare_pairs(pairs, people, ids)
    monkeypatch.setattr(records, "CHUNK", 3)
    assert compare_pairs(pairs, people, ids).equals(whole)
    assert compare_pairs(pairs, prepare_records(people, ids)).equals(whole)


def test_levels_do_not_depend_on_record_order():
    people, ids, pairs = small_run()
    out = compare_pairs(pairs, people, ids)
    n = len(people)
    flipped = people.iloc[::-1].reset_index(drop=True)
    flipped.index.name = "rec"
    ids_f = ids.assign(rec=(n - 1 - ids["rec"]).astype("int32"))
    pairs_f = pd.DataFrame(
        {
            "rec_a": (n - 1 - pairs["rec_b"]).astype("int32"),
            "rec_b": (n - 1 - pairs["rec_a"]).astype("int32"),
        }
    )
    out_f = compare_pairs(pairs_f, flipped, ids_f)
    for col in level_columns():
        assert out[col].tolist() == out_f[col].tolist(), col


def test_bad_pairs_are_refused():
    people, ids, _ = small_run()
    bad = pd.DataFrame({"rec_a": np.array([2], "int32"), "rec_b": np.array([1], "int32")})
    with pytest.raises(InputError):
        compare_pairs(bad, people, ids)
    outside = pd.DataFrame({"rec_a": np.array([0], "int32"), "rec_b": np.array([9], "int32")})
    with pytest.raises(InputError):
        compare_pairs(outside, people, ids)
    with pytest.raises(InputError):
        compare_pairs(outside, people, ids, settings={"no_such_setting": 1})


def test_identifier_slots_count_holders_and_skip_placeholders():
    ids = id_frame(
        [
            (0, "phone", "+15550100"),
            (1, "phone", "+15550100"),
            (1, "phone", "+15550100"),  # same number twice on one record counts once
            (2, "phone", "+15550100", "placeholder"),
            (2, "phone", "+15550111"),
        ]
    )
    from resolve.compare.align import CompareSettings

    slots = IdentifierSlots.build(ids, "phone", 3, CompareSettings())
    code = [slots.key_of(c) for c in range(len(slots.keys))].index("+15550100")
    assert slots.holders[code] == 2
    assert slots.with_any == 3
    assert slots.width == 1


@settings(max_examples=60, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.one_of(st.none(), st.text(max_size=8)),
            st.one_of(st.none(), st.text(max_size=10)),
            st.one_of(st.none(), st.text(alphabet="0123456789:x", max_size=8)),
        ),
        min_size=2,
        max_size=6,
    )
)
def test_arbitrary_text_never_breaks_comparison(rows):
    people = people_frame(
        [
            {"given_key": g, "family_key": f, "street_name": f, "address_key": g}
            for g, f, _ in rows
        ]
    )
    ids = id_frame([(i, "national_id", k) for i, (_, _, k) in enumerate(rows) if k])
    a, b = np.triu_indices(len(rows), k=1)
    pairs = pd.DataFrame({"rec_a": a.astype("int32"), "rec_b": b.astype("int32")})
    out = compare_pairs(pairs, people, ids)
    for spec in FIELDS:
        assert set(out[spec.column]) <= {lvl.code for lvl in spec.levels}
    blank = text_column(people, "given_key").isna().to_numpy()  # blank after trimming
    assert np.array_equal(out["lvl_given_name"].to_numpy() == 0, blank[a] | blank[b])
