"""Tests for resolve.candidates: blocking keys, hub control, the one-edit index and the report.

The property test compares `find_candidates` with a brute-force reference written here in
plain Python (every pair of records, every key) on small random tables.
"""

from __future__ import annotations

import itertools
from collections import defaultdict

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from resolve.candidates import (BLOCKING_KEYS, KEY_SPECS, BlockingSettings, CapRule,
                                decode_keys, find_candidates, has_key, key_mask,
                                pairs_completeness)
from resolve.candidates.find import _merge
from resolve.candidates.groups import BlockPairs, pairs_across, pairs_within, ranges
from resolve.errors import ResolveError

STRING_COLUMNS = ["record_id", "given_key", "given_root", "given_initial", "given_phonetic",
                  "family_key", "family_core", "family_first", "family_phonetic", "birth_date",
                  "postcode", "address_key", "house_number", "street_name", "country"]
INT_COLUMNS = ["birth_year", "birth_month", "birth_day"]


def make_people(rows: list[dict]) -> pd.DataFrame:
    """A people frame of the contract's shape from partial rows (absent fields are <NA>)."""
    n = len(rows)
    data = {}
    for c in STRING_COLUMNS:
        data[c] = pd.array([r.get(c, f"r{i}" if c == "record_id" else None)
                            for i, r in enumerate(rows)], dtype="string")
    for c in INT_COLUMNS:
        data[c] = pd.array([r.get(c) for r in rows], dtype="Int64")
    return pd.DataFrame(data, index=pd.RangeIndex(n, name="rec"))


def make_ids(rows: list[tuple]) -> pd.DataFrame:
    """An identifier table from (rec, kind, key, status) tuples."""
    return pd.DataFrame({
        "rec": np.array([r[0] for r in rows], dtype=np.int32),
        "kind": pd.array([r[1] for r in rows], dtype="string"),
        "key": pd.array([r[2] for r in rows], dtype="string"),
        "status": pd.array([r[3] for r in rows], dtype="string"),
    })


def pair_bits(result) -> dict[tuple[int, int], int]:
    p = result.pairs
    return {(int(a), int(b)): int(k) for a, b, k in zip(p["rec_a"], p["rec_b"], p["keys"])}


def only(*names: str) -> BlockingSettings:
    return BlockingSettings(keys=names)


# --- brute-force reference -------------------------------------------------------------------

def _present(v) -> bool:
    return v is not None and not (isinstance(v, float) and np.isnan(v)) and v is not pd.NA \
        and str(v).strip() != ""


def _one_edit(x: str, y: str) -> bool:
    if len(x) != len(y) or x == y:
        return False
    diff = [i for i in range(len(x)) if x[i] != y[i]]
    if len(diff) == 1:
        return True
    return (len(diff) == 2 and diff[1] == diff[0] + 1 and x[diff[0]] == y[diff[1]]
            and x[diff[1]] == y[diff[0]])


def _variants(key: str) -> set[str]:
    """The key with one character of its ID part (after the first ':') removed."""
    colon = key.find(":")
    return {key[:p] + key[p + 1:] for p in range(colon + 1, len(key))} if len(key) >= 2 else set()


def reference(people: pd.DataFrame, ids: pd.DataFrame, caps: dict[str, int],
              statuses=("valid", "invalid")) -> dict[tuple[int, int], int]:
    """Every pair's key bits computed the slow, obvious way."""
    bits: dict[tuple[int, int], int] = defaultdict(int)

    def add(a, b, name):
        if a != b:
            bits[(min(a, b), max(a, b))] |= BLOCKING_KEYS[name]

    rows = [dict(rec=int(r), kind=k, key=(v if _present(v) else None), status=s)
            for r, k, v, s in zip(ids["rec"], ids["kind"], ids["key"], ids["status"])]
    banned = {(r["kind"], r["key"]) for r in rows if r["status"] == "placeholder" and r["key"]}
    eligible_ids: dict[str, set[int]] = {}
    for kind in ("phone", "email", "national_id", "address"):
        holders: dict[str, set[int]] = defaultdict(set)
        for r in rows:
            if (r["kind"] == kind and r["status"] in statuses and r["key"]
                    and (kind, r["key"]) not in banned):
                holders[r["key"]].add(r["rec"])
        name = f"shared_{kind}"
        for key, recs in holders.items():
            if len(recs) > caps[name]:
                continue
            if kind == "national_id":
                eligible_ids[key] = recs
            for a, b in itertools.combinations(sorted(recs), 2):
                add(a, b, name)
    # one edit: the two IDs must share a deletion variant whose group is within the cap
    variant_ids: dict[str, set[str]] = defaultdict(set)
    for key in eligible_ids:
        if len(key) <= 40:
            for v in _variants(key):
                variant_ids[v].add(key)
    def variant_ok(v):
        return sum(len(eligible_ids[k]) for k in variant_ids[v]) <= caps["national_id_one_edit"]
    for x, y in itertools.combinations(sorted(eligible_ids), 2):
        same_type = x[:x.find(":") + 1] == y[:y.find(":") + 1]
        if _one_edit(x, y) and same_type and any(variant_ok(v)
                                                 for v in _variants(x) & _variants(y)):
            for a in eligible_ids[x]:
                for b in eligible_ids[y]:
                    add(a, b, "national_id_one_edit")
    # person keys
    recs = [dict(people.iloc[i]) for i in range(len(people))]
    for name, spec in KEY_SPECS.items():
        if spec.source != "person":
            continue
        vals = [tuple(r[c] for c in spec.columns) for r in recs]
        full = [all(_present(v) for v in t) for t in vals]
        if spec.mode == "equal":
            blocks: dict[tuple, list[int]] = defaultdict(list)
            for i, t in enumerate(vals):
                if full[i]:
                    blocks[t].append(i)
            for members in blocks.values():
                if len(members) <= caps[name]:
                    for a, b in itertools.combinations(members, 2):
                        add(a, b, name)
        elif spec.mode == "swap_names":
            blocks = defaultdict(list)
            for i, (g, f, d) in enumerate(vals):
                if full[i] and g != f:
                    blocks[(min(g, f), max(g, f), d)].append(i)
            for members in blocks.values():
                if len(members) <= caps[name]:
                    for a, b in itertools.combinations(members, 2):
                        if vals[a][0] == vals[b][1]:
                            add(a, b, name)
        elif spec.mode == "one_missing":
            blocks = defaultdict(list)
            for i, (g, f, d) in enumerate(vals):
                if _present(g) and _present(f):
                    blocks[(g, f)].append(i)
            for members in blocks.values():
                if len(members) <= caps[name]:
                    for a, b in itertools.combinations(members, 2):
                        if not (_present(vals[a][2]) and _present(vals[b][2])):
                            add(a, b, name)
        else:  # swap_day_month
            blocks = defaultdict(list)
            for i, (g, f, y, m, d) in enumerate(vals):
                if full[i] and m != d:
                    blocks[(g, f, y, min(m, d), max(m, d))].append(i)
            for members in blocks.values():
                if len(members) <= caps[name]:
                    for a, b in itertools.combinations(members, 2):
                        if vals[a][3] == vals[b][4]:
                            add(a, b, name)
    return dict(bits)


# --- property test ---------------------------------------------------------------------------

NAMES = st.sampled_from(["ann", "lee", "bob", "", None])
SMALL = st.sampled_from(["a", "b", None])
ID_KEYS = ["us_ssn:1234", "us_ssn:1243", "us_ssn:1235", "us_ssn:2134", "us_ssn:2341",
           "ca_sin:1234", "us_ssn:12345", "x12", "x13", ""]
KEY_POOLS = {"phone": ["+1555", "+1556", "+44", None], "email": ["a@x", "b@x", None],
             "address": ["1 high st", "2 high st", None], "national_id": ID_KEYS + [None]}
STATUSES = st.sampled_from(["valid", "valid", "invalid", "placeholder", "missing"])


def _person(draw):
    y, m, d = (draw(st.sampled_from([1980, 1981, None])), draw(st.sampled_from([3, 4, 12, None])),
               draw(st.sampled_from([3, 4, None])))
    return {
        "given_key": draw(NAMES), "family_key": draw(NAMES), "given_root": draw(NAMES),
        "given_initial": draw(SMALL), "given_phonetic": draw(SMALL),
        "family_first": draw(NAMES), "family_phonetic": draw(SMALL),
        "postcode": draw(st.sampled_from(["A1", "B2", None])),
        "birth_year": y, "birth_month": m, "birth_day": d,
        "birth_date": f"{y}-{m:02d}-{d:02d}" if None not in (y, m, d) else draw(
            st.sampled_from([None, "1990-01-01"])),
    }


@st.composite
def tables(draw):
    """Small people/identifier tables where records are noisy copies of a few persons."""
    n = draw(st.integers(0, 12))
    persons = [_person(draw) for _ in range(draw(st.integers(1, 4)))]
    rows = []
    for _ in range(n):
        row = dict(persons[draw(st.integers(0, len(persons) - 1))])
        if draw(st.booleans()):  # some fields replaced by fresh draws or blanked
            other = _person(draw)
            for col in draw(st.sets(st.sampled_from(sorted(other)), max_size=4)):
                row[col] = other[col]
        if draw(st.integers(0, 3)) == 0:
            row["given_key"], row["family_key"] = row["family_key"], row["given_key"]
            row["given_phonetic"], row["family_phonetic"] = (row["family_phonetic"],
                                                             row["given_phonetic"])
        if draw(st.integers(0, 3)) == 0:
            row["birth_month"], row["birth_day"] = row["birth_day"], row["birth_month"]
        rows.append(row)
    id_rows = []
    if n:
        for _ in range(draw(st.integers(0, 4 * n))):
            kind = draw(st.sampled_from(list(KEY_POOLS)))
            id_rows.append((draw(st.integers(0, n - 1)), kind,
                            draw(st.sampled_from(KEY_POOLS[kind])), draw(STATUSES)))
    caps = {name: draw(st.integers(2, 6)) for name in KEY_SPECS}
    return make_people(rows), make_ids(id_rows), caps


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(tables())
def test_pairs_match_brute_force_reference(data):
    people, ids, caps = data
    result = find_candidates(people, ids, BlockingSettings(caps=caps))
    p = result.pairs
    assert p["rec_a"].dtype == np.int32 and p["rec_b"].dtype == np.int32
    assert (p["rec_a"] < p["rec_b"]).all()  # never a record with itself, always ordered
    assert not p.duplicated(["rec_a", "rec_b"]).any()  # each pair once
    assert (p["keys"] != 0).all()
    assert pair_bits(result) == reference(people, ids, caps)


@settings(max_examples=20, deadline=None)
@given(tables())
def test_same_input_same_output_and_row_order_does_not_matter(data):
    people, ids, caps = data
    s = BlockingSettings(caps=caps)
    first = find_candidates(people, ids, s)
    again = find_candidates(people, ids, s)
    pd.testing.assert_frame_equal(first.pairs, again.pairs)
    pd.testing.assert_frame_equal(first.hubs, again.hubs)
    pd.testing.assert_frame_equal(first.report, again.report)
    shuffled = people.iloc[np.random.default_rng(0).permutation(len(people))]
    pd.testing.assert_frame_equal(find_candidates(shuffled, ids.iloc[::-1], s).pairs,
                                  first.pairs)


# --- hubs and placeholders -------------------------------------------------------------------

def test_value_shared_by_10000_records_produces_no_pairs():
    # A requirement of the project brief: a value carried by 10,000 records must not
    # produce pairs (it would produce 49,995,000).
    n = 10_000
    people = make_people([{}] * n)
    rows = [(i, "phone", "+12025550100", "valid") for i in range(n)]
    rows += [(0, "phone", "+12025550111", "valid"), (1, "phone", "+12025550111", "valid")]
    result = find_candidates(people, make_ids(rows))
    assert pair_bits(result) == {(0, 1): BLOCKING_KEYS["shared_phone"]}
    hub = result.hubs.iloc[0]
    assert (hub["blocking_key"], hub["kind"], hub["key"], hub["records"], hub["why"]) == (
        "shared_phone", "phone", "+12025550100", n, "over_cap")
    assert hub["cap"] == 20  # two blocks are too few for the quantile: the rule's floor


def test_placeholders_never_pair_even_under_a_huge_cap():
    people = make_people([{}] * 4)
    ids = make_ids([(0, "email", "none@none.com", "placeholder"),
                    (1, "email", "none@none.com", "placeholder"),
                    (2, "email", "none@none.com", "valid"),  # same key elsewhere: still banned
                    (3, "email", "none@none.com", "valid"),
                    (0, "national_id", "us_ssn:000000000", "placeholder"),
                    (1, "national_id", "us_ssn:000000000", "placeholder")])
    result = find_candidates(people, ids, BlockingSettings(caps={"email": 10_000,
                                                                 "national_id": 10_000}))
    assert result.pairs.empty
    hubs = result.hubs.set_index("key")
    assert hubs.loc["none@none.com", "why"] == "placeholder"
    assert hubs.loc["none@none.com", "records"] == 2
    assert hubs.loc["us_ssn:000000000", "blocking_key"] == "shared_national_id"


def test_placeholder_without_key_is_reported_by_its_value():
    people = make_people([{}] * 2)
    ids = make_ids([(0, "phone", None, "placeholder"), (1, "phone", None, "placeholder")])
    ids["value"] = pd.array(["+18005550000", "+18005550000"], dtype="string")
    result = find_candidates(people, ids)
    assert result.pairs.empty
    assert result.hubs[["key", "records", "why"]].values.tolist() == [
        ["+18005550000", 2, "placeholder"]]


def test_invalid_but_keyed_national_id_still_blocks_unless_settings_say_no():
    people = make_people([{}] * 2)
    ids = make_ids([(0, "national_id", "us_ssn:123456789", "valid"),
                    (1, "national_id", "us_ssn:123456789", "invalid")])
    assert pair_bits(find_candidates(people, ids, only("shared_national_id"))) == {
        (0, 1): BLOCKING_KEYS["shared_national_id"]}
    strict = BlockingSettings(keys=("shared_national_id",), identifier_statuses=("valid",))
    assert find_candidates(people, ids, strict).pairs.empty


def test_same_value_twice_on_one_record_is_no_pair_and_counts_once():
    people = make_people([{}] * 3)
    ids = make_ids([(0, "phone", "+1", "valid"), (0, "phone", "+1", "valid"),
                    (1, "phone", "+1", "valid"), (2, "phone", "+1", "valid")])
    result = find_candidates(people, ids, BlockingSettings(caps={"phone": 3}))
    assert set(pair_bits(result)) == {(0, 1), (0, 2), (1, 2)}
    result = find_candidates(people, ids, BlockingSettings(caps={"phone": 2}))
    assert result.pairs.empty and result.hubs["records"].tolist() == [3]


def test_large_name_and_date_block_is_dropped_and_reported():
    common = {"family_phonetic": "S530", "birth_date": "1900-01-01"}
    people = make_people([common] * 60 + [{"family_phonetic": "L000",
                                           "birth_date": "1980-02-02"}] * 2)
    result = find_candidates(people, None, only("family_sound_birth_date"))
    assert pair_bits(result) == {(60, 61): BLOCKING_KEYS["family_sound_birth_date"]}
    hub = result.hubs.iloc[0]
    assert (hub["kind"], hub["key"], hub["records"], hub["cap"]) == (
        "person", "S530 | 1900-01-01", 60, 50)  # person keys: floor 50


# --- cap rule --------------------------------------------------------------------------------

def test_cap_rule_floor_quantile_ceiling():
    rule = CapRule(floor=20, quantile=0.999, ceiling=200)
    assert rule.cap_for(np.array([], dtype=int)) == 20
    assert rule.cap_for(np.array([2] * 5000 + [6] * 10 + [5000])) == 20  # households under floor
    assert rule.cap_for(np.array([30] * 1000)) == 30                     # data lifts the cap
    assert rule.cap_for(np.array([2] * 1000 + [10_000] * 10)) == 200     # hubs cannot lift it past
    assert rule.cap_for(np.array([2] * 10 + [10_000] * 10)) == 20        # too few blocks: floor
    assert rule.cap_for(np.array([1, 1, 1, 300] * 300)) == 20            # ones are not blocks


def test_fixed_caps_by_kind_or_key_name():
    s = BlockingSettings(caps={"phone": 7, "birth_date_postcode": 9})
    assert s.cap("shared_phone", np.array([1000])) == 7
    assert s.cap("birth_date_postcode", np.array([1000])) == 9
    assert s.cap("shared_email", np.array([1000])) == 20


@pytest.mark.parametrize("kwargs", [
    {"keys": ("no_such_key",)}, {"caps": {"fax": 5}}, {"caps": {"phone": 1}},
    {"identifier_statuses": ("valid", "placeholder")},
    {"person_cap": CapRule(floor=10, quantile=0.9, ceiling=5)},
])
def test_bad_settings_raise_one_plain_error(kwargs):
    with pytest.raises(ResolveError):
        BlockingSettings(**kwargs)


# --- national ID one-edit neighbourhood ------------------------------------------------------

def one_edit_bits(keys: list[str]) -> set[tuple[int, int]]:
    people = make_people([{}] * len(keys))
    ids = make_ids([(i, "national_id", k, "valid") for i, k in enumerate(keys)])
    return set(pair_bits(find_candidates(people, ids, only("national_id_one_edit"))))


@pytest.mark.parametrize("other, expected", [
    ("us_ssn:123456780", True),   # one substitution (last digit)
    ("us_ssn:023456789", True),   # one substitution (first digit)
    ("us_ssn:213456789", True),   # adjacent swap at the start
    ("us_ssn:123456798", True),   # adjacent swap at the end
    ("us_ssn:123456700", False),  # two substitutions
    ("us_ssn:193456729", False),  # swap of two digits that are not neighbours
    ("us_ssn:134567809", False),  # shares a deletion variant (13456789) but is two edits away
    ("us_ssn:12345678", False),   # a dropped digit is not matched (lengths differ)
    ("ca_sin:123456789", False),  # same digits, another ID type
    ("us_ssn:123456789", False),  # identical: shared_national_id, not one-edit
])
def test_one_edit_finds_substitutions_and_adjacent_swaps_only(other, expected):
    assert one_edit_bits(["us_ssn:123456789", other]) == ({(0, 1)} if expected else set())


def test_one_edit_works_on_letters_and_keys_without_type_prefix():
    assert one_edit_bits(["gb_nino:AB123456C", "gb_nino:AB123456D", "QQ12", "QQ21"]) == {
        (0, 1), (2, 3)}


def test_one_edit_skips_hub_ids_and_records_holding_both_ids():
    people = make_people([{}] * 4)
    ids = make_ids([(0, "national_id", "us_ssn:111111111", "valid"),
                    (1, "national_id", "us_ssn:111111111", "valid"),
                    (2, "national_id", "us_ssn:111111111", "valid"),
                    (3, "national_id", "us_ssn:111111112", "valid"),
                    (3, "national_id", "us_ssn:111111113", "valid")])
    s = BlockingSettings(keys=("national_id_one_edit",), caps={"national_id": 2})
    assert find_candidates(people, ids, s).pairs.empty  # the 3-record ID is a hub; 3 with itself


def test_one_edit_over_cap_variant_is_reported():
    keys = [f"us_ssn:12345678{d}" for d in range(10)]
    people = make_people([{}] * 10)
    ids = make_ids([(i, "national_id", k, "valid") for i, k in enumerate(keys)])
    s = BlockingSettings(keys=("national_id_one_edit",), caps={"national_id_one_edit": 5})
    result = find_candidates(people, ids, s)
    assert result.pairs.empty
    assert result.hubs[["blocking_key", "key", "records"]].values.tolist() == [
        ["national_id_one_edit", "us_ssn:12345678?", 10]]


# --- person keys -----------------------------------------------------------------------------

def test_swapped_keys_pair_only_the_swapped_records():
    base = {"given_key": "lee", "family_key": "ann", "birth_date": "1980-03-04",
            "given_phonetic": "L", "family_phonetic": "AN", "birth_year": 1980,
            "birth_month": 3, "birth_day": 4}
    people = make_people([
        base,
        {**base, "given_key": "ann", "family_key": "lee",              # names swapped
         "given_phonetic": "AN", "family_phonetic": "L"},
        {**base, "birth_month": 4, "birth_day": 3, "birth_date": "1980-04-03"},  # day/month
        {**base},                                                      # same as record 0
    ])
    keys = ("given_family_swapped_birth_date", "name_sound_birth_day_month_swapped")
    got = pair_bits(find_candidates(people, None, BlockingSettings(keys=keys)))
    assert got == {(0, 1): BLOCKING_KEYS["given_family_swapped_birth_date"],
                   (1, 3): BLOCKING_KEYS["given_family_swapped_birth_date"],
                   (0, 2): BLOCKING_KEYS["name_sound_birth_day_month_swapped"],
                   (2, 3): BLOCKING_KEYS["name_sound_birth_day_month_swapped"]}


def test_swapped_block_over_cap_is_dropped_and_counts_both_orientations():
    one = {"given_key": "lee", "family_key": "ann", "birth_date": "1980-03-04"}
    two = {"given_key": "ann", "family_key": "lee", "birth_date": "1980-03-04"}
    people = make_people([one, one, two])
    name = "given_family_swapped_birth_date"
    kept = find_candidates(people, None, BlockingSettings(keys=(name,), caps={name: 3}))
    assert set(pair_bits(kept)) == {(0, 2), (1, 2)}
    dropped = find_candidates(people, None, BlockingSettings(keys=(name,), caps={name: 2}))
    assert dropped.pairs.empty
    assert dropped.hubs[["key", "records"]].values.tolist() == [["lee | ann | 1980-03-04", 3]]


def test_missing_birth_date_pairs_with_the_whole_name_block_but_dated_records_do_not():
    name = {"given_root": "josephine", "family_key": "salazar"}
    people = make_people([{**name, "birth_date": "1963-11-23"}, name,
                          {**name, "birth_date": "1970-01-01"}, name,
                          {"given_root": "josephine", "birth_date": None}])
    got = pair_bits(find_candidates(people, None, only("name_birth_date_missing")))
    assert set(got) == {(0, 1), (1, 2), (0, 3), (2, 3), (1, 3)}  # never (0, 2): dates differ


def test_initial_and_compound_family_name_block_together():
    people = make_people([
        {"family_first": "garcia", "given_initial": "m", "birth_date": "1970-01-01"},
        {"family_first": "garcia", "given_initial": "m", "birth_date": "1970-01-01"},
        {"family_first": "garcia", "given_initial": "j", "birth_date": "1970-01-01"},
    ])
    got = pair_bits(find_candidates(people, None, only("family_first_given_initial_birth_date")))
    assert got == {(0, 1): BLOCKING_KEYS["family_first_given_initial_birth_date"]}


def test_missing_column_skips_the_key_with_a_note():
    people = make_people([{"birth_date": "1980-01-01"}] * 2).drop(columns="postcode")
    result = find_candidates(people, None, only("birth_date_postcode"))
    assert result.pairs.empty
    note = result.report.set_index("blocking_key").loc["birth_date_postcode", "note"]
    assert "postcode" in note


def test_empty_text_is_missing_not_a_value():
    people = make_people([{"family_phonetic": "", "birth_date": "1980-01-01"}] * 2)
    assert find_candidates(people, None, only("family_sound_birth_date")).pairs.empty


# --- report ----------------------------------------------------------------------------------

def test_report_counts_pairs_unique_pairs_and_totals():
    people = make_people([{"birth_date": "1980-01-01", "postcode": "A1",
                           "family_phonetic": "S530"}] * 2 + [{"birth_date": "1980-01-01",
                                                              "postcode": "A1"}] + [{}] * 2)
    ids = make_ids([(3, "phone", "+1", "valid"), (4, "phone", "+1", "valid"),
                    (0, "phone", "+2", "valid"), (1, "phone", "+2", "valid")])
    keys = ("shared_phone", "family_sound_birth_date", "birth_date_postcode")
    result = find_candidates(people, ids, BlockingSettings(keys=keys))
    rep = result.report.set_index("blocking_key")
    assert rep.loc["shared_phone", ["pairs", "unique_pairs", "blocks"]].tolist() == [2, 1, 2]
    assert rep.loc["family_sound_birth_date", ["pairs", "unique_pairs"]].tolist() == [1, 0]
    assert rep.loc["birth_date_postcode", ["pairs", "unique_pairs"]].tolist() == [3, 2]
    # candidates: (0,1) (0,2) (1,2) (3,4) of 5*4/2 = 10 possible pairs
    assert rep.loc["all keys", "pairs"] == 4
    assert result.totals == {"records": 5, "all_pairs": 10, "candidate_pairs": 4,
                             "reduction_ratio": pytest.approx(0.6)}
    assert pair_bits(result)[(0, 1)] == key_mask(keys)
    assert list(result.report["blocking_key"]) == list(keys) + ["all keys"]


def test_empty_inputs_give_empty_well_typed_results():
    result = find_candidates(make_people([]), make_ids([]))
    assert result.pairs.empty and list(result.pairs.columns) == ["rec_a", "rec_b", "keys"]
    assert result.hubs.empty and result.totals["candidate_pairs"] == 0


def test_identifier_rows_must_name_known_records():
    with pytest.raises(ResolveError):
        find_candidates(make_people([{}]), make_ids([(5, "phone", "+1", "valid")]))
    with pytest.raises(ResolveError):
        find_candidates(make_people([{}]), make_ids([]).drop(columns="status"))


# --- registry and vectorised helpers ---------------------------------------------------------

def test_registry_bits_are_distinct_powers_of_two_in_order():
    masks = list(BLOCKING_KEYS.values())
    assert masks == [1 << i for i in range(len(masks))]
    assert decode_keys(BLOCKING_KEYS["shared_phone"] | BLOCKING_KEYS["birth_date_postcode"]) == (
        "shared_phone", "birth_date_postcode")
    assert has_key(np.array([1, 2, 3]), "shared_phone").tolist() == [True, False, True]
    assert len(masks) < 31  # fits the int32 `keys` column


def test_vectorised_pair_helpers():
    assert ranges(np.array([5, 0]), np.array([2, 3])).tolist() == [5, 6, 0, 1, 2]
    a, b = pairs_within(np.array([0, 3, 4]), np.array([3, 1, 2]))
    assert list(zip(a.tolist(), b.tolist())) == [(0, 1), (0, 2), (1, 2), (4, 5)]
    a, b = pairs_across(np.array([0]), np.array([2]), np.array([5]), np.array([2]))
    assert list(zip(a.tolist(), b.tolist())) == [(0, 5), (0, 6), (1, 5), (1, 6)]


def test_merge_fallback_for_very_large_record_counts_agrees():
    rng = np.random.default_rng(1)
    parts = []
    for bit in (1, 2, 4):
        a = rng.integers(0, 50, 200)
        b = rng.integers(0, 50, 200)
        keep = a < b
        parts.append((bit, BlockPairs(a[keep], b[keep])))
    small = _merge(parts, 50)
    huge = _merge(parts, 2 ** 40)  # too many records to pack the key bits: sort path
    for x, y in zip(small, huge):
        assert x.tolist() == y.tolist()


# --- blocking quality ------------------------------------------------------------------------

def test_pairs_completeness_matches_published_worked_example():
    # Check values from CHECKS.md (Christen & Goiser; Elfeky et al., ICDE 2002; computed from
    # the definitions): 100 records (4,950 pairs), 50 true matches, 500 candidates holding 45
    # true matches give RR 0.89899, PC 0.90, PQ 0.09.
    truth = np.repeat(np.arange(50), 2)            # 50 persons x 2 records = 50 true pairs
    true_pairs = [(2 * i, 2 * i + 1) for i in range(45)]
    false_pairs = [(a, b) for a, b in itertools.combinations(range(100), 2)
                   if truth[a] != truth[b]][:455]
    cand = pd.DataFrame(true_pairs + false_pairs, columns=["rec_a", "rec_b"], dtype=np.int32)
    q = pairs_completeness(cand, truth)
    assert (q["records"], q["all_pairs"], q["candidates"], q["true_pairs"],
            q["true_pairs_kept"]) == (100, 4950, 500, 50, 45)
    assert q["reduction_ratio"] == pytest.approx(0.89899, abs=5e-6)
    assert q["pairs_completeness"] == pytest.approx(0.90)
    assert q["pairs_quality"] == pytest.approx(0.09)


def test_pairs_completeness_counts_missing_truth_as_singletons():
    truth = np.array(["p1", "p1", None, None], dtype=object)
    cand = pd.DataFrame({"rec_a": [0, 2], "rec_b": [1, 3]})
    q = pairs_completeness(cand, truth)
    assert (q["true_pairs"], q["true_pairs_kept"]) == (1, 1)
