"""Tests for resolve.signals: every rule, the rule table, masking and the output contract.

Published values come from /work/shared/CHECKS.md (SSA randomization FAQ for never-issued SSN
ranges; specimen numbers 078-05-1120 and 219-09-9999; python-stdnum's 536-90-4399 doctest).
Every other case is invented to exercise one rule and says so.
"""

from __future__ import annotations

import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from resolve.errors import InputError
from resolve.signals import COLUMNS, RULES, SCOPES, SEVERITIES, compute_signals, load_rules

TODAY = "2026-01-15"
ID_COLUMNS = ["rec", "kind", "key", "value", "status", "reason", "detail"]


def person(record_id, given="ann", family="lee", birth="1980-04-02", created="2023-06-01"):
    return {"record_id": record_id, "given_key": given, "family_key": family, "birth_date": birth,
            "birth_year": int(birth[:4]) if birth else None,
            "created_at": pd.Timestamp(created) if created else pd.NaT}


def build(people_rows, id_rows, entity_ids=None):
    """people (index rec), identifiers and entities frames in the shapes of docs/architecture.md."""
    people = pd.DataFrame(people_rows).rename_axis("rec")
    people["created_at"] = pd.to_datetime(people["created_at"])
    ids = pd.DataFrame(id_rows, columns=ID_COLUMNS).astype({c: "string" for c in ID_COLUMNS[1:]})
    ents = pd.DataFrame({"rec": range(len(people)),
                         "entity_id": entity_ids or [f"E{i}" for i in range(len(people))]})
    return people, ids, ents


def ssn(rec, digits, status="valid", reason=None):
    """A US SSN identifier row the way the normaliser writes it (compact value, typed key)."""
    compact = digits.replace("-", "")
    return (rec, "national_id", f"us_ssn:{compact}", compact, status, reason, "us_ssn")


def phone(rec, e164, number_type="mobile", status="valid"):
    return (rec, "phone", e164, e164, status, None, number_type)


def email(rec, address, status="valid"):
    return (rec, "email", address, address, status, None, None)


def run(people, ids, ents, **kw):
    return compute_signals(people, ids, ents, today=TODAY, **kw)


def only(flags, code):
    return flags[flags["flag"] == code]


# ---------------- rule table ----------------

def test_rule_file_lists_every_rule_with_its_fields():
    rules = load_rules()
    assert set(rules) == set(RULES)
    for code, rule in rules.items():
        assert rule["code"] == code
        assert rule["severity"] in SEVERITIES
        assert isinstance(rule["enabled"], bool)
        assert rule["description"].endswith(".")
        assert isinstance(rule["parameters"], dict)


def test_user_overrides_merge_field_by_field(tmp_path):
    path = tmp_path / "rules.toml"
    path.write_text('[identifier_hub]\nseverity = "high"\n[identifier_hub.parameters]\nmax_entities = 8\n'
                    '[unusual_phone_type]\nenabled = false\n')
    rules = load_rules(path)
    assert rules["identifier_hub"]["severity"] == "high"
    assert rules["identifier_hub"]["parameters"]["max_entities"] == 8
    assert rules["identifier_hub"]["parameters"]["kinds"] == ["phone", "email", "national_id"]  # kept
    assert rules["unusual_phone_type"]["enabled"] is False
    assert load_rules()["identifier_hub"]["severity"] == "medium"  # defaults untouched


@pytest.mark.parametrize("text, match", [
    ('[identifer_hub]\nenabled = false\n', "Unknown signal rule"),
    ('[identifier_hub.parameters]\nmax_entitys = 3\n', "no parameter"),
    ('[identifier_hub.parameters]\nmax_entities = "many"\n', "must be a number"),
    ('[identifier_hub]\nseverity = "urgent"\n', "low, medium or high"),
    ('[identifier_hub]\nenabled = "yes"\n', "enabled = true or false"),
    ('[identifier_hub\n', "not valid TOML"),
])
def test_bad_rule_files_are_refused_with_a_sentence(tmp_path, text, match):
    path = tmp_path / "rules.toml"
    path.write_text(text)
    with pytest.raises(InputError, match=match):
        load_rules(path)


def test_missing_rule_file_is_refused(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        load_rules(tmp_path / "nope.toml")


# ---------------- national ID status rules ----------------

# CHECKS.md, "National IDs": SSA randomization FAQ (June 25 2011): area 000, 666 and 900-999,
# group 00 and serial 0000 are never assigned. The reason codes are those the normaliser emits.
SSA_NEVER_ISSUED = [
    ("000-12-3456", "never_issued_area"),
    ("666-12-3456", "never_issued_area"),
    ("900-12-3456", "never_issued_area"),
    ("123-00-4567", "never_issued_group"),
    ("123-45-0000", "never_issued_serial"),
]


@pytest.mark.parametrize("number, reason", SSA_NEVER_ISSUED)
def test_never_issued_ssn_ranges_are_flagged_high_and_masked(number, reason):
    people, ids, ents = build([person("r1")], [ssn(0, number, "invalid", reason)])
    flags = run(people, ids, ents)
    hit = only(flags, "national_id_never_issued")
    assert len(hit) == 1 and hit["severity"].iloc[0] == "high"
    sentence = hit["reason"].iloc[0]
    assert sentence.startswith(f"National ID ending {number[-4:]} ")
    assert number.replace("-", "") not in sentence and number not in sentence
    assert only(flags, "national_id_invalid").empty  # not repeated as a plain invalid ID


# CHECKS.md: 078-05-1120 (a wallet specimen number) and 219-09-9999 (a pamphlet sample) are
# known misused numbers (confirmed via copies).
@pytest.mark.parametrize("number", ["078-05-1120", "219-09-9999"])
def test_known_misused_specimen_numbers_are_flagged(number):
    people, ids, ents = build([person("r1")], [ssn(0, number, "invalid", "known_misused")])
    hit = only(run(people, ids, ents), "national_id_known_misused")
    assert len(hit) == 1
    assert f"ending {number[-4:]}" in hit["reason"].iloc[0]


def test_invalid_and_placeholder_ids():
    # Invented rows: a bad check digit (Canadian SIN 999-999-999 has a bad checksum per
    # CHECKS.md / python-stdnum) and a placeholder 000-00-0000 (CHECKS.md design notes).
    people, ids, ents = build(
        [person("r1"), person("r2", "bob", "ray"), person("r3", "cat", "kim")],
        [(0, "national_id", "ca_sin:999999999", "999999999", "invalid", "bad_checksum", "ca_sin"),
         ssn(1, "000-00-0000", "placeholder", "placeholder_value"),
         ssn(2, "000-00-0000", "placeholder", "placeholder_value")],
    )
    flags = run(people, ids, ents)
    bad = only(flags, "national_id_invalid")
    assert bad["record_id"].tolist() == ["r1"]
    assert bad["reason"].iloc[0] == "National ID ending 9999 fails its check digit."
    ph = only(flags, "placeholder_identifier")
    assert ph["record_id"].tolist() == ["r2", "r3"] and set(ph["severity"]) == {"low"}
    assert ph["reason"].iloc[0].endswith("; 1 other entity carries it.")
    assert only(flags, "shared_national_id_conflict").empty  # placeholders never join people


def test_masked_and_unknown_type_ids_are_not_called_invalid():
    # Invented: an ID supplied masked, and one of a type we cannot check.
    people, ids, ents = build([person("r1"), person("r2")], [
        (0, "national_id", None, "XXXXX1234", "invalid", "masked", None),
        (1, "national_id", None, "AB12", "invalid", "unknown_type", None),
    ])
    assert only(run(people, ids, ents), "national_id_invalid").empty


def test_integration_with_the_national_id_normaliser():
    # The published SSA and specimen numbers from CHECKS.md, through the real normaliser.
    nid = pytest.importorskip("resolve.normalise.national_id")
    raw = pd.Series(["000-12-3456", "666-12-3456", "123-00-4567", "123-45-0000",
                     "078-05-1120", "219-09-9999", "800-12-3456", "536-90-4399"])
    norm = nid.normalise_national_ids(raw, "US")
    ids = pd.DataFrame({"rec": range(len(raw)), "kind": "national_id", "key": nid.national_id_keys(norm),
                        "value": norm["value"], "status": norm["status"], "reason": norm["reason"],
                        "detail": norm["id_type"]})
    people = pd.DataFrame([person(f"r{i}", f"g{i}", f"f{i}") for i in range(len(raw))]).rename_axis("rec")
    ents = pd.DataFrame({"rec": range(len(raw)), "entity_id": range(len(raw))})
    flags = run(people, ids, ents)
    assert sorted(only(flags, "national_id_never_issued")["record_id"]) == ["r0", "r1", "r2", "r3"]
    assert sorted(only(flags, "national_id_known_misused")["record_id"]) == ["r4", "r5"]
    # 800-12-3456 is valid (areas 773-899 open since 2011, CHECKS.md); 536-90-4399 is valid.
    assert not flags["record_id"].isin(["r6", "r7"]).any()


# ---------------- shared national ID ----------------

def conflict_case(second=("mary", "jones", "1991-07-30"), third=None, differ_on=None, same_entity=False):
    """Invented: record r1 (ann lee 1980) and others carrying SSN 536-90-4399."""
    rows = [person("r1"), person("r2", *second)]
    if third:
        rows.append(person("r3", *third))
    ids = [ssn(i, "536-90-4399") for i in range(len(rows))]
    entity_ids = ["E0"] * len(rows) if same_entity else None
    people, idf, ents = build(rows, ids, entity_ids)
    rules = {"shared_national_id_conflict": {"parameters": {"differ_on": differ_on}}} if differ_on else None
    return only(run(people, idf, ents, rules=rules), "shared_national_id_conflict")


def test_shared_id_with_different_name_and_birth_date_is_flagged_on_every_carrier():
    hit = conflict_case()
    assert hit["record_id"].tolist() == ["r1", "r2"]
    assert set(hit["severity"]) == {"high"} and set(hit["scope"]) == {"group"}
    assert hit["group_id"].nunique() == 1 and hit["group_id"].notna().all()
    # 536-90-4399 is python-stdnum's us.ssn doctest number (CHECKS.md); only 4399 may show.
    assert hit["reason"].iloc[0] == (
        "National ID ending 4399 is also carried by 1 other entity whose name and birth date differ."
    )
    assert not hit["reason"].str.contains("53690").any()


def test_three_carriers_read_like_the_documented_sentence():
    hit = conflict_case(third=("bob", "ray", "1965-01-01"))
    assert (hit["reason"] == "National ID ending 4399 is also carried by 2 other entities "
                             "whose names and birth dates differ.").all()


def test_same_birth_date_is_not_a_conflict_unless_either_is_asked():
    married = ("ann", "smith", "1980-04-02")  # invented: family name changed, same birth date
    assert conflict_case(second=married).empty
    assert len(conflict_case(second=married, differ_on="either")) == 2


def test_unknown_differ_on_setting_is_refused():
    with pytest.raises(InputError, match="differ_on"):
        conflict_case(differ_on="sometimes")


def test_swapped_name_order_and_missing_birth_date_do_not_make_a_conflict():
    assert conflict_case(second=("lee", "ann", "1991-07-30")).empty  # invented: swapped order
    assert conflict_case(second=("mary", "jones", "")).empty  # unknown birth date


def test_one_entity_carrying_its_own_id_twice_is_not_a_conflict():
    assert conflict_case(same_entity=True).empty


# ---------------- several national IDs ----------------

def test_entity_with_two_ssns_is_flagged_but_not_an_ssn_and_a_foreign_id():
    # Invented: entity E0 has two SSNs; entity E1 an SSN and a UK NINO.
    people, ids, ents = build(
        [person("a1"), person("a2"), person("b1", "bob", "ray"), person("b2", "bob", "ray")],
        [ssn(0, "536-90-4399"), ssn(1, "536-90-7712"), ssn(2, "111-22-3333"),
         (3, "national_id", "gb_nino:AB123456C", "AB123456C", "valid", None, "gb_nino")],
        ["E0", "E0", "E1", "E1"],
    )
    hit = only(run(people, ids, ents), "several_national_ids")
    assert hit["record_id"].tolist() == ["a1", "a2"]
    assert set(hit["scope"]) == {"entity"} and set(hit["entity_id"]) == {"E0"}
    assert hit["reason"].iloc[0] == (
        "This entity carries 2 different national IDs of type us_ssn; the one on this record ends in 4399."
    )
    any_type = {"several_national_ids": {"parameters": {"same_type_only": False}}}
    hit = only(run(people, ids, ents, rules=any_type), "several_national_ids")
    assert hit["record_id"].tolist() == ["a1", "a2", "b1", "b2"]


@pytest.mark.parametrize("other", ["536-90-4939", "536-90-4398", "536-90-439"])
def test_ids_one_typing_slip_apart_are_not_several_ids(other):
    # Invented: a swap of neighbours, one wrong digit, one digit dropped (OSA distance 1).
    people, ids, ents = build([person("a1"), person("a2")], [ssn(0, "536-90-4399"), ssn(1, other)],
                              ["E0", "E0"])
    assert only(run(people, ids, ents), "several_national_ids").empty
    strict = {"several_national_ids": {"parameters": {"min_edit_distance": 1}}}
    assert len(only(run(people, ids, ents, rules=strict), "several_national_ids")) == 2


# ---------------- hubs and placeholders ----------------

def hub_case(n_entities, kind="phone", status="valid"):
    rows = [person(f"r{i}", f"g{i}", f"f{i}") for i in range(n_entities)]
    if kind == "phone":
        ids = [phone(i, "+12025550143", status=status) for i in range(n_entities)]
    else:
        ids = [ssn(i, "536-90-4399", status) for i in range(n_entities)]
    return build(rows, ids)


def test_phone_carried_by_more_than_five_entities_is_a_hub():
    # Invented: +1 202 555 0143 is in the NANP fiction range 555-0100..0199 (CHECKS.md).
    assert only(run(*hub_case(5)), "identifier_hub").empty  # limit is "more than 5"
    hit = only(run(*hub_case(6)), "identifier_hub")
    assert len(hit) == 6 and set(hit["severity"]) == {"medium"}
    assert hit["reason"].iloc[0] == "Phone ending 0143 is carried by 6 entities, more than the limit of 5."


def test_national_id_hub_uses_its_own_limit():
    hit = only(run(*hub_case(4, kind="national_id")), "identifier_hub")
    assert len(hit) == 4 and hit["reason"].iloc[0].endswith("more than the limit of 3.")


def test_placeholder_values_are_reported_low_and_never_as_hubs():
    flags = run(*hub_case(8, status="placeholder"))
    assert only(flags, "identifier_hub").empty and only(flags, "ring_pattern").empty
    ph = only(flags, "placeholder_identifier")
    assert len(ph) == 8 and set(ph["severity"]) == {"low"}
    assert ph["reason"].iloc[0] == (
        "Phone ending 0143 is a placeholder value, ignored for matching; 7 other entities carry it."
    )


# ---------------- rings ----------------

def ring_people(n=3, family=None):
    return [person(f"r{i}", f"g{i}", family or f"f{i}", f"19{70 + i}-01-01") for i in range(n)]


RING_IDS = [  # invented: a pool of two phones and one email passed around three identities
    phone(0, "+12025550101"), phone(1, "+12025550101"),
    phone(1, "+12025550102"), phone(2, "+12025550102"),
    email(2, "pool@example.com"), email(0, "pool@example.com"),
]


def test_three_entities_sharing_a_pool_of_values_form_a_ring():
    hit = only(run(*build(ring_people(), RING_IDS)), "ring_pattern")
    assert hit["record_id"].tolist() == ["r0", "r1", "r2"]
    assert hit["group_id"].nunique() == 1 and set(hit["severity"]) == {"high"}
    assert hit["reason"].iloc[0] == (
        "This entity is one of 3 entities sharing 1 email and 2 phones with no household link between them."
    )


def test_two_entities_or_one_shared_value_are_not_a_ring():
    assert only(run(*build(ring_people(2), RING_IDS[:2])), "ring_pattern").empty
    one_value = [phone(i, "+12025550101") for i in range(3)]
    assert only(run(*build(ring_people(), one_value)), "ring_pattern").empty


def test_household_links_explain_the_sharing():
    people, ids, ents = build(ring_people(), RING_IDS)
    links = pd.DataFrame({"rec_a": [0, 1, 0], "rec_b": [1, 2, 2], "link_type": ["household"] * 3,
                          "prob": [0.1] * 3})
    assert only(run(people, ids, ents, links=links), "ring_pattern").empty


def test_a_shared_address_explains_the_sharing():
    # Invented: three people with different family names at one address (a blended household).
    addresses = [(i, "address", "12 elm st|10001", "12 Elm St", "valid", None, None) for i in range(3)]
    people, ids, ents = build(ring_people(), RING_IDS + addresses)
    assert only(run(people, ids, ents), "ring_pattern").empty
    off = {"ring_pattern": {"parameters": {"shared_address_explains": False}}}
    assert len(only(run(people, ids, ents, rules=off), "ring_pattern")) == 3


def test_a_shared_family_name_explains_the_sharing():
    people, ids, ents = build(ring_people(family="lee"), RING_IDS)  # invented relatives
    assert only(run(people, ids, ents), "ring_pattern").empty
    off = {"ring_pattern": {"parameters": {"shared_family_name_explains": False}}}
    assert len(only(run(people, ids, ents, rules=off), "ring_pattern")) == 3


def test_values_held_by_many_entities_do_not_build_rings():
    # Invented: eleven strangers share one phone and one email (a call-centre line and a
    # shop address, say): hubs, not a ring, with the default limit of 10 entities per value.
    rows = ring_people(11)
    ids = [phone(i, "+12025550150") for i in range(11)] + [email(i, "front@example.com") for i in range(11)]
    assert only(run(*build(rows, ids)), "ring_pattern").empty


def test_given_groups_are_used_as_the_candidate_sets():
    people, ids, ents = build(ring_people(4), RING_IDS + [phone(3, "+12025550109")])
    # Group kinds as resolve.clusters.groups names them.
    groups = pd.DataFrame({"entity_id": ["E0", "E1", "E2", "E3"], "group_id": ["G7"] * 4,
                           "group_kind": ["ring_like"] * 4})
    hit = only(run(people, ids, ents, groups=groups), "ring_pattern")
    assert hit["record_id"].tolist() == ["r0", "r1", "r2", "r3"]
    assert set(hit["group_id"]) == {"G7"}
    household = groups.assign(group_kind="single_household")
    assert only(run(people, ids, ents, groups=household), "ring_pattern").empty
    every_kind = {"ring_pattern": {"parameters": {"group_kinds": []}}}
    assert len(only(run(people, ids, ents, groups=household, rules=every_kind), "ring_pattern")) == 4


# ---------------- ages ----------------

@pytest.mark.parametrize("birth, created, flagged, text", [
    ("2010-06-02", "2024-06-01", True, "Age was 13 when the record was created, under the minimum of 16."),
    ("2008-06-01", "2024-06-01", False, None),  # 16th birthday that day
    ("1900-01-01", "2011-01-01", True, "Age was 111 when the record was created, over the maximum of 110."),
    ("1900-01-02", "2011-01-01", False, None),  # 110
    ("2030-01-01", "2024-06-01", True, "Birth date is after the date the record was created (2024-06-01)."),
    ("1900-01-01", "", True, "Age was 126 today, over the maximum of 110."),
])
def test_implausible_ages(birth, created, flagged, text):
    # Invented dates around the default limits (16 and 110, our own settings).
    hit = only(run(*build([person("r1", birth=birth, created=created)], [])), "implausible_age")
    assert (len(hit) == 1) == flagged
    if flagged:
        assert hit["reason"].iloc[0] == text


def test_age_from_birth_year_alone():
    row = person("r1", birth="", created="2024-06-01")
    row["birth_year"] = 2015  # invented; only the year is known
    assert len(only(run(*build([row], [])), "implausible_age")) == 1


# ---------------- bursts ----------------

def burst_case(dates, entity_ids=None):
    rows = [person(f"r{i}", f"g{i}", f"f{i}", created=d) for i, d in enumerate(dates)]
    return build(rows, [email(i, "shared@example.com") for i in range(len(dates))], entity_ids)


def test_three_entities_sharing_an_email_within_thirty_days_are_a_burst():
    hit = only(run(*burst_case(["2024-03-01", "2024-03-15", "2024-03-31", "2024-09-01"])),
               "burst_shared_identifier")
    assert hit["record_id"].tolist() == ["r0", "r1", "r2"]  # r3 opened months later
    assert hit["reason"].iloc[0] == (
        "Email s***@example.com is shared by 3 entities opened within 30 days of one another "
        "(between 2024-03-01 and 2024-03-31)."
    )


def test_spread_out_or_same_entity_openings_are_not_a_burst():
    assert only(run(*burst_case(["2024-01-01", "2024-02-15", "2024-04-01"])), "burst_shared_identifier").empty
    same = burst_case(["2024-03-01", "2024-03-02", "2024-03-03"], ["E0", "E0", "E0"])
    assert only(run(*same), "burst_shared_identifier").empty


# ---------------- phone types ----------------

def test_unusual_phone_types():
    people, ids, ents = build([person("r1"), person("r2"), person("r3")], [
        phone(0, "+12025550143", "voip"), phone(1, "+18005550199", "toll_free"),
        phone(2, "+12025550144", "mobile")])
    hit = only(run(people, ids, ents), "unusual_phone_type")
    assert hit["record_id"].tolist() == ["r1", "r2"] and set(hit["severity"]) == {"low"}
    assert hit["reason"].iloc[0] == "Phone ending 0143 is a VoIP number, rarely a customer's own line."


# ---------------- output contract ----------------

def test_output_contract_order_and_determinism():
    people, ids, ents = build(ring_people(), RING_IDS + [ssn(0, "078-05-1120", "invalid", "known_misused")])
    flags = run(people, ids, ents)
    assert tuple(flags.columns) == COLUMNS
    assert set(flags["scope"]) <= set(SCOPES) and set(flags["severity"]) <= set(SEVERITIES)
    assert flags["record_id"].is_monotonic_increasing
    assert not flags.duplicated(["record_id", "flag", "reason"]).any()
    assert flags["group_id"].isna().eq(flags["scope"] != "group").all()
    pd.testing.assert_frame_equal(flags, run(people, ids, ents))


def test_disabled_rule_and_changed_severity():
    people, ids, ents = build(ring_people(), RING_IDS)
    flags = run(people, ids, ents, rules={"ring_pattern": {"enabled": False}})
    assert only(flags, "ring_pattern").empty
    flags = run(people, ids, ents, rules={"ring_pattern": {"severity": "low"}})
    assert set(only(flags, "ring_pattern")["severity"]) == {"low"}


def test_no_flags_gives_an_empty_frame_with_the_columns():
    flags = run(*build([person("r1")], []))
    assert flags.empty and tuple(flags.columns) == COLUMNS


def test_missing_column_is_refused():
    people, ids, ents = build([person("r1")], [])
    with pytest.raises(InputError, match="entity_id"):
        run(people, ids, ents.drop(columns="entity_id"))


def test_flags_feed_the_evaluation():
    from resolve.evaluate import evaluate

    people, ids, ents = build(ring_people(), RING_IDS)
    flags = run(people, ids, ents)
    truth = pd.DataFrame({"record_id": ["r0", "r1", "r2"], "person_id": ["a", "b", "c"],
                          "label": ["fabricated"] * 3})
    rf = evaluate(truth, pd.DataFrame({"record_id": ["r0", "r1", "r2"], "entity_id": ["E0", "E1", "E2"]}),
                  flags=flags)["risk_flags"]
    assert rf["recall"] == 1.0


@settings(max_examples=25, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 7), st.sampled_from(["phone", "email", "national_id"]),
                          st.integers(0, 3), st.sampled_from(["valid", "invalid", "placeholder"]),
                          st.integers(100_000_000, 999_999_999)),
                max_size=30))
def test_never_raises_and_never_shows_a_full_national_id(rows):
    # Invented random sharing among 8 records; each national ID value is a 9-digit number.
    people = [person(f"r{i}", f"g{i % 3}", f"f{i % 2}", f"19{60 + i}-02-03") for i in range(8)]
    id_rows = []
    for rec, kind, pool, status, number in rows:
        if kind == "national_id":
            id_rows.append(ssn(rec, str(number), status, None if status == "valid" else "bad_format"))
        elif kind == "phone":
            id_rows.append(phone(rec, f"+1202555010{pool}", "voip" if pool == 0 else "mobile", status))
        else:
            id_rows.append(email(rec, f"p{pool}@example.com", status))
    flags = run(*build(people, id_rows, [f"E{i // 2}" for i in range(8)]))
    assert set(flags["record_id"]) <= {f"r{i}" for i in range(8)}
    for _, _, _, _, number in rows:
        assert not flags["reason"].str.contains(str(number), regex=False).any()
