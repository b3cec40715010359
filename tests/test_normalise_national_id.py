"""Tests for resolve.normalise.national_id: published check values, placeholders, canonical
keys, type detection, agreement of the vectorised checks with python-stdnum, and invariants."""

from __future__ import annotations

import tomllib
from importlib import resources

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from stdnum import luhn
from stdnum.ca import sin as stdnum_sin
from stdnum.us import itin as stdnum_itin
from stdnum.us import ssn as stdnum_ssn

from resolve.errors import InputError
from resolve.normalise import STATUSES
from resolve.normalise.national_id import (
    ID_TYPES,
    REASONS,
    misused_ids,
    national_id_keys,
    normalise_national_ids,
)


def one(raw, country="US", id_type=None) -> dict:
    """Normalise one value and return its row as a dict (NA as None)."""
    row = normalise_national_ids(pd.Series([raw], dtype="string"), country, id_type).iloc[0]
    return {k: (None if pd.isna(v) else v) for k, v in row.items()}


def statuses(values, country="US", id_type=None) -> list[tuple]:
    out = normalise_national_ids(pd.Series(values, dtype="string"), country, id_type)
    return [(s, None if pd.isna(r) else r) for s, r in zip(out["status"], out["reason"])]


# --- US SSN: SSA randomization FAQ (June 25 2011), via /work/shared/CHECKS.md (confirmed) ---

@pytest.mark.parametrize("raw, reason", [
    ("000-12-3456", "never_issued_area"),    # SSA FAQ: area 000 never assigned
    ("666-12-3456", "never_issued_area"),    # SSA FAQ: area 666 never assigned
    ("123-00-4567", "never_issued_group"),   # SSA FAQ: group 00 never assigned
    ("123-45-0000", "never_issued_serial"),  # SSA FAQ: serial 0000 never assigned
])
def test_ssa_never_assigned_parts_are_rejected(raw, reason):
    assert one(raw)["status"] == "invalid"
    assert one(raw)["reason"] == reason


def test_ssa_area_900_is_rejected_as_ssn_and_as_itin():
    # SSA FAQ (CHECKS.md): areas 900-999 are never assigned as SSNs. In a US record a 9xx
    # number is read as an ITIN (our rule); 900-12-3456 fails that too (group 12).
    assert one("900-12-3456")["status"] == "invalid"
    assert one("900-12-3456")["id_type"] == "us_itin"
    assert one("900-12-3456", id_type="us_ssn")["reason"] == "never_issued_area"


def test_ssa_area_800_is_accepted():
    # SSA FAQ (CHECKS.md): areas 734-749 and 773-899 are open since randomization in 2011.
    assert one("800-12-3456") == {"value": "800123456", "status": "valid", "reason": None,
                                  "id_type": "us_ssn", "country": "US"}


@pytest.mark.parametrize("raw", ["078-05-1120", "219-09-9999", "078051120", "219 09 9999"])
def test_known_misused_ssns(raw):
    # CHECKS.md (confirmed via copies): 078-05-1120 wallet specimen, 219-09-9999 pamphlet sample.
    assert (one(raw)["status"], one(raw)["reason"]) == ("invalid", "known_misused")


def test_stdnum_ssn_doctests():
    # python-stdnum stdnum.us.ssn doctests (CHECKS.md, confirmed): 536-90-4399 -> 536904399;
    # 666-00-0000 and 078-05-1120 are invalid.
    assert one("536-90-4399")["value"] == "536904399"
    assert one("536-90-4399")["status"] == "valid"
    assert one("666-00-0000", id_type="us_ssn")["status"] == "invalid"
    assert one("078-05-1120")["status"] == "invalid"


def test_stdnum_itin_doctests():
    # python-stdnum stdnum.us.itin doctests (CHECKS.md, confirmed).
    assert one("912-90-3456")["status"] == "valid"
    assert one("912-90-3456")["id_type"] == "us_itin"
    assert one("912-93-4567")["status"] == "invalid"
    assert one("912-93-4567")["reason"] == "never_issued_group"
    # stdnum.us.itin doctest: 123-45-6789 has the wrong start digit for an ITIN.
    assert one("123-45-6780", id_type="us_itin")["reason"] == "bad_prefix"


# --- UK NINO: HMRC manual NIM39110, via CHECKS.md (confirmed) --------------------------------

@pytest.mark.parametrize("raw, reason", [
    ("QQ123456A", "bad_prefix"),  # NIM39110: Q never used as a prefix letter
    ("GB123456A", "bad_prefix"),  # NIM39110: prefix GB not used
    ("AO123456A", "bad_prefix"),  # NIM39110: O never the second letter
    ("AB123456E", "bad_suffix"),  # NIM39110: suffix is A, B, C or D
])
def test_hmrc_nino_rejections(raw, reason):
    assert (one(raw, "GB")["status"], one(raw, "GB")["reason"]) == ("invalid", reason)


def test_nino_written_differently_gives_one_value():
    # Shape from NIM39110 (two letters, six digits, suffix A-D); the number itself is invented.
    out = normalise_national_ids(pd.Series(["JK 12 34 56 D", "jk123456d", "JK-12-34-56-D"]), "GB")
    assert set(out["value"]) == {"JK123456D"}
    assert set(out["status"]) == {"valid"}


def test_nino_missing_suffix_is_reported():
    assert one("JK123456", "GB")["reason"] == "missing_suffix"


def nino_reference(number: str) -> bool:
    """Straight reading of the NIM39110 rules in CHECKS.md, one value at a time."""
    if len(number) != 9 or not (number[:2].isalpha() and number[2:8].isdigit()):
        return False
    first, second, suffix = number[0], number[1], number[8]
    return (first not in "DFIQUV" and second not in "DFIQUVO" and suffix in "ABCD"
            and number[:2] not in {"BG", "GB", "KN", "NK", "NT", "TN", "ZZ"})


def test_vectorised_nino_agrees_with_reference_rules():
    rng = np.random.default_rng(11)
    letters = np.array(list("ABCDEFGHIJKLMNOPQRSTUVWXYZ"))
    n = 4000
    numbers = ["".join(rng.choice(letters, 2)) + "".join(map(str, rng.integers(0, 10, 6)))
               + rng.choice(letters) for _ in range(n)]
    numbers = [x for x in numbers if x[2:8] != "000000"]  # six equal digits are placeholders
    out = normalise_national_ids(pd.Series(numbers), "GB")
    assert list(out["status"] == "valid") == [nino_reference(x) for x in numbers]


# --- Canadian SIN: python-stdnum stdnum.ca.sin and Service Canada, via CHECKS.md ----------

def test_sin_check_values():
    assert one("123-456-782", "CA")["status"] == "valid"            # stdnum doctest
    assert one("823456785", "CA")["status"] == "invalid"            # stdnum doctest: component
    assert one("823456785", "CA")["reason"] == "bad_prefix"
    # CHECKS.md: 046 454 286 passes Luhn but python-stdnum rejects it (first digit 0).
    assert luhn.is_valid("046454286")
    assert one("046 454 286", "CA")["status"] == "invalid"
    assert one("046 454 286", "CA")["reason"] == "bad_prefix"


def test_sin_bad_checksum():
    # stdnum doctest: 999-999-999 has a bad check digit. It is also one digit repeated, which
    # our placeholder rule reports first, so the checksum is shown on an explicit check.
    assert one("999-999-999", "CA")["status"] == "placeholder"
    assert not stdnum_sin.is_valid("999-999-999")
    assert one("123-456-783", "CA")["reason"] == "bad_checksum"


def test_sin_first_digit_9_is_valid():
    # Service Canada (CHECKS.md, confirmed): first digit 9 = temporary resident; still valid.
    number = "92345678" + luhn.calc_check_digit("92345678")
    assert one(number, "CA")["status"] == "valid"


# --- Other countries: python-stdnum doctests, via CHECKS.md (confirmed) -----------------------

def test_bsn_and_dni_check_values():
    assert one("1112.22.333", "NL")["value"] == "111222333"       # stdnum.nl.bsn doctest
    assert one("1112.22.333", "NL")["status"] == "valid"
    assert one("1112.52.333", "NL")["reason"] == "bad_checksum"     # stdnum.nl.bsn doctest
    assert one("54362315-K", "ES")["value"] == "54362315K"         # stdnum.es.dni doctest
    assert one("54362315-K", "ES")["status"] == "valid"
    assert one("54362315Z", "ES")["reason"] == "bad_checksum"       # stdnum.es.dni doctest


@pytest.mark.parametrize("raw, country, id_type, value", [
    ("x-2482300w", "ES", "es_nie", "X2482300W"),            # stdnum.es.nie doctest
    # stdnum.it.codicefiscale doctest
    ("RCCMNL83S18D969H", "IT", "it_codicefiscale", "RCCMNL83S18D969H"),
    ("2 95 10 99 126 111 93", "FR", "fr_nir", "295109912611193"),  # stdnum.fr.nir doctest
    ("36 574 261 809", "DE", "de_idnr", "36574261809"),      # stdnum.de.idnr doctest
    ("880320-0016", "SE", "se_personnummer", "198803200016"),  # stdnum.se.personnummer doctest
    ("211062-5629", "DK", "dk_cpr", "2110625629"),           # stdnum.dk.cpr doctest
    ("151086 95088", "NO", "no_fodselsnummer", "15108695088"),  # stdnum.no.fodselsnummer doctest
    ("234123412346", "IN", "in_aadhaar", "234123412346"),    # stdnum.in_.aadhaar doctest
])
def test_stdnum_types_accept_their_doctest_numbers(raw, country, id_type, value):
    assert one(raw, country) == {"value": value, "status": "valid", "reason": None,
                                 "id_type": id_type, "country": country}


@pytest.mark.parametrize("raw, country, reason", [
    ("295109912611199", "FR", "bad_checksum"),  # stdnum.fr.nir doctest
    ("36574261890", "DE", "bad_checksum"),      # stdnum.de.idnr doctest
    ("880320-0018", "SE", "bad_checksum"),      # stdnum.se.personnummer doctest
    ("511062-5629", "DK", "bad_component"),     # stdnum.dk.cpr doctest (invalid date)
    ("15108695077", "NO", "bad_checksum"),      # stdnum.no.fodselsnummer doctest
    ("234123412347", "IN", "bad_checksum"),     # stdnum.in_.aadhaar doctest
    ("1112223334", "NL", "wrong_length"),       # stdnum.nl.bsn doctest
])
def test_stdnum_exceptions_map_to_our_reasons(raw, country, reason):
    assert (one(raw, country)["status"], one(raw, country)["reason"]) == ("invalid", reason)


def test_swedish_10_and_12_digit_forms_share_one_value():
    # stdnum.se.personnummer doctest number; '+' marks a holder aged 100 or more (stdnum).
    out = normalise_national_ids(pd.Series(["880320-0016", "8803200016", "19880320-0016",
                                            "880320+0016"]), "SE")
    assert list(out["value"]) == ["198803200016"] * 3 + ["188803200016"]


# --- Placeholders (common practice) --------------------------------------------------------

@pytest.mark.parametrize("raw", ["000000000", "111111111", "999999999", "123456789",
                                 "987654321", "012345678", "000-00-0000", "123-45-6789",
                                 "999-99-9999", "12345678"])
def test_placeholder_numbers(raw):
    assert statuses([raw]) == [("placeholder", "placeholder_value")]


def test_placeholders_in_other_types():
    assert statuses(["AB000000C"], "GB") == [("placeholder", "placeholder_value")]
    assert statuses(["00000000T"], "ES") == [("placeholder", "placeholder_value")]
    assert statuses(["111-111-111"], "CA") == [("placeholder", "placeholder_value")]


# --- Canonical value and key ----------------------------------------------------------------

def test_one_id_written_differently_gives_one_key():
    written = ["536-90-4399", "536 90 4399", " 536904399 ", "536.90.4399", "536–90–4399",
               "５３６-90-4399", "\t536/90/4399\n", "5369-04399"]
    out = normalise_national_ids(pd.Series(written))
    assert set(national_id_keys(out)) == {"us_ssn:536904399"}
    assert set(out["status"]) == {"valid"}


def test_keys_are_na_when_value_or_type_missing():
    out = normalise_national_ids(pd.Series(["536904399", None, "n/a"], dtype="string"))
    keys = national_id_keys(out)
    assert keys.iloc[0] == "us_ssn:536904399"
    assert keys.iloc[1:].isna().all()


def test_missing_blank_and_text_without_digits():
    # A value made of separators only ("---") is blank once the separators are removed.
    assert statuses([None, "", "   ", "---", "N/A", "unknown"]) == [
        ("missing", None), ("missing", None), ("missing", None), ("missing", None),
        ("missing", "no_digits"), ("missing", "no_digits")]


def test_masked_numbers_have_no_value():
    out = normalise_national_ids(pd.Series(["***-**-1234", "XXX-XX-1234", "xxx-xx-xxxx"]))
    assert set(out["reason"]) == {"masked"}
    assert out["value"].isna().all()


def test_bad_format_and_wrong_length():
    assert one("53690-4399-1")["reason"] == "wrong_length"
    assert one("53690439")["reason"] == "wrong_length"
    assert one("536-90-439X")["reason"] == "bad_format"
    assert one("536904399 (old)")["reason"] == "bad_format"
    assert one("536904399 (old)")["value"] is None


# --- Type detection -------------------------------------------------------------------------

def test_country_series_with_missing_entries_uses_default():
    out = normalise_national_ids(
        pd.Series(["536-90-4399", "123-456-782", "JK123456D", "536-90-4399"]),
        pd.Series(["us", "CA", "UK", None], dtype="string"))
    assert list(out["id_type"]) == ["us_ssn", "ca_sin", "gb_nino", "us_ssn"]
    assert list(out["country"]) == ["US", "CA", "GB", "US"]
    assert set(out["status"]) == {"valid"}


def test_nino_shape_in_a_us_record_is_checked_as_nino():
    assert one("JK 12 34 56 D", "US") == {"value": "JK123456D", "status": "valid",
                                          "reason": None, "id_type": "gb_nino", "country": "GB"}


def test_digits_are_never_moved_to_another_country():
    # 123-456-782 is a valid SIN (stdnum doctest) but in a US record it is read as an SSN.
    assert one("123-456-782", "US")["id_type"] == "us_ssn"


def test_explicit_type_overrides_detection():
    out = normalise_national_ids(pd.Series(["536904399", "912903456", "536904399"]), "US",
                                 pd.Series(["ssn", None, "no_such_type"], dtype="string"))
    assert list(out["id_type"].fillna("-")) == ["us_ssn", "us_itin", "-"]
    assert out["reason"].iloc[2] == "unknown_type"


def test_unsupported_country_is_unknown_type_but_keeps_value():
    assert one("536-90-4399", "ZZ") == {"value": "536904399", "status": "invalid",
                                        "reason": "unknown_type", "id_type": None, "country": "ZZ"}


def test_misaligned_country_column_raises_input_error():
    with pytest.raises(InputError):
        normalise_national_ids(pd.Series(["536904399"] * 3), pd.Series(["US"]))


# --- Vectorised checks against python-stdnum ------------------------------------------------

EDGE_AREAS = [0, 1, 78, 219, 457, 665, 666, 667, 733, 734, 772, 773, 899, 900, 912, 999]
EDGE_GROUPS = [0, 1, 5, 9, 55, 69, 70, 88, 89, 90, 92, 93, 94, 99]
EDGE_SERIALS = [0, 1, 1120, 5462, 9999]


def random_nine_digit_numbers(rng, n: int) -> list[str]:
    """Random SSN-shaped numbers, half of each part drawn from the edge values above."""
    def part(edges, high, size):
        edge = rng.random(size) < 0.5
        return np.where(edge, rng.choice(edges, size), rng.integers(0, high, size))
    area, group = part(EDGE_AREAS, 1000, n), part(EDGE_GROUPS, 100, n)
    serial = part(EDGE_SERIALS, 10000, n)
    plain = [f"{a:03d}{g:02d}{s:04d}" for a, g, s in zip(area, group, serial)]
    # stdnum accepts plain digits and dashes at 3-2-4; check both spellings.
    return [p if i % 2 else f"{p[:3]}-{p[3:5]}-{p[5:]}" for i, p in enumerate(plain)]


def test_us_fast_path_agrees_with_stdnum():
    numbers = random_nine_digit_numbers(np.random.default_rng(3), 20000)
    out = normalise_national_ids(pd.Series(numbers), "US")
    judged = out["status"] != "placeholder"  # placeholders are our own rule on top of stdnum
    assert judged.mean() > 0.99
    for number, row in zip(np.array(numbers)[judged], out[judged].itertuples()):
        module = stdnum_itin if row.id_type == "us_itin" else stdnum_ssn
        assert (row.status == "valid") == module.is_valid(number), number
        assert row.value == module.compact(number)
    assert (out["status"] == "valid").sum() > 3000  # the sample holds many valid numbers too


def test_ssn_fast_path_agrees_with_stdnum_when_type_is_explicit():
    numbers = random_nine_digit_numbers(np.random.default_rng(4), 5000)
    out = normalise_national_ids(pd.Series(numbers), "US", "us_ssn")
    judged = (out["status"] != "placeholder").to_numpy()
    ours = (out["status"] == "valid").to_numpy()[judged]
    theirs = np.array([stdnum_ssn.is_valid(x) for x in np.array(numbers)[judged]])
    assert (ours == theirs).all()


def test_sin_fast_path_agrees_with_stdnum():
    rng = np.random.default_rng(5)
    stems = ["".join(map(str, rng.integers(0, 10, 8))) for _ in range(6000)]
    numbers = [s + (luhn.calc_check_digit(s) if i % 2 else str(rng.integers(0, 10)))
               for i, s in enumerate(stems)]
    out = normalise_national_ids(pd.Series(numbers), "CA")
    judged = (out["status"] != "placeholder").to_numpy()
    ours = (out["status"] == "valid").to_numpy()[judged]
    theirs = np.array([stdnum_sin.is_valid(x) for x in np.array(numbers)[judged]])
    assert (ours == theirs).all()
    assert ours.sum() > 2000


# --- Data file and invariants ---------------------------------------------------------------

def test_misused_file_entries_have_sources_and_known_types():
    table = tomllib.loads(resources.files("resolve").joinpath("data/misused_ids.toml").read_text())
    for id_type, entries in table.items():
        assert id_type in ID_TYPES
        for entry in entries:
            assert entry["number"] and entry["why"] and entry["source"]
    # python-stdnum's own list of misused SSNs is covered by ours.
    ours = {f"{x[:3]}-{x[3:5]}-{x[5:]}" for x in misused_ids()["us_ssn"]}
    assert set(stdnum_ssn._ssn_blacklist) <= ours


def test_output_contract():
    raw = pd.Series(["536-90-4399", None, "000-00-0000"], index=[10, 20, 30], dtype="string")
    out = normalise_national_ids(raw)
    assert list(out.columns) == ["value", "status", "reason", "id_type", "country"]
    assert list(out.index) == [10, 20, 30]
    assert set(out["status"]) <= set(STATUSES)
    assert set(out["reason"].dropna()) <= set(REASONS)
    assert all(str(out[c].dtype) == "string" for c in out.columns)


ID_TEXT = st.text(alphabet="0123456789-  .ABCDJKXZabz*+/", max_size=16)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.one_of(ID_TEXT, st.text(max_size=20)), max_size=8),
       st.sampled_from(["US", "GB", "CA", "ES", "SE", "IT", "ZZ"]))
def test_never_raises_and_is_deterministic(values, country):
    raw = pd.Series(values, dtype="string")
    first = normalise_national_ids(raw, country)
    assert len(first) == len(raw)
    pd.testing.assert_frame_equal(first, normalise_national_ids(raw.copy(), country))


@settings(max_examples=60, deadline=None)
@given(ID_TEXT, st.sampled_from(["US", "GB", "CA", "ES", "SE", "NL", "IN"]))
def test_normalising_a_canonical_value_returns_it_unchanged(raw, country):
    row = one(raw, country)
    if row["value"] is None or row["id_type"] is None:
        return
    again = one(row["value"], row["country"], row["id_type"])
    assert again == row
