"""Tests for the personal-name normaliser (resolve.normalise.names)."""

from __future__ import annotations

import re

import pandas as pd
import pyarrow as pa
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from resolve.errors import InputError
from resolve.normalise import STATUSES
from resolve.normalise.name_parts import split_full_name
from resolve.normalise.names import OUTPUT_COLUMNS, given_name_table, normalise_names
from resolve.normalise.textkeys import match_key


def one(given=None, family=None, full=None) -> dict:
    """Normalise a single name and return its row as a dict."""
    s = lambda v: pd.Series([v], dtype="string")  # noqa: E731
    out = normalise_names(
        s(given) if given is not None else None,
        s(family) if family is not None else None,
        s(full) if full is not None else None,
    )
    row = out.iloc[0].to_dict()
    return {k: (None if pd.isna(v) else v) for k, v in row.items()}


def key(text: str) -> str | None:
    return match_key(pa.array([text], pa.large_string()))[0].as_py()


# --- shape and alignment ------------------------------------------------------------------


def test_columns_dtypes_and_index_are_kept():
    idx = pd.Index(["r9", "r2", "r2"])  # repeated labels are allowed
    given = pd.Series(["Bill", None, "Ann"], index=idx)
    family = pd.Series(["Smith", "Jones", None], index=idx)
    out = normalise_names(given, family)
    assert list(out.columns) == list(OUTPUT_COLUMNS)
    assert out.index.equals(idx)
    assert all(str(out[c].dtype) == "string" for c in OUTPUT_COLUMNS)
    assert out["given_key"].tolist()[0] == "bill"
    assert out["family_key"].tolist()[1:] == ["jones", pd.NA]


def test_needs_one_column_and_one_index():
    with pytest.raises(InputError):
        normalise_names(None, None, None)
    with pytest.raises(InputError):
        normalise_names(pd.Series(["a"], index=[1]), pd.Series(["b"], index=[2]))


def test_empty_input():
    out = normalise_names(pd.Series([], dtype="string"), pd.Series([], dtype="string"))
    assert len(out) == 0 and list(out.columns) == list(OUTPUT_COLUMNS)


def test_missing_everything_is_missing():
    row = one(given=pd.NA, family="   ")
    assert row["status"] == "missing" and row["reason"] == "no_name"
    assert row["given_key"] is None and row["family_key"] is None


# --- display forms ---------------------------------------------------------------------


def test_display_title_cases_only_one_case_input():
    assert one(given="JOHN PAUL", family="o'neil")["given"] == "John"
    assert one(given="JOHN PAUL", family="o'neil")["middle"] == "Paul"
    assert one(given="JOHN", family="o'neil")["family"] == "O'Neil"
    assert one(given="Ann", family="McDonald")["family"] == "McDonald"  # mixed case kept
    assert one(given="  Mary   Ann ", family="Lee")["value"] == "Mary Ann Lee"


# --- keys: accent folding (Unicode Standard Annex #15, NFKD) -------------------------------


@pytest.mark.parametrize(
    "raw, expected",
    [
        # UAX #15: NFKD splits a precomposed letter into base + combining mark (é = e + U+0301).
        ("José", "jose"),
        ("Müller", "muller"),
        ("Ñúñez", "nunez"),
        ("Çelik", "celik"),
        # UAX #15: compatibility decomposition turns the ligature U+FB01 into "fi".
        ("ﬁnn", "finn"),
        # Letters NFKD leaves whole, mapped by our table (common practice).
        ("Straße", "strasse"),
        ("Øster", "oster"),
        ("Łukasz", "lukasz"),
        ("Æsa", "aesa"),
        ("Đorđe", "dorde"),
        # Punctuation inside a name joins it; other punctuation separates words.
        ("O'Neil", "oneil"),
        ("D’Angelo", "dangelo"),
        ("Smith-Jones", "smithjones"),
        ("St. John", "st john"),
        ("  van  der   Berg ", "van der berg"),
    ],
)
def test_match_key(raw, expected):
    assert key(raw) == expected


def test_other_scripts_keep_their_marks():
    # Removing the voicing mark would turn "ga" into "ka"; only Latin, Greek and Cyrillic
    # letters lose their accents.
    assert key("ガ") == "ガ"
    assert key("Ёлка") == "елка"


def test_family_core_and_first_word():
    row = one(given="Anna", family="van der Berg")
    assert (row["family_key"], row["family_core"], row["family_first"]) == (
        "van der berg", "berg", "berg")
    assert one(given="Rui", family="da Silva")["family_core"] == "silva"
    assert one(given="Ali", family="al-Hassan")["family_core"] == "hassan"
    assert one(given="Ann", family="O'Neil")["family_core"] == "oneil"
    # A particle alone is a whole family name (Le is a common Vietnamese surname).
    assert one(given="Van", family="Le")["family_core"] == "le"
    spanish = one(given="María", family="García López")
    assert (spanish["family_key"], spanish["family_first"]) == ("garcia lopez", "garcia")
    assert one(given="Ana", family="García-López")["family_first"] == "garcia"


# --- titles and suffixes ---------------------------------------------------------------


def test_titles_removed_and_generation_kept():
    father = one(given="Mr. John", family="Smith Sr.")
    son = one(given="John", family="Smith, Jr")
    assert (father["given_key"], father["family_key"]) == ("john", "smith")
    assert (son["given_key"], son["family_key"]) == ("john", "smith")
    assert (father["suffix"], son["suffix"]) == ("sr", "jr")
    assert one(given="Henry", family="Ford III")["suffix"] == "iii"
    assert one(given="Henry", family="Ford 2nd")["suffix"] == "ii"
    doctor = one(given="Dr Jane", family="Doe-Ray, PhD")
    assert (doctor["given_key"], doctor["family_key"], doctor["suffix"]) == (
        "jane", "doeray", None)
    assert one(given="Mr", family="Smith")["given"] is None


# --- nickname roots (common practice) ----------------------------------------------------


@pytest.mark.parametrize(
    "names, root",
    [
        (["Bill", "Billy", "Will", "William"], "william"),
        (["Liz", "Beth", "Betty", "Elizabeth"], "elizabeth"),
        (["Bob", "Rob", "Robert"], "robert"),
        (["Jim", "Jimmy", "James"], "james"),
        (["Kate", "Katie", "Catherine", "Kathryn", "Katherine"], "katherine"),
        (["Jon", "Jonathan"], "jonathan"),
        (["Mike", "Michael", "Miguel"], "michael"),
        (["Mohammed", "Muhammad", "Mohamed", "Mohamad"], "muhammad"),
        (["Aleksandr", "Alexander", "Alejandro", "Sasha"], "alexander"),
        (["Yusuf", "José", "Giuseppe", "Joseph"], "joseph"),
        (["Sergey", "Sergei"], "sergei"),
    ],
)
def test_given_name_roots(names, root):
    out = normalise_names(pd.Series(names), pd.Series(["Lee"] * len(names)))
    assert set(out["given_root"]) == {root}


def test_unknown_given_name_is_its_own_root():
    row = one(given="Zebulon", family="Pike")
    assert row["given_root"] == "zebulon" and row["given_initial"] == "z"


def test_given_name_table_is_consistent():
    table = given_name_table()
    assert list(table.columns) == ["variant", "root", "kind"]
    assert len(table) >= 300
    assert table["variant"].is_unique
    # No chains: a root is never itself a variant of another root.
    assert not set(table["root"]) & set(table["variant"])
    assert set(table["kind"]) <= {"nickname", "spelling", "translation", "transliteration"}
    for column in ("variant", "root"):
        values = table[column].tolist()
        assert all(re.fullmatch("[a-z]+", v) for v in values)
        keys = match_key(pa.array(values, pa.large_string())).to_pylist()
        assert keys == values  # rows are written in key form


# --- phonetic codes (common practice: these spellings should sound alike) -------------------


@pytest.mark.parametrize(
    "a, b",
    [("Smith", "Smyth"), ("Meyer", "Meier"), ("Katherine", "Catherine"), ("Jon", "John"),
     ("Stephen", "Steven"), ("Geoff", "Jeff"), ("Mohammed", "Muhammad")],
)
def test_phonetic_collisions(a, b):
    out = normalise_names(pd.Series([a, b]), pd.Series([a, b]))
    assert out["given_phonetic"].iloc[0] == out["given_phonetic"].iloc[1]
    assert out["family_phonetic"].iloc[0] == out["family_phonetic"].iloc[1]


def test_phonetic_codes_separate_different_names():
    out = normalise_names(pd.Series(["Smith", "Jones"]), pd.Series(["Smith", "Jones"]))
    assert out["family_phonetic"].iloc[0] != out["family_phonetic"].iloc[1]


# --- status and reason -----------------------------------------------------------------


@pytest.mark.parametrize(
    "given_, family_, status, reason",
    [
        ("Ann", "Lee", "valid", None),
        ("J", "Smith", "valid", None),  # an initial is a usable given name
        ("Madonna", None, "valid", None),  # one name is still a name
        ("FNU", "Kumar", "placeholder", "placeholder_name"),  # US: first name unknown
        ("Maria", "LNU", "placeholder", "placeholder_name"),
        ("Test", "Customer", "placeholder", "placeholder_name"),
        ("Unknown", "Unknown", "placeholder", "placeholder_name"),
        ("N/A", "Lee", "placeholder", "placeholder_name"),
        ("xxx", "Lee", "placeholder", "placeholder_name"),
        ("?", "Lee", "placeholder", "placeholder_name"),
        ("John", "Doe", "placeholder", "placeholder_name"),
        ("Ann", "Lee2", "invalid", "digits_in_name"),
        ("Ann", "L", "invalid", "single_letter"),
        ("A", None, "invalid", "single_letter"),
        ("Mrs", None, "missing", "no_name"),
    ],
)
def test_status_and_reason(given_, family_, status, reason):
    row = one(given=given_ if given_ is not None else pd.NA,
              family=family_ if family_ is not None else pd.NA)
    assert (row["status"], row["reason"]) == (status, reason)


def test_placeholder_parts_have_no_keys():
    row = one(given="FNU", family="Kumar")
    assert row["given_key"] is None and row["given_root"] is None
    assert row["family_key"] == "kumar"  # the real part still compares
    assert one(given="John", family="Doe")["family_key"] is None


def test_korean_surname_na_is_not_na():
    # "Na" is a real family name; only "N/A" written with a separator is a placeholder.
    assert one(given="Hoon", family="Na")["status"] == "valid"


# --- full names ------------------------------------------------------------------------


@pytest.mark.parametrize(
    "full, given_, middle, family_",
    [
        ("Smith, John Paul", "John", "Paul", "Smith"),
        ("John Paul Smith", "John", "Paul", "Smith"),
        ("Maria de la Cruz", "Maria", None, "de la Cruz"),
        ("Ludwig van Beethoven", "Ludwig", None, "van Beethoven"),
        ("J. Smith", "J", None, "Smith"),
        ("J Smith", "J", None, "Smith"),
        ("Smith J", "J", None, "Smith"),
        ("DUPONT Jean", "Jean", None, "Dupont"),
        ("LI Wei", "Wei", None, "Li"),
        ("JJ Abrams", "JJ", None, "Abrams"),
        ("Mr John Smith Jr.", "John", None, "Smith"),
        ("Juan Garcia y Lopez", "Juan", None, "Garcia y Lopez"),
        ("Madonna", None, None, "Madonna"),
    ],
)
def test_full_name_split(full, given_, middle, family_):
    row = one(full=full)
    assert (row["given"], row["middle"], row["family"]) == (given_, middle, family_)


def test_full_name_suffix_and_precedence():
    assert one(full="Mr John Smith Jr.")["suffix"] == "jr"
    # The full name is used only when given and family are both blank.
    assert one(given="Ann", family="Lee", full="Zed Zulu")["family_key"] == "lee"
    assert one(given="", family=" ", full="Zed Zulu")["family_key"] == "zulu"


def test_split_full_name_function():
    assert split_full_name("Smith, Jr.") == (None, "Smith", "jr")
    assert split_full_name(None) == (None, None, None)
    assert split_full_name("Dr. Jane Mary Doe-Ray III") == ("Jane Mary", "Doe-Ray", "iii")


# --- properties ------------------------------------------------------------------------

names = st.one_of(st.none(), st.text(max_size=30))
name_lists = st.lists(st.tuples(names, names, names), min_size=1, max_size=8)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(name_lists)
def test_never_raises_and_stays_aligned(rows):
    given_, family_, full = (pd.Series(list(col), dtype="string",
                                       index=[f"x{i}" for i in range(len(rows))])
                             for col in zip(*rows))
    out = normalise_names(given_, family_, full)
    assert out.index.equals(given_.index)
    assert set(out["status"]) <= set(STATUSES)
    assert out.loc[out["status"] == "valid", "reason"].isna().all()
    assert out.loc[out["status"] != "valid", "reason"].notna().all()


@settings(max_examples=150, deadline=None)
@given(st.lists(st.tuples(names, names), min_size=1, max_size=8))
def test_keys_are_idempotent(rows):
    given_, family_ = (pd.Series(list(col), dtype="string") for col in zip(*rows))
    first = normalise_names(given_, family_)
    again = normalise_names(first["given_key"], first["family_key"])
    for col in ("given_key", "family_key"):
        had = first[col].notna()
        assert again.loc[had, col].fillna("<NA>").tolist() == first.loc[had, col].tolist()


@settings(max_examples=100, deadline=None)
@given(st.lists(st.text(max_size=20), min_size=1, max_size=8))
def test_match_key_is_idempotent(values):
    once = match_key(pa.array(values, pa.large_string()))
    assert match_key(once).to_pylist() == once.to_pylist()


def test_deterministic():
    given_ = pd.Series(["Bill", "José", None, "FNU", "J."] * 3)
    family_ = pd.Series(["Smith Jr", "García", "Lee", "Kumar", "O'Neil"] * 3)
    pd.testing.assert_frame_equal(
        normalise_names(given_, family_), normalise_names(given_, family_)
    )
