"""Tests for resolve.signals: every rule, the rule table, masking and the output contract.

Published values come from /work/shared/CHECKS.md (SSA randomization FAQ for never-issued SSN
ranges; specimen numbers 078-05-1120 and 219-09-9999; python-stdnum's 536-90-4399 doctest).
Every other case is invented to exercise one rule and says so. The thresholds the cases sit
around (three family names for a ring, 60 days for "opened together", two typing slips for one
ID number, ages 16 and 110) are our own settings from resolve/data/signal_rules.toml, not
published values.
"""

from __future__ import annotations

import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from resolve.errors import InputError
from resolve.signals import COLUMNS, FOLLOW_UP_RULES, RULES, SCOPES, SEVERITIES, compute_signals, load_rules

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
    assert set(rules) == set(RULES) | set(FOLLOW_UP_RULES)
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
    assert set(bad["severity"]) == {"low"}  # mostly typing errors
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

def conflict_case(second=("mary", "jones", "1991-07-30"), third=None, differ_on=None, same_entity=False,
                  created=("2023-06-01", "2023-06-01", "2023-06-01"), extra_ids=(), rules=None):
    """Invented: record r1 (ann lee 1980) and others carrying SSN 536-90-4399.

    By default every record was opened the same day, so no carrier had the ID first and no
    likely holder is picked.
    """
    rows = [person("r1", created=created[0]), person("r2", *second, created=created[1])]
    if third:
        rows.append(person("r3", *third, created=created[2]))
    ids = [ssn(i, "536-90-4399") for i in range(len(rows))] + list(extra_ids)
    entity_ids = ["E0"] * len(rows) if same_entity else None
    people, idf, ents = build(rows, ids, entity_ids)
    rules = dict(rules or {})
    if differ_on:
        rules["shared_national_id_conflict"] = {"parameters": {"differ_on": differ_on}}
    flags = run(people, idf, ents, rules=rules or None)
    return only(flags, "shared_national_id_conflict"), only(flags, "shared_national_id_likely_holder")


def test_shared_id_with_different_name_and_birth_date_is_flagged_on_every_carrier():
    hit, holder = conflict_case()
    assert hit["record_id"].tolist() == ["r1", "r2"] and holder.empty  # opened the same day
    assert set(hit["severity"]) == {"high"} and set(hit["scope"]) == {"group"}
    assert hit["group_id"].nunique() == 1 and hit["group_id"].notna().all()
    # 536-90-4399 is python-stdnum's us.ssn doctest number (CHECKS.md); only 4399 may show.
    assert hit["reason"].iloc[0] == (
        "National ID ending 4399 is also carried by 1 other entity whose name and birth date differ."
    )
    assert not hit["reason"].str.contains("53690").any()


def test_three_carriers_read_like_the_documented_sentence():
    hit, _ = conflict_case(third=("bob", "ray", "1965-01-01"))
    assert (hit["reason"] == "National ID ending 4399 is also carried by 2 other entities "
                             "whose names and birth dates differ.").all()


def test_same_birth_date_is_not_a_conflict_unless_either_is_asked():
    married = ("ann", "smith", "1980-04-02")  # invented: family name changed, same birth date
    assert conflict_case(second=married)[0].empty
    assert len(conflict_case(second=married, differ_on="either")[0]) == 2


def test_unknown_differ_on_setting_is_refused():
    with pytest.raises(InputError, match="differ_on"):
        conflict_case(differ_on="sometimes")


def test_swapped_name_order_and_missing_birth_date_do_not_make_a_conflict():
    assert conflict_case(second=("lee", "ann", "1991-07-30"))[0].empty  # invented: swapped order
    assert conflict_case(second=("mary", "jones", ""))[0].empty  # unknown birth date


def test_one_entity_carrying_its_own_id_twice_is_not_a_conflict():
    assert conflict_case(same_entity=True)[0].empty


def test_the_earliest_carrier_with_no_warning_sign_is_the_likely_holder():
    # Invented: ann lee has had the SSN since 2015; mary jones brought it in 2023.
    hit, holder = conflict_case(created=("2015-03-01", "2023-06-01", ""))
    assert holder["record_id"].tolist() == ["r1"] and set(holder["severity"]) == {"low"}
    assert holder["reason"].iloc[0] == (
        "National ID ending 4399 is also carried by 1 other entity whose name and birth date differ; "
        "this entity (carrying it since 2015-03-01) is its likely rightful holder: of the carriers with the "
        "fewest other warning signs, it had the ID first. It may be a victim of its misuse."
    )
    assert hit["record_id"].tolist() == ["r2"] and set(hit["severity"]) == {"high"}
    assert hit["reason"].iloc[0] == (
        "National ID ending 4399 is also carried by 1 other entity whose name and birth date differ; "
        "another carrier (carrying it since 2015-03-01) is its likely rightful holder."
    )
    assert holder["group_id"].iloc[0] == hit["group_id"].iloc[0]  # one case, one label


def test_the_holder_is_not_always_the_oldest_carrier():
    # Invented: the 2015 carrier shares a mobile with an unrelated person (bob ray, no family
    # name, address or birth date in common), a warning sign; the 2023 carrier shows none.
    stranger = person("r3", "bob", "ray", "1965-01-01", created="2023-06-01")
    rows_ids = [phone(0, "+12025550111"), phone(2, "+12025550111")]
    people, idf, ents = build([person("r1", created="2015-03-01"),
                               person("r2", "mary", "jones", "1991-07-30", created="2023-06-01"), stranger],
                              [ssn(0, "536-90-4399"), ssn(1, "536-90-4399")] + rows_ids)
    flags = run(people, idf, ents)
    assert only(flags, "shared_national_id_likely_holder")["record_id"].tolist() == ["r2"]
    assert only(flags, "shared_national_id_conflict")["record_id"].tolist() == ["r1"]


def test_a_carrier_with_another_id_is_not_the_holder():
    # Invented: the 2015 carrier also holds a second, clearly different SSN on a record that
    # shares its phone (one entity, two IDs): not the likely holder.
    people, idf, ents = build(
        [person("r1", created="2015-03-01"), person("r1b", created="2016-01-01"),
         person("r2", "mary", "jones", "1991-07-30", created="2023-06-01")],
        [ssn(0, "536-90-4399"), ssn(1, "212-44-7781"), phone(0, "+12025550112"), phone(1, "+12025550112"),
         ssn(2, "536-90-4399")],
        ["E0", "E0", "E1"],
    )
    flags = run(people, idf, ents)
    assert only(flags, "shared_national_id_likely_holder")["record_id"].tolist() == ["r2"]
    assert "r1" in only(flags, "shared_national_id_conflict")["record_id"].tolist()


def test_a_ring_member_is_ruled_out_before_a_carrier_with_a_weak_sign():
    # Invented: r0, a member of a three-identity ring (2019), carries the SSN of r3, opened in
    # 2022, who shares a mobile with r4, a partner with another family name who opened an
    # account the same month (a weak sign). The ring member is ruled out; r3 is the holder.
    rows = ring_people(created=["2019-05-01"] * 3) + [
        person("r3", "ann", "lee", "1955-08-08", "2022-02-01"), person("r4", "raj", "shah", "1957-01-09", "2022-02-20")]
    ids = RING_IDS + [ssn(0, "536-90-4399"), ssn(3, "536-90-4399"),
                      phone(3, "+12025550177"), phone(4, "+12025550177")]
    flags = run(*build(rows, ids))
    assert only(flags, "shared_national_id_likely_holder")["record_id"].tolist() == ["r3"]
    assert only(flags, "shared_national_id_conflict")["record_id"].tolist() == ["r0"]
    off = {"shared_national_id_likely_holder": {"parameters": {"ring_rules_out": False}}}
    # both carriers then have the same weak sign: the earlier one, the ring member, is picked
    flags = run(*build(rows, ids), rules=off)
    assert only(flags, "shared_national_id_likely_holder")["record_id"].tolist() == ["r0"]


def test_a_carrier_agreeing_with_the_holder_stands_with_it():
    # Invented: the holder's later record, not merged into its entity (family name misspelt,
    # same birth date), conflicts with the 2023 carrier but not with the holder.
    hit, holder = conflict_case(third=("ann", "leigh", "1980-04-02"),
                                created=("2015-03-01", "2023-06-01", "2020-01-01"))
    assert holder["record_id"].tolist() == ["r1", "r3"]
    assert holder["reason"].iloc[1].endswith(
        "this entity agrees on the name or birth date with the likely rightful holder "
        "(carrying it since 2015-03-01) and may be the same person.")
    assert hit["record_id"].tolist() == ["r2"]


def test_birth_dates_with_day_and_month_exchanged_agree():
    # Invented: 1980-04-02 read as 1980-02-04 (format confusion), another spelling of the name.
    assert conflict_case(second=("anne", "lea", "1980-02-04"))[0].empty
    swap_off = {"shared_national_id_conflict": {"parameters": {"day_month_swap_agrees": False}}}
    assert len(conflict_case(second=("anne", "lea", "1980-02-04"), rules=swap_off)[0]) == 2


def test_no_holder_is_picked_when_the_holder_rule_is_off():
    off = {"shared_national_id_likely_holder": {"enabled": False}}
    hit, holder = conflict_case(created=("2015-03-01", "2023-06-01", ""), rules=off)
    assert holder.empty and hit["record_id"].tolist() == ["r1", "r2"]
    assert (hit["reason"] == "National ID ending 4399 is also carried by 1 other entity "
                             "whose name and birth date differ.").all()


def test_no_holder_without_an_opening_date():
    hit, holder = conflict_case(created=("", "2023-06-01", ""))
    assert holder["record_id"].tolist() == ["r2"]  # the only dated carrier without warning signs
    hit, holder = conflict_case(created=("", "", ""))
    assert holder.empty and len(hit) == 2


# ---------------- several national IDs ----------------

def two_id_case(shared_phone=True):
    """Invented: entity E0 has two SSNs; entity E1 an SSN and a UK NINO."""
    ids = [ssn(0, "536-90-4399"), ssn(1, "536-90-7712"), ssn(2, "111-22-3333"),
           (3, "national_id", "gb_nino:AB123456C", "AB123456C", "valid", None, "gb_nino")]
    if shared_phone:
        ids += [phone(i, f"+1202555012{i // 2}") for i in range(4)]
    return build([person("a1"), person("a2"), person("b1", "bob", "ray"), person("b2", "bob", "ray")],
                 ids, ["E0", "E0", "E1", "E1"])


def test_entity_with_two_ssns_is_flagged_but_not_an_ssn_and_a_foreign_id():
    people, ids, ents = two_id_case()
    hit = only(run(people, ids, ents), "several_national_ids")
    assert hit["record_id"].tolist() == ["a1", "a2"] and set(hit["severity"]) == {"medium"}
    assert set(hit["scope"]) == {"entity"} and set(hit["entity_id"]) == {"E0"}
    assert hit["reason"].iloc[0] == (
        "This entity carries 2 different national IDs of type us_ssn; the one on this record ends in 4399."
    )
    any_type = {"several_national_ids": {"parameters": {"same_type_only": False}}}
    hit = only(run(people, ids, ents, rules=any_type), "several_national_ids")
    assert hit["record_id"].tolist() == ["a1", "a2", "b1", "b2"]


def test_records_with_different_ids_and_nothing_else_in_common_may_be_two_people():
    # Invented: the two records agree on name and birth date only (a common name merged).
    people, ids, ents = two_id_case(shared_phone=False)
    flags = run(people, ids, ents)
    assert only(flags, "several_national_ids").empty
    hit = only(flags, "several_national_ids_merge_doubt")
    assert hit["record_id"].tolist() == ["a1", "a2"] and set(hit["severity"]) == {"low"}
    assert hit["reason"].iloc[0] == (
        "This entity carries 2 different national IDs of type us_ssn, but its records with different IDs "
        "share no phone, email or address: it may join two people with the same name; check the merge. "
        "The ID on this record ends in 4399."
    )
    off = {"several_national_ids_merge_doubt": {"enabled": False}}
    assert len(only(run(people, ids, ents, rules=off), "several_national_ids")) == 2


def test_records_with_different_ids_and_birth_dates_may_be_two_people():
    # Invented: a father and son with one name at one address (shared landline), merged.
    people, ids, ents = build([person("a1", birth="1953-01-09"), person("a2", birth="1983-04-05")],
                              [ssn(0, "536-90-4399"), ssn(1, "212-44-7781"),
                               phone(0, "+12025550140", "fixed_line"), phone(1, "+12025550140", "fixed_line")],
                              ["E0", "E0"])
    hit = only(run(people, ids, ents), "several_national_ids_merge_doubt")
    assert hit["record_id"].tolist() == ["a1", "a2"]
    assert ", but its records with different IDs give different birth dates:" in hit["reason"].iloc[0]


@pytest.mark.parametrize("other", ["536-90-4939", "536-90-4398", "536-90-439", "536-09-4939"])
def test_ids_up_to_two_typing_slips_apart_are_not_several_ids(other):
    # Invented: a swap of neighbours, one wrong digit, one digit dropped (OSA distance 1), and
    # two swaps (distance 2). Two random nine-digit numbers almost never agree this closely.
    people, ids, ents = build([person("a1"), person("a2")], [ssn(0, "536-90-4399"), ssn(1, other)],
                              ["E0", "E0"])
    codes = ["several_national_ids", "several_national_ids_merge_doubt"]
    assert not run(people, ids, ents)["flag"].isin(codes).any()
    strict = {"several_national_ids": {"parameters": {"min_edit_distance": 1}}}
    assert run(people, ids, ents, rules=strict)["flag"].isin(codes).sum() == 2


def test_typing_slips_group_transitively():
    # Invented: 536-90-4399, a swap of its last two digits, and a wrong first digit of that:
    # the outer two are two slips apart, but each step is one slip.
    people, ids, ents = build([person("a1"), person("a2"), person("a3")],
                              [ssn(0, "536-90-4399"), ssn(1, "536-90-4939"), ssn(2, "536-90-4930")],
                              ["E0", "E0", "E0"])
    one_slip = {"several_national_ids": {"parameters": {"min_edit_distance": 2}}}
    codes = ["several_national_ids", "several_national_ids_merge_doubt"]
    assert not run(people, ids, ents, rules=one_slip)["flag"].isin(codes).any()


# ---------------- hubs and placeholders ----------------

def hub_case(n_entities, kind="phone", status="valid", families=None):
    families = families or [f"f{i}" for i in range(n_entities)]
    rows = [person(f"r{i}", f"g{i}", families[i]) for i in range(n_entities)]
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
    assert hit["reason"].iloc[0] == (
        "Phone ending 0143 is carried by 6 entities with 6 different family names, more than the limit of 5."
    )


def test_one_family_split_into_many_entities_is_not_a_hub():
    # Invented: a family landline on seven entities (some of them unmerged duplicates) with
    # two family names between them.
    case = hub_case(7, families=["lee"] * 4 + ["kim"] * 3)
    assert only(run(*case), "identifier_hub").empty
    by_entity = {"identifier_hub": {"parameters": {"count_family_names": False}}}
    hit = only(run(*case, rules=by_entity), "identifier_hub")
    assert len(hit) == 7
    assert hit["reason"].iloc[0] == "Phone ending 0143 is carried by 7 entities, more than the limit of 5."


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

def ring_people(n=3, family=None, created=None):
    created = created or ["2023-06-01"] * n
    return [person(f"r{i}", f"g{i}", family or f"f{i}", f"19{70 + i}-01-01", created[i]) for i in range(n)]


RING_IDS = [  # invented: a pool of two phones and one email passed around three identities
    phone(0, "+12025550101"), phone(1, "+12025550101"),
    phone(1, "+12025550102"), phone(2, "+12025550102"),
    email(2, "pool@example.com"), email(0, "pool@example.com"),
]


def address(rec, key="12|elm st||10001|US"):
    return (rec, "address", key, key, "valid", None, None)


def test_three_entities_sharing_a_pool_of_values_form_a_ring():
    hit = only(run(*build(ring_people(), RING_IDS)), "ring_pattern")
    assert hit["record_id"].tolist() == ["r0", "r1", "r2"]
    assert hit["group_id"].nunique() == 1 and set(hit["severity"]) == {"high"}
    assert hit["group_id"].iloc[0] == "ring-00001"
    assert hit["reason"].iloc[0] == (
        "This entity is one of 3 entities with 3 different family names that share 1 email and 2 phones "
        "with no family name in common."
    )


def test_two_entities_or_one_shared_value_are_not_a_ring():
    assert only(run(*build(ring_people(2), RING_IDS[:2])), "ring_pattern").empty
    one_value = [phone(i, "+12025550101") for i in range(3)]
    assert only(run(*build(ring_people(), one_value)), "ring_pattern").empty


def test_two_family_names_are_not_a_ring():
    # Invented: r0 and r2 share a family name (that join is explained); r1 links them, but the
    # set holds two family names only: a couple and a relative, say.
    rows = ring_people()
    rows[2]["family_key"] = "f0"
    assert only(run(*build(rows, RING_IDS)), "ring_pattern").empty
    two = {"ring_pattern": {"parameters": {"min_family_names": 2}}}
    assert len(only(run(*build(rows, RING_IDS), rules=two), "ring_pattern")) == 3


def test_a_shared_family_name_explains_the_sharing():
    assert only(run(*build(ring_people(family="lee"), RING_IDS)), "ring_pattern").empty  # invented relatives


def test_one_person_not_merged_explains_the_sharing():
    # Invented: one woman's records under three family names (maiden, married, remarried) with
    # one given name and birth date, not merged into one entity.
    rows = [person(f"r{i}", "ann", fam, "1980-04-02") for i, fam in enumerate(["lee", "smith", "jones"])]
    assert only(run(*build(rows, RING_IDS)), "ring_pattern").empty
    off = {"ring_pattern": {"parameters": {"same_person_explains": False}}}
    assert len(only(run(*build(rows, RING_IDS), rules=off), "ring_pattern")) == 3


def test_a_shared_address_explains_the_sharing_unless_opened_together():
    # Invented: three people with different family names at one address. Opened years apart:
    # a blended household. Opened within days: the shape of a mail-drop address.
    apart = ring_people(created=["2012-05-01", "2016-09-12", "2023-06-01"])
    together = ring_people(created=["2023-06-01", "2023-06-09", "2023-06-20"])
    home = [address(i) for i in range(3)]
    assert only(run(*build(apart, RING_IDS + home)), "ring_pattern").empty
    assert len(only(run(*build(together, RING_IDS + home)), "ring_pattern")) == 3
    always = {"ring_pattern": {"parameters": {"opened_together_days": 0}}}
    assert only(run(*build(together, RING_IDS + home), rules=always), "ring_pattern").empty
    never = {"ring_pattern": {"parameters": {"shared_address_explains": False}}}
    assert len(only(run(*build(apart, RING_IDS + home), rules=never), "ring_pattern")) == 3


def test_an_address_with_a_landline_explains_the_sharing_whenever_opened():
    # Invented: flatmates who moved in together share the flat's landline and a flat email.
    ids = [phone(i, "+442079460000", "fixed_line") for i in range(3)]
    ids += [email(i, "flat4@example.com") for i in range(3)] + [address(i) for i in range(3)]
    together = ring_people(created=["2023-06-01", "2023-06-02", "2023-06-03"])
    assert only(run(*build(together, ids)), "ring_pattern").empty
    off = {"ring_pattern": {"parameters": {"address_and_landline_explain": False}}}
    assert len(only(run(*build(together, ids), rules=off), "ring_pattern")) == 3


def test_an_address_shared_by_identities_opened_together_joins_them_into_one_ring():
    # Invented: two pairs of identities, each pair sharing a mobile, all four at one address
    # and opened within a week: one ring of four. The address joins but is not counted
    # towards the two shared phones or emails needed.
    rows = ring_people(4, created=["2023-03-19", "2023-03-22", "2023-03-19", "2023-03-24"])
    ids = [phone(0, "+12025550161"), phone(1, "+12025550161"), phone(2, "+12025550162"),
           phone(3, "+12025550162")] + [address(i) for i in (0, 2, 3)]
    hit = only(run(*build(rows, ids)), "ring_pattern")
    assert hit["record_id"].tolist() == ["r0", "r1", "r2", "r3"]
    assert hit["reason"].iloc[0] == (
        "This entity is one of 4 entities with 4 different family names that share 1 address and 2 phones "
        "with no family name in common."
    )
    # a building: new neighbours at one address, one couple sharing a phone, is not a ring
    building = [phone(0, "+12025550161"), phone(1, "+12025550161")] + [address(i) for i in range(4)]
    assert only(run(*build(rows, building)), "ring_pattern").empty


def test_household_links_explain_the_sharing_only_when_asked():
    people, ids, ents = build(ring_people(), RING_IDS)
    links = pd.DataFrame({"rec_a": [0, 1, 0], "rec_b": [1, 2, 2], "link_type": ["household"] * 3,
                          "prob": [0.1] * 3})
    assert len(only(run(people, ids, ents, links=links), "ring_pattern")) == 3
    on = {"ring_pattern": {"parameters": {"household_links_explain": True}}}
    assert only(run(people, ids, ents, links=links, rules=on), "ring_pattern").empty


def test_values_held_by_many_entities_do_not_build_rings():
    # Invented: eleven strangers share one phone and one email (a call-centre line and a
    # shop address, say): hubs, not a ring, with the default limit of 10 entities per value.
    rows = ring_people(11)
    ids = [phone(i, "+12025550150") for i in range(11)] + [email(i, "front@example.com") for i in range(11)]
    assert only(run(*build(rows, ids)), "ring_pattern").empty


def test_a_shared_national_id_does_not_pull_its_holder_into_the_ring():
    # Invented: ring member r0 carries the SSN of r3, a customer since 2014 who shares nothing
    # else with the ring.
    rows = ring_people() + [person("r3", "ann", "lee", "1955-08-08", "2014-02-01")]
    flags = run(*build(rows, RING_IDS + [ssn(0, "536-90-4399"), ssn(3, "536-90-4399")]))
    assert only(flags, "ring_pattern")["record_id"].tolist() == ["r0", "r1", "r2"]
    assert only(flags, "shared_national_id_likely_holder")["record_id"].tolist() == ["r3"]
    assert only(flags, "shared_national_id_conflict")["record_id"].tolist() == ["r0"]


def test_a_ring_inside_one_identity_sharing_group_takes_its_id():
    people, ids, ents = build(ring_people(4), RING_IDS + [phone(3, "+12025550109")])
    # Group columns as resolve.clusters.groups writes them; the kind does not matter.
    groups = pd.DataFrame({"entity_id": ["E0", "E1", "E2", "E3"], "group_id": ["G7"] * 4,
                           "group_kind": ["mixed"] * 4})
    hit = only(run(people, ids, ents, groups=groups), "ring_pattern")
    assert hit["record_id"].tolist() == ["r0", "r1", "r2"] and set(hit["group_id"]) == {"G7"}
    split = groups.assign(group_id=["G7", "G7", "G8", "G8"])
    assert set(only(run(people, ids, ents, groups=split), "ring_pattern")["group_id"]) == {"ring-00001"}


def test_two_rings_in_one_identity_sharing_group_keep_their_own_labels():
    # Invented: two separate three-identity rings that the cluster stage put in one group G9
    # (through a value the ring rule does not follow).
    def moved(text):
        return text.replace("010", "020").replace("pool@", "pond@")

    other = [(rec + 3, kind, moved(key), moved(value), status, reason, detail)
             for rec, kind, key, value, status, reason, detail in RING_IDS]
    people, ids, ents = build(ring_people(6), RING_IDS + other)
    groups = pd.DataFrame({"entity_id": [f"E{i}" for i in range(6)], "group_id": ["G9"] * 6})
    hit = only(run(people, ids, ents, groups=groups), "ring_pattern")
    assert len(hit) == 6 and set(hit["group_id"]) == {"ring-00001", "ring-00002"}


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
        assert hit["severity"].iloc[0] == "low"  # custodial and youth accounts exist


def test_age_from_birth_year_alone():
    row = person("r1", birth="", created="2024-06-01")
    row["birth_year"] = 2015  # invented; only the year is known
    assert len(only(run(*build([row], [])), "implausible_age")) == 1


# ---------------- bursts ----------------

def burst_case(dates, entity_ids=None, families=None):
    families = families or [f"f{i}" for i in range(len(dates))]
    rows = [person(f"r{i}", f"g{i}", families[i], created=d) for i, d in enumerate(dates)]
    return build(rows, [email(i, "shared@example.com") for i in range(len(dates))], entity_ids)


def test_three_entities_sharing_an_email_within_thirty_days_are_a_burst():
    hit = only(run(*burst_case(["2024-03-01", "2024-03-15", "2024-03-31", "2024-09-01"])),
               "burst_shared_identifier")
    assert hit["record_id"].tolist() == ["r0", "r1", "r2"]  # r3 opened months later
    assert hit["reason"].iloc[0] == (
        "Email s***@example.com is shared by 3 entities with 3 different family names, opened within "
        "30 days of one another (between 2024-03-01 and 2024-03-31)."
    )


def test_spread_out_or_same_entity_openings_are_not_a_burst():
    assert only(run(*burst_case(["2024-01-01", "2024-02-15", "2024-04-01"])), "burst_shared_identifier").empty
    same = burst_case(["2024-03-01", "2024-03-02", "2024-03-03"], ["E0", "E0", "E0"])
    assert only(run(*same), "burst_shared_identifier").empty


def test_a_family_opening_accounts_together_is_not_a_burst():
    # Invented: parents and a grown child, one family name, one family email, one week.
    family = burst_case(["2024-03-01", "2024-03-02", "2024-03-08"], families=["lee"] * 3)
    assert only(run(*family), "burst_shared_identifier").empty
    one_name = {"burst_shared_identifier": {"parameters": {"min_family_names": 1}}}
    assert len(only(run(*family, rules=one_name), "burst_shared_identifier")) == 3


# ---------------- typing slips in never-issued IDs ----------------

def test_never_issued_id_one_slip_from_the_same_persons_valid_id_is_a_typing_error():
    # Invented: 536-00-4399 has group 00, never issued (SSA randomization FAQ, CHECKS.md); it
    # is one wrong digit from 536-90-4399, which the same person gave on another record.
    for entity_ids in (["E0", "E0"], ["E0", "E1"]):  # one entity, or two with one name and birth date
        people, ids, ents = build([person("r1"), person("r2")],
                                  [ssn(0, "536-90-4399"), ssn(1, "536-00-4399", "invalid", "never_issued_group")],
                                  entity_ids)
        flags = run(people, ids, ents)
        assert only(flags, "national_id_never_issued").empty
        slip = only(flags, "national_id_invalid")
        assert slip["record_id"].tolist() == ["r2"] and set(slip["severity"]) == {"low"}
        assert slip["reason"].iloc[0] == (
            "National ID ending 4399 has a group number (middle two digits) that is never issued, but is one "
            "typing slip from the valid ID ending 4399 that the same person gave (same entity, or same family "
            "name and birth date): probably a typing error."
        )


def test_never_issued_id_near_someone_elses_id_is_still_flagged():
    # Invented: the near valid ID belongs to another person (other family name and birth date).
    people, ids, ents = build([person("r1"), person("r2", "bob", "ray", "1965-01-01")],
                              [ssn(0, "536-90-4399"), ssn(1, "536-00-4399", "invalid", "never_issued_group")])
    hit = only(run(people, ids, ents), "national_id_never_issued")
    assert hit["record_id"].tolist() == ["r2"] and set(hit["severity"]) == {"high"}
    keep = {"national_id_never_issued": {"parameters": {"typing_slips_excluded": False}}}
    same = build([person("r1"), person("r2")],
                 [ssn(0, "536-90-4399"), ssn(1, "536-00-4399", "invalid", "never_issued_group")], ["E0", "E0"])
    assert only(run(*same, rules=keep), "national_id_never_issued")["record_id"].tolist() == ["r2"]


# ---------------- entities linked to a flagged entity ----------------

def linked_case(second_family="ray", created=("2023-06-01", "2023-06-05", "2023-06-07"), kind="phone"):
    """Invented: r0 carries a never-issued SSN (area 000, SSA FAQ in CHECKS.md) and shares a
    phone (or an address) with r1; r1 shares an email with r2. Three entities sharing two
    values would also make a ring; that rule is off here to show the link rule alone."""
    rows = [person("r0", "amy", "cole", "1990-02-02", created[0]),
            person("r1", "bob", second_family, "1985-03-03", created[1]),
            person("r2", "cy", "dunn", "1979-04-04", created[2])]
    shared = phone(0, "+12025550131") if kind == "phone" else address(0)
    partner = phone(1, "+12025550131") if kind == "phone" else address(1)
    ids = [ssn(0, "000-12-3456", "invalid", "never_issued_area"), shared, partner,
           email(1, "bob@example.com"), email(2, "bob@example.com")]
    no_ring = {"ring_pattern": {"enabled": False}}
    return only(run(*build(rows, ids), rules=no_ring), "linked_to_flagged_entity")


def test_an_entity_sharing_a_phone_with_a_never_issued_id_is_flagged_one_step_out():
    hit = linked_case()
    assert hit["record_id"].tolist() == ["r1"]  # r2 is two steps away; r0 has its own flag
    assert set(hit["severity"]) == {"medium"} and set(hit["scope"]) == {"group"}
    assert hit["reason"].iloc[0] == (
        "Shares phone ending 0131 with another entity whose national ID is in a range that is never issued; "
        "no family name, shared home or same-person match explains it."
    )


def test_a_family_name_explains_the_link():
    assert linked_case(second_family="cole").empty


def test_a_shared_address_links_only_when_opened_together():
    hit = linked_case(kind="address")
    assert hit["record_id"].tolist() == ["r1"]
    assert hit["reason"].iloc[0].startswith("Shares address 12 elm st, 10001 with another entity")
    assert linked_case(kind="address", created=("2015-01-01", "2023-06-05", "2023-06-07")).empty


def test_only_partners_flagged_at_the_listed_severities_count():
    # Invented: with the never-issued rule turned down to low, its partner is not followed.
    rows = [person("r0", "amy", "cole", "1990-02-02"), person("r1", "bob", "ray", "1985-03-03")]
    ids = [ssn(0, "000-12-3456", "invalid", "never_issued_area"), phone(0, "+12025550131"),
           phone(1, "+12025550131")]
    assert only(run(*build(rows, ids)), "linked_to_flagged_entity")["record_id"].tolist() == ["r1"]
    quiet = {"national_id_never_issued": {"severity": "low"}}
    assert only(run(*build(rows, ids), rules=quiet), "linked_to_flagged_entity").empty


# ---------------- wording ----------------

def test_addresses_read_as_text_and_other_values_are_masked():
    from resolve.signals.context import describe

    kinds = pd.Series(["address", "address", "national_id", "phone", "email"])
    values = pd.Series(["12|elm st|4|10001|US", "a free-text address", "536904399", "+12025550143",
                        "jane@example.com"])
    assert describe(kinds, values).tolist() == [
        "Address 12 elm st, unit 4, 10001", "Address a free-text address", "National ID ending 4399",
        "Phone ending 0143", "Email j***@example.com"]


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


@settings(max_examples=15, deadline=None)
@given(st.lists(st.tuples(st.sampled_from([("ann", "lee"), ("mary", "jones"), ("bob", "ray"), ("cy", "dunn")]),
                          st.sampled_from(["1980-04-02", "1991-07-30", "1965-01-01"]),
                          st.sampled_from(["", "2015-03-01", "2019-01-01", "2023-06-01"]),
                          st.booleans()),
                min_size=2, max_size=6))
def test_a_conflicting_carrier_is_either_flagged_or_on_the_holders_side(rows):
    # Invented carriers of one SSN, each its own entity; some share a mobile.
    people = [person(f"r{i}", given, family, birth, created)
              for i, ((given, family), birth, created, _) in enumerate(rows)]
    ids = [ssn(i, "536-90-4399") for i in range(len(rows))]
    ids += [phone(i, "+12025550188") for i, row in enumerate(rows) if row[3]]
    case = build(people, ids)
    flags = run(*case)
    conflict = set(only(flags, "shared_national_id_conflict")["record_id"])
    holder = only(flags, "shared_national_id_likely_holder")
    assert not conflict & set(holder["record_id"])
    assert holder["reason"].str.contains("this entity (carrying it since", regex=False).sum() <= 1
    off = run(*case, rules={"shared_national_id_likely_holder": {"enabled": False}})
    assert set(only(off, "shared_national_id_conflict")["record_id"]) == conflict | set(holder["record_id"])
