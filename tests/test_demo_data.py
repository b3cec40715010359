"""Tests for the demo scenario generator (`resolve.demo`).

The demo is the ground truth for every later measurement, so these tests check it against
sources the project did not write: python-stdnum for national IDs, phonenumbers for phones,
the HMRC National Insurance rules summarised in CHECKS.md, and the settings it was asked for.
Extracts stay small (a few thousand records) to keep the suite quick.
"""

from __future__ import annotations

import csv
import datetime as dt
import os
import re
import subprocess
import sys
import unicodedata
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
import phonenumbers
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from rapidfuzz.distance import OSA
from stdnum.ca import sin as ca_sin
from stdnum.us import ssn as us_ssn

from resolve.demo import (
    EXTRACT_COLUMNS, HARD_CASES, LABELS, TRUTH_COLUMNS, VARIATION_TAGS, DemoRates,
    DemoSettingsError, generate_demo,
)
from resolve.demo import identifiers as ids
from resolve.demo.pools import build_pools
from resolve.demo.settings import RING_LABELS
from resolve.demo.tables import PLACEHOLDER_EMAILS, PLACEHOLDER_SSNS
from resolve.demo.vec import one_edit, transpose_digits
from resolve.demo.writer import write_csv

N = 4000
ROLE_NAMES = {
    "record_id", "given_name", "family_name", "full_name", "birth_date", "phone", "email",
    "national_id", "national_id_country", "street", "city", "postcode", "country",
    "created_at", "source",
}
# HMRC manual NIM39110 as summarised in CHECKS.md (confirmed there): no D F I Q U V in either
# prefix letter, no O as the second, BG GB KN NK NT TN ZZ unused, suffix A-D. python-stdnum
# 2.2 has no gb.nino module, so the rule is written out here.
NINO = re.compile(r"^[A-CEGHJ-PR-TW-Z][A-CEGHJ-NPR-TW-Z][0-9]{6}[A-D]$")
NINO_UNUSED_PREFIXES = {"BG", "GB", "KN", "NK", "NT", "TN", "ZZ"}


def _read(out: Path) -> SimpleNamespace:
    extract = pd.read_csv(out / "customers.csv", dtype=str, keep_default_na=False)
    truth = pd.read_csv(out / "truth.csv", dtype=str, keep_default_na=False)
    merged = extract.merge(truth, left_on="Cust No", right_on="record_id", validate="one_to_one")
    return SimpleNamespace(out=out, extract=extract, truth=truth, merged=merged)


@pytest.fixture(scope="module")
def demo(tmp_path_factory) -> SimpleNamespace:
    out = tmp_path_factory.mktemp("demo")
    summary = generate_demo(out, records=N, seed=7)
    data = _read(out)
    data.summary = summary
    return data


def _tags(variation: pd.Series) -> pd.Series:
    return variation.str.split(";")


def _has_tag(variation: pd.Series, prefix: str) -> np.ndarray:
    return variation.str.contains(rf"(?:^|;){prefix}", regex=True).to_numpy()


def _nino_ok(value: str) -> bool:
    return bool(NINO.match(value)) and value[:2] not in NINO_UNUSED_PREFIXES


def _id_ok(value: str, country: str) -> bool:
    compact = value.replace(" ", "").replace("-", "")
    if country == "US":
        return us_ssn.is_valid(compact)
    if country == "CA":
        return ca_sin.is_valid(compact)
    return _nino_ok(compact)


def _parse_date(text: str, country: str) -> dt.date | None:
    """Read any of the demo's date layouts (our own formats, listed in docs/demo.md)."""
    text = text.strip()
    if not text:
        return None
    for fmt in ("%Y-%m-%d", "%Y-%m-%dT%H:%M:%S", "%d %b %Y", "%d-%b-%Y", "%Y%m%d"):
        try:
            return dt.datetime.strptime(text, fmt).date()
        except ValueError:
            pass
    a, b, year = (int(p) for p in text.split("/"))
    return dt.date(year, a, b) if country == "US" else dt.date(year, b, a)


def _opened(row) -> dt.date:
    # Opening dates are month-first in the card portfolio whatever the country.
    return _parse_date(row["Opened"], "US")


def _digits(phone: str) -> str:
    return re.sub(r"\D", "", phone)


# --- files, headers and coverage -------------------------------------------------------


def test_files_headers_and_readme(demo):
    assert list(demo.extract.columns) == list(EXTRACT_COLUMNS)
    assert list(demo.truth.columns) == list(TRUTH_COLUMNS)
    # Header detection must be exercised: apart from "Country" (named so in the brief), no
    # extract header is a mapping role name, even ignoring case.
    assert {c.lower().replace(" ", "_") for c in EXTRACT_COLUMNS} & ROLE_NAMES == {"country"}
    assert not set(EXTRACT_COLUMNS) & ROLE_NAMES
    readme = (demo.out / "README.txt").read_text(encoding="utf-8")
    assert readme.count("\n") == 1 and "invented" in readme
    assert f"{N:,} records" in readme


def test_record_ids_unique_and_truth_covers_extract(demo):
    assert len(demo.extract) == len(demo.truth) == N
    assert demo.extract["Cust No"].is_unique
    assert demo.truth["record_id"].tolist() == demo.extract["Cust No"].tolist()
    assert set(demo.truth["label"]) <= set(LABELS)
    assert set(demo.truth["hard_case"]) - {""} <= set(HARD_CASES)
    tags = set(_tags(demo.truth["variation"]).explode()) - {""}
    assert tags <= set(VARIATION_TAGS)


def test_summary_matches_truth(demo):
    counts = demo.truth["label"].value_counts()
    assert demo.summary.records == N
    assert sum(demo.summary.labels.values()) == N
    assert all(demo.summary.labels[k] == counts.get(k, 0) for k in LABELS)
    assert demo.summary.persons == demo.truth["person_id"].nunique()
    assert demo.summary.rings == demo.truth.loc[demo.truth["ring_id"] != "", "ring_id"].nunique()


def test_csv_is_standard_and_quoted(demo):
    raw = (demo.out / "customers.csv").read_bytes()
    raw.decode("utf-8")  # UTF-8 throughout
    assert b"\r\n" not in raw
    with open(demo.out / "customers.csv", newline="", encoding="utf-8") as handle:
        rows = list(csv.reader(handle))
    assert len(rows) == N + 1 and {len(r) for r in rows} == {len(EXTRACT_COLUMNS)}
    with_comma = (demo.extract["Address Line 1"].str.contains(",")
                  | demo.extract["Customer Name"].str.contains(","))
    assert with_comma.sum() > 50
    assert b'",' in raw or b',"' in raw  # some fields needed quotes


def test_writer_round_trips_awkward_text(tmp_path):
    frame = pd.DataFrame({"a b": ["x,y", "", 'say "hi"', "line1\nline2", "+1", " lead"],
                          "c": ["1", "2", "3", "4", "5", "6"]}, dtype="str")
    write_csv(frame, tmp_path / "f.csv")
    back = pd.read_csv(tmp_path / "f.csv", dtype=str, keep_default_na=False)
    assert back.to_dict("list") == frame.astype(object).to_dict("list")
    # Same bytes as pandas' own minimal-quoting writer.
    frame.to_csv(tmp_path / "p.csv", index=False, lineterminator="\n")
    assert (tmp_path / "f.csv").read_bytes() == (tmp_path / "p.csv").read_bytes()


def test_embedded_newlines_survive(tmp_path):
    rates = DemoRates.from_overrides({"uk_share": 0.9, "canada_share": 0.05})
    generate_demo(tmp_path, records=2500, seed=3, rates=rates)
    data = _read(tmp_path)
    assert len(data.extract) == 2500
    assert data.extract["Address Line 1"].str.contains("\n").any()


# --- validity of identifiers ------------------------------------------------------------


def test_genuine_clean_national_ids_are_valid(demo):
    people = demo.truth[demo.truth["ring_id"] == ""]
    assert (people["clean_national_id"] != "").all()
    bad = [(v, c) for v, c in zip(people["clean_national_id"], people["clean_id_country"])
           if not _id_ok(v, c)]
    assert bad == []
    assert set(people["clean_id_country"]) == {"US", "GB", "CA"}


def test_uncorrupted_extract_ids_are_valid(demo):
    m = demo.merged
    keep = ((m["label"] == "genuine") & (m["SSN/TIN"] != "") & ~_has_tag(m["variation"], "id_")
            & ~_has_tag(m["variation"], "placeholder"))
    assert keep.sum() > 1000
    assert all(_id_ok(v, c) for v, c in zip(m.loc[keep, "SSN/TIN"], m.loc[keep, "ID Country"]))
    # The printed ID is the clean ID with the channel's separators.
    compact = m.loc[keep, "SSN/TIN"].str.replace(r"[ -]", "", regex=True)
    assert (compact == m.loc[keep, "clean_national_id"]).all()


def test_transposed_ids_differ_from_clean(demo):
    m = demo.merged
    rows = m[_has_tag(m["variation"], "id_transposed") & (m["SSN/TIN"] != "")]
    compact = rows["SSN/TIN"].str.replace(r"[ -]", "", regex=True)
    assert (compact != rows["clean_national_id"]).all()
    assert (compact.map(sorted) == rows["clean_national_id"].map(sorted)).all()


def test_genuine_first_record_phones_are_valid(demo):
    # phonenumbers is the reference library named in CHECKS.md (metadata decides validity).
    m = demo.merged
    first = m[(m["label"] == "genuine") & ~_has_tag(m["variation"], "phone")]
    checked = 0
    for col in ("Mobile", "Home Tel"):
        for phone, region in zip(first[col], first["clean_id_country"]):
            if phone:
                number = phonenumbers.parse(phone, region)
                assert phonenumbers.is_valid_number(number), (phone, region)
                checked += 1
    assert checked > 2500


def test_no_drama_range_numbers_for_genuine_people(demo):
    # CHECKS.md: Ofcom's 07700 900xxx drama range is not valid to current metadata.
    digits = demo.merged["Mobile"].map(_digits)
    assert not digits.str.contains("7700900").any()


def test_identifier_generators_against_stdnum():
    rng = np.random.default_rng(1)
    assert all(us_ssn.is_valid(v) for v in ids.ssns(rng, 2000))
    assert not any(us_ssn.is_valid(v) for v in ids.never_issued_ssns(rng, 2000))
    assert all(ca_sin.is_valid(v) for v in ids.sins(rng, 2000))
    assert all(_nino_ok(v) for v in ids.ninos(rng, 2000, build_pools()))
    # stdnum.us.ssn refuses the published specimen numbers (CHECKS.md); ours never draws them.
    assert not set(ids.ssns(rng, 200_000)) & {"078051120", "457555462", "219099999"}


# --- rates --------------------------------------------------------------------------------


def _measured(data: SimpleNamespace) -> dict[str, float]:
    t, m = data.truth, data.merged
    n = len(t)
    genuine = t[t["ring_id"] == ""]
    persons = genuine.groupby("person_id").first()
    card = m[(m["Channel"] == "card_portfolio") & (m["ring_id"] == "") & (m["label"] != "placeholder")]
    return {
        "duplicate_share": (len(genuine) - len(persons)) / n,
        "ring_share": (t["ring_id"] != "").mean(),
        "placeholder_share": (t["label"] == "placeholder").mean(),
        "household_share": (persons["household_id"] != "").mean(),
        "uk_share": (persons["clean_id_country"] == "GB").mean(),
        "canada_share": (persons["clean_id_country"] == "CA").mean(),
        "card_missing_id_share": (card["SSN/TIN"] == "").mean(),
    }


def test_rates_within_tolerance_of_defaults(demo):
    got, want = _measured(demo), DemoRates()
    assert got["duplicate_share"] == pytest.approx(want.duplicate_share, abs=0.005)
    assert got["ring_share"] == pytest.approx(want.ring_share, abs=0.002)
    assert got["placeholder_share"] == pytest.approx(want.placeholder_share, abs=0.001)
    # Hard cases add a few two-person households on top of the household share.
    assert want.household_share - 0.01 <= got["household_share"] <= want.household_share + 0.03
    assert got["uk_share"] == pytest.approx(want.uk_share, abs=0.005)
    assert got["canada_share"] == pytest.approx(want.canada_share, abs=0.005)
    assert got["card_missing_id_share"] == pytest.approx(want.card_missing_id_share, abs=0.03)


def test_rate_overrides_change_the_scenario(tmp_path):
    rates = DemoRates.from_overrides({"duplicate-share": "0.35", "ring_share": "0.03",
                                      "placeholder_share": "2%", "card_missing_id_share": 0.2,
                                      "household_share": 0.3})
    generate_demo(tmp_path, records=3000, seed=5, rates=rates)
    got = _measured(_read(tmp_path))
    assert got["duplicate_share"] == pytest.approx(0.35, abs=0.005)
    assert got["ring_share"] == pytest.approx(0.03, abs=0.003)
    assert got["placeholder_share"] == pytest.approx(0.02, abs=0.001)
    assert got["card_missing_id_share"] == pytest.approx(0.2, abs=0.04)
    assert 0.29 <= got["household_share"] <= 0.34


def test_no_hard_cases_when_switched_off(tmp_path):
    summary = generate_demo(tmp_path, records=1000, seed=2, hard_cases=False)
    truth = pd.read_csv(tmp_path / "truth.csv", dtype=str, keep_default_na=False)
    assert (truth["hard_case"] == "").all() and not any(summary.hard_cases.values())


# --- determinism --------------------------------------------------------------------------


def _bytes(out: Path) -> tuple[bytes, bytes, bytes]:
    return tuple((out / f).read_bytes() for f in ("customers.csv", "truth.csv", "README.txt"))


@pytest.fixture(scope="module")
def small_runs(tmp_path_factory) -> dict[str, Path]:
    runs = {}
    for name, seed in (("a", 11), ("b", 11), ("c", 12)):
        runs[name] = tmp_path_factory.mktemp(f"run_{name}")
        generate_demo(runs[name], records=1500, seed=seed)
    return runs


def test_same_seed_gives_identical_bytes(small_runs):
    assert _bytes(small_runs["a"]) == _bytes(small_runs["b"])


def test_different_seed_gives_different_files(small_runs):
    a, c = _bytes(small_runs["a"]), _bytes(small_runs["c"])
    assert a[0] != c[0] and a[1] != c[1]


def test_same_bytes_in_a_fresh_process(small_runs, tmp_path):
    code = ("import sys; from resolve.demo import generate_demo; "
            "generate_demo(sys.argv[1], records=1500, seed=11)")
    env = {**os.environ, "PYTHONHASHSEED": "12345"}
    subprocess.run([sys.executable, "-c", code, str(tmp_path)], check=True, env=env,
                   cwd=Path(__file__).resolve().parents[1])
    assert _bytes(tmp_path) == _bytes(small_runs["a"])


# --- scenario structure ---------------------------------------------------------------------


def test_channel_habits(demo):
    m = demo.merged
    card = m[m["Channel"] == "card_portfolio"]
    assert (card["Customer Name"] != "").all()
    assert ((card["First Name"] == "") & (card["Surname"] == "")).all()
    assert (card["Customer Name"] == card["Customer Name"].str.upper()).all()
    assert card["Customer Name"].map(str.isascii).all()
    other = m[m["Channel"] != "card_portfolio"]
    assert (other["Customer Name"] == "").all() and (other["Surname"] != "").all()
    app = m[(m["Channel"] == "app") & (m["label"] == "genuine") & (m["Mobile"] != "")]
    assert app["Mobile"].str.match(r"^\+?\d+$").all()  # E.164 or plain digits
    assert m.loc[m["Channel"] == "app", "E-mail"].str.contains(r"\+", regex=True).mean() > \
        m.loc[m["Channel"] == "branch", "E-mail"].str.contains(r"\+", regex=True).mean()


def test_every_person_has_one_first_record_opened_first(demo):
    m = demo.merged[demo.merged["ring_id"] == ""]
    first_labels = m.groupby("person_id")["label"].apply(lambda s: (s == "genuine").sum())
    assert first_labels.max() == 1
    opened = m.apply(_opened, axis=1)
    m = m.assign(opened=opened)
    first = m[m["label"] == "genuine"].set_index("person_id")["opened"]
    dups = m[m["label"] == "duplicate"]
    later = dups["person_id"].map(first)
    known = later.notna()
    assert (dups.loc[known, "opened"] > later[known]).all()


def _normal(text: str) -> str:
    folded = unicodedata.normalize("NFKD", text.upper())
    return "".join(ch for ch in folded if not unicodedata.combining(ch)).strip()


def test_households_share_an_address(demo):
    m = demo.merged
    first = m[(m["household_id"] != "") & (m["label"].isin(["genuine", "placeholder"]))
              & ~_has_tag(m["variation"], "moved") & ~_has_tag(m["variation"], "blank_address")
              & ~_has_tag(m["variation"], "maiden_name")]
    key = first["Address Line 1"].str.extract(r"(\d+) ")[0] + "|" + first["ZIP/Postcode"] + "|" + \
        first["Town"].map(_normal)
    per_household = key.groupby(first["household_id"]).nunique()
    assert len(per_household) > 50 and (per_household == 1).all()
    sizes = m.groupby("household_id")["person_id"].nunique().drop("", errors="ignore")
    assert sizes.min() >= 2 and sizes.max() <= 5


def test_identity_rings(demo):
    m = demo.merged
    rings = m[m["ring_id"] != ""]
    assert set(rings["label"]) == set(RING_LABELS)
    genuine_ids = set(m.loc[m["ring_id"] == "", "clean_national_id"])
    for _, ring in rings.groupby("ring_id"):
        assert 3 <= ring["person_id"].nunique() <= 8
        assert ring["Mobile"].map(lambda p: _digits(p)[-10:]).nunique() <= 3
        opened = ring.apply(_opened, axis=1)
        assert (max(opened) - min(opened)).days <= 21
    for label, group in rings.groupby("label"):
        valid = group["clean_national_id"].map(us_ssn.is_valid)
        if label == "never_issued":
            assert not valid.any()
        else:
            assert valid.all()
        if label == "stolen_id":
            assert set(group["clean_national_id"]) <= genuine_ids
        else:
            assert not set(group["clean_national_id"]) & genuine_ids
    second = rings[rings["label"] == "second_id"].groupby("person_id")["clean_national_id"]
    assert (second.nunique() == 2).all()


def test_placeholders(demo):
    m = demo.merged
    ph = m[m["label"] == "placeholder"]
    assert len(ph) == round(N * DemoRates().placeholder_share)
    assert (ph["ring_id"] == "").all()
    phone_rows = ph[_has_tag(ph["variation"], "placeholder_phone")]
    centre = phone_rows["Mobile"].map(lambda p: _digits(p)[-10:])
    assert centre.nunique() <= 2 and phone_rows["person_id"].nunique() >= 5
    mail = ph[_has_tag(ph["variation"], "placeholder_email")]["E-mail"].str.lower()
    assert mail.isin(PLACEHOLDER_EMAILS).all()
    nid = ph[_has_tag(ph["variation"], "placeholder_id")]["SSN/TIN"].str.replace(r"[ -]", "", regex=True)
    assert nid.isin(PLACEHOLDER_SSNS).all()


def test_hard_cases(demo):
    m = demo.merged
    assert set(m["hard_case"]) - {""} == set(HARD_CASES)
    for kind in ("twins", "father_son", "shared_mailbox_spouses"):
        group = m[m["hard_case"] == kind]
        assert (group["household_id"] != "").all()
        assert (group.groupby("household_id")["person_id"].nunique() == 2).all()
    for kind in ("twins", "same_name_same_birth"):
        group = m[(m["hard_case"] == kind) & (m["DOB"] != "")]
        births = group.apply(lambda r: _parse_date(r["DOB"], r["clean_id_country"]), axis=1)
        key = group["household_id"] if kind == "twins" else None
        if key is not None:
            assert (births.groupby(key).nunique() == 1).all()
    same = m[m["hard_case"] == "same_name_same_birth"]
    assert (same["household_id"] == "").all()
    late = m[_has_tag(m["variation"], "late_record")]
    assert len(late) and (late["hard_case"] == "late_duplicate").all()
    assert _has_tag(m["variation"], "given_initial").any()
    assert _has_tag(m["variation"], "transliteration").any()
    assert _has_tag(m["variation"], "maiden_name").any()


def test_docs_list_every_label_tag_kind_and_rate():
    doc = (Path(__file__).resolve().parents[1] / "docs" / "demo.md").read_text(encoding="utf-8")
    for word in (*LABELS, *HARD_CASES, *VARIATION_TAGS, *DemoRates.names(), *EXTRACT_COLUMNS):
        assert f"`{word}`" in doc, word


def test_library_prints_nothing(tmp_path, capsys):
    generate_demo(tmp_path, records=300, seed=1)
    captured = capsys.readouterr()
    assert captured.out == "" and captured.err == ""


# --- settings -------------------------------------------------------------------------------


def test_rate_override_errors():
    with pytest.raises(DemoSettingsError, match="Unknown demo rate"):
        DemoRates.from_overrides({"dupes": "0.1"})
    with pytest.raises(DemoSettingsError, match="between 0 and 1"):
        DemoRates.from_overrides({"ring_share": "1.5"})
    with pytest.raises(DemoSettingsError, match="number"):
        DemoRates.from_overrides({"ring_share": "lots"})
    with pytest.raises(DemoSettingsError):
        DemoRates.from_overrides({"uk_share": 0.7, "canada_share": 0.6})


def test_record_count_and_seed_errors(tmp_path):
    with pytest.raises(DemoSettingsError, match="record count"):
        generate_demo(tmp_path, records=5)
    with pytest.raises(DemoSettingsError, match="seed"):
        generate_demo(tmp_path, records=100, seed=-1)


@settings(max_examples=60, deadline=None)
@given(name=st.sampled_from(DemoRates.names()), value=st.floats(0, 0.2))
def test_rate_overrides_round_trip(name, value):
    rates = DemoRates.from_overrides({name.replace("_", "-"): repr(value)})
    assert getattr(rates, name) == value
    assert DemoRates.from_overrides(rates.as_dict()) == rates


# --- vectorised variation helpers -----------------------------------------------------------


@settings(max_examples=100, deadline=None)
@given(words=st.lists(st.text(alphabet=st.characters(categories=("Lu", "Ll")), min_size=1,
                              max_size=20), min_size=1, max_size=30), seed=st.integers(0, 10**6))
def test_one_edit_is_exactly_one_edit(words, seed):
    out = one_edit(np.array(words, dtype=object), np.random.default_rng(seed))
    for before, after in zip(words, out):
        assert after != before
        # Optimal string alignment distance: one substitution, insertion, deletion or swap.
        assert OSA.distance(before, after) == 1


@settings(max_examples=100, deadline=None)
@given(digits=st.lists(st.text(alphabet="0123456789", min_size=2, max_size=12), min_size=1,
                       max_size=30), seed=st.integers(0, 10**6))
def test_transpose_digits_swaps_one_neighbouring_pair(digits, seed):
    out = transpose_digits(np.array(digits, dtype=object), np.random.default_rng(seed))
    for before, after in zip(digits, out):
        if len(set(before)) == 1:
            assert after == before  # nothing to swap
        else:
            assert sorted(after) == sorted(before) and OSA.distance(before, after) == 1
