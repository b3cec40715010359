"""The fast paths give the same answers as the plain code they replace.

- `name_split.split_full_names` (array-wise) against `name_parts.split_full_name` (Python);
- the quick CSV reader against the full reader (decode, re-encode, one block);
- the ingest column helpers against the pandas string methods they replace;
- `normalise_records` on one thread and on several, and its identifier table against the
  pandas assembly it replaced (concat, ``astype("category")``, masked keys).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from resolve.ingest import columns, read_inputs, readers
from resolve.normalise.name_parts import split_full_name
from resolve.normalise.name_split import PLAIN_NAME, split_full_names
from resolve.normalise.records import NormaliseSettings, normalise_records

# --- full-name split ----------------------------------------------------------------------

HAND_WRITTEN = [
    "Mr John Smith Jr", "DUPONT Jean", "Smith J", "Maria de la Cruz", "Juan Garcia y Lopez",
    "LI Wei", "J R R Tolkien", "  ", "Mr", "Mr.", "Dr. Jane  Doe, PhD", "O'NEIL Sean",
    "SMITH-JONES Anna Marie", "NG Kim", "BRT Smith", "van der Berg", "Jan van der Berg",
    "y Lopez", "Garcia y", "Ana Maria y", "A y B C", "x", "Smith,", ", John",
    "Smith, John, Paul", "Smith , John Jr", "John Smith III, Esq.", "Mrs. Smith", "MR SMITH",
    "Dr Who", "JOHN SMITH", "John SMITH", "JOHN Smith", "J.R. Ewing", "DE LA CRUZ Maria",
    "Saint John", "John St. James", "Ph.D", "John Smith Ph.D", "John Smith Ph. D",
    "Juan Y Lopez", "Ana De", "Juan DE. LA CRUZ", "ATKINSON, LINDSEY L", "CARIDAD A GIL",
    "ALEMAN FRANCO, ALTA GRACIA C", "Smith, Jr.", "Dr. Jane Mary Doe-Ray III",
    "John Smith 2nd", "MARY-JO O'BRIEN", "ABC DEF ghi", "J. SMITH", "SMITH J.", "MCDONALD R",
    # not plain: these take the Python path, mixed in with plain ones
    "Zoë Ødegaard", "José DE LA CRUZ", "Anne\tMarie Smith", "ÉMILE Zola", "Nguyễn Văn An",
    "", "Mr\u00a0Smith", "李 小龙",
]
WORDS = ["John", "SMITH", "smith", "Mary-Jo", "O'Neil", "J", "J.", "de", "DE", "la", "van",
         "y", "Y", "Mr", "mrs.", "Dr.", "Jr", "jr.", "III", "PhD", "Ph.D", "Esq", "NG", "BRT",
         "st", "St.", "2nd", "x", "AL", "bin", "Zoë", "ÉMILE", "Æ"]


def _both(values: list) -> tuple[list, list]:
    arr = pa.array(values, pa.large_string())
    out = split_full_names(arr)
    fast = list(zip(out["given_part"].to_pylist(), out["family_part"].to_pylist(),
                    out["suffix"].to_pylist()))
    slow = [split_full_name(v) if v else (None, None, None) for v in values]
    keep = [bool(v) and not v.isupper() and not v.islower() for v in values]
    assert out["keep_case"].tolist() == keep
    return fast, slow


def test_split_matches_python_on_hand_written_names():
    fast, slow = _both(HAND_WRITTEN)
    assert fast == slow
    # Spot checks of the rules themselves (docs/normalisation.md, "Full names").
    got = dict(zip(HAND_WRITTEN, fast))
    assert got["DUPONT Jean"] == ("Jean", "Dupont", None)
    assert got["Smith J"] == ("J", "Smith", None)
    assert got["Maria de la Cruz"] == ("Maria", "de la Cruz", None)
    assert got["Juan Garcia y Lopez"] == ("Juan", "Garcia y Lopez", None)
    assert got["Mr John Smith Jr"] == ("John", "Smith", "jr")
    assert got["ATKINSON, LINDSEY L"] == ("LINDSEY L", "ATKINSON", None)


def test_plain_gate_covers_the_usual_names_and_nothing_else():
    arr = pa.array(["JOHN SMITH", "O'Neil, Sean", "Zoë", "A\tB", ""], pa.large_string())
    assert pc.match_substring_regex(arr, pattern=PLAIN_NAME).to_pylist() == [
        True, True, False, False, False]


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(
    st.lists(st.sampled_from(WORDS), min_size=0, max_size=6).map(" ".join)
    | st.lists(st.sampled_from(WORDS + [",", ", ", "  ", ".", "-"]), max_size=7).map("".join)
    | st.text(alphabet="AbZy .,'-3\t", max_size=12),
    min_size=1, max_size=25))
def test_split_matches_python_on_generated_names(values):
    fast, slow = _both(values)
    assert fast == slow


def test_split_handles_nulls_and_an_empty_array():
    fast, slow = _both([None, "John Smith", None])
    assert fast == slow
    out = split_full_names(pa.array([], pa.large_string()))
    assert len(out["given_part"]) == 0 and len(out["keep_case"]) == 0


# --- ingest: quick CSV reader and column helpers ------------------------------------------


def _read_both(tmp_path, name: str, data: bytes, monkeypatch):
    path = tmp_path / name
    path.write_bytes(data)
    quick = read_inputs([path])
    with monkeypatch.context() as m:
        m.setattr(readers, "_read_csv_quick", lambda p, d: None)  # the full path only
        full = read_inputs([path])
    return quick, full


def _same_ingest(a, b):
    pd.testing.assert_frame_equal(a.records, b.records)
    pd.testing.assert_frame_equal(a.quarantine, b.quarantine)
    pd.testing.assert_frame_equal(a.files, b.files)


@pytest.mark.parametrize("data", [
    b"id,name,city\n1,Ann,Leeds\n2,  Bo  ,\n3,\"Cy, Jr\",\"Hull\nEast\"\n\n4,Zo\xc3\xab,\t\n",
    b"\xef\xbb\xbfid;name\n1;A\n2; \n",                        # BOM, semicolons, blank field
    b"id,name\n1,A\n2,B,extra\n3,C\n",                        # a broken row: full path
    b"id,name\n1,A\xff\n2,B\n",                               # not UTF-8: full path
    b'"id","name"\n1,A\n',                                     # quoted header: full path
    b"id,name\r\n1,\xe2\x80\x83Ann\xe2\x80\x83\r\n2,Ben\r\n",  # em spaces around a value
])
def test_quick_csv_reader_gives_what_the_full_reader_gives(tmp_path, monkeypatch, data):
    quick, full = _read_both(tmp_path, "x.csv", data, monkeypatch)
    _same_ingest(quick, full)


def test_quick_csv_reader_reads_many_blocks_in_order(tmp_path, monkeypatch):
    monkeypatch.setattr(readers, "QUICK_BLOCK_BYTES", 4096)  # force many parse blocks
    rows = "".join(f'{i},"Name {i}\nline two",{" x " if i % 7 == 0 else "y"}\n'
                   for i in range(3000))
    quick, full = _read_both(tmp_path, "many.csv", ("id,name,tag\n" + rows).encode(),
                             monkeypatch)
    _same_ingest(quick, full)
    assert quick.records["record_id"].tolist() == [str(i) for i in range(3000)]


@settings(max_examples=200, deadline=None)
@given(st.lists(st.none() | st.text(max_size=6) | st.sampled_from(
    [" a", "a ", "\u2003x", "x\u00a0", "\x1c", "\x85y", " ", "é", "\u3000"]), max_size=20))
def test_trimmed_is_strip_then_blank_to_na(values):
    s = pd.Series(values, dtype="string")
    want = s.str.strip()
    want = want.mask(want == "")
    got = columns.trimmed(s)
    assert got.isna().tolist() == want.isna().tolist()
    assert got.dropna().tolist() == want.dropna().tolist()


def test_space_gate_knows_every_white_space_character_arrow_trims():
    """The byte-level gate's list is exactly Arrow's white space, over all code points."""
    points = [c for c in range(0x110000) if not 0xD800 <= c <= 0xDFFF]
    padded = pa.array(["a" + chr(c) for c in points], pa.large_string())
    trimmed = pc.utf8_trim_whitespace(padded)
    spaces = {points[i] for i in np.flatnonzero(
        pc.not_equal(trimmed, padded).to_numpy(zero_copy_only=False))}
    ascii_spaces = {c for c in spaces if c < 128}
    wide = {int.from_bytes(chr(c).encode(), "big") for c in spaces if c >= 128}
    assert ascii_spaces == set(np.flatnonzero(columns._ASCII_SPACE).tolist())
    assert wide == set(columns._WIDE_SPACES.tolist())


@pytest.mark.parametrize("space", ["\u00a0", "\u0085", "\u1680", "\u2003", "\u2028",
                                   "\u2029", "\u202f", "\u205f", "\u3000", "\t", "\x1f"])
@pytest.mark.parametrize("where", ["start", "end", "alone"])
def test_space_gate_finds_spaces_at_either_end(space, where):
    text = {"start": space + "Zoë", "end": "José" + space, "alone": space}[where]
    values = ["Ann", None, "", "Nguyễn", text, "Ødegaard"]
    arr = pa.array(values, pa.large_string())
    assert columns._may_have_outer_space(arr)
    assert not columns._may_have_outer_space(pa.array(["Ann", None, "", "Nguyễn", "Zoë",
                                                      "José", "Ødegaard", "x\u2029x"],
                                                     pa.large_string()))


@settings(max_examples=100, deadline=None)
@given(st.lists(st.none() | st.text(max_size=8), max_size=15), st.integers(0, 6))
def test_longer_than_and_all_distinct(values, limit):
    s = pd.Series(values, dtype="string")
    want = (s.str.len() > limit).fillna(False).astype(bool).to_numpy()
    assert columns.longer_than(s, limit).tolist() == want.tolist()
    assert columns.all_distinct(s) == (not s.duplicated().any())


# --- normalise_records: threads and the identifier table ----------------------------------


def _records(n: int = 400, seed: int = 3) -> pd.DataFrame:
    """A small invented record table with every identifier kind (placeholders included)."""
    rng = np.random.default_rng(seed)

    def pick(options, share_missing=0.1):
        out = [options[i] for i in rng.integers(0, len(options), n)]
        return pd.array([None if rng.random() < share_missing else v for v in out],
                        dtype="string")

    return pd.DataFrame({
        "rec": np.arange(n, dtype=np.int32),
        "record_id": pd.array([f"R{i}" for i in range(n)], dtype="string"),
        "source": pd.array(["x"] * n, dtype="string"),
        "given_name": pick(["Ann", "BOB", "Cy", "Test", None], 0.3),
        "family_name": pick(["Lee", "ng", "de la Cruz", "Doe"], 0.3),
        "full_name": pick(["SMITH, JOHN", "Mary Ann Jones", "DUPONT Jean", "Zoë Ødegaard"]),
        "birth_date": pick(["1980-01-02", "02/03/1990", "1900-01-01", "bad"]),
        "phone_1": pick(["(415) 555-2671", "+44 20 7946 0958", "000-000-0000",
                         "1-800-555-0199", "call me"]),
        "phone_2": pick(["212 555 0148", "+1 202 555 0111"], 0.6),
        "email_1": pick(["a.b+x@gmail.com", "none@none.com", "bad@", "Z@Example.org"]),
        "national_id_1": pick(["536-90-4399", "000-00-0000", "AB123456C", "123"]),
        "national_id_country": pick(["US", "GB", "CA"], 0.3),
        "street": pick(["12 Main St Apt 4", "PO Box 9", "unknown", "Flat 3, 7 High Street"]),
        "city": pick(["Leeds", "Springfield", "N/A"]),
        "postcode": pick(["LS1 4AP", "02134", "K1A 0B1", "x"]),
        "country": pick(["GB", "US", "Canada", "usa"]),
        "created_at": pick(["2024-07-12", "2023-09-01T18:54:08", "nope"]),
    })


def test_threads_do_not_change_the_result():
    records = _records()
    one = normalise_records(records, NormaliseSettings(), workers=1)
    three = normalise_records(records, NormaliseSettings(), workers=3)
    pd.testing.assert_frame_equal(one.people, three.people)
    pd.testing.assert_frame_equal(one.identifiers, three.identifiers)


def test_timings_name_every_step():
    timings: dict[str, float] = {}
    normalise_records(_records(50), NormaliseSettings(), timings=timings, workers=2)
    assert {"countries", "names", "phones", "emails", "national_ids", "addresses",
            "birth_dates", "created_at", "people", "identifiers"} <= set(timings)
    assert all(v >= 0 for v in timings.values())


def test_identifier_table_matches_the_pandas_assembly():
    """The Arrow assembly equals concat + astype + masked key, the pandas way."""
    records = _records(600, seed=11)
    ids = normalise_records(records, NormaliseSettings(), workers=1).identifiers
    plain = ids.astype({"kind": "string", "status": "string"})
    want = plain.astype({"kind": "str"}).astype({"kind": "category", "status": "category"})
    assert ids["kind"].dtype == want["kind"].dtype
    assert ids["status"].dtype == want["status"].dtype
    assert list(ids["kind"].cat.categories) == sorted(set(plain["kind"]))
    assert list(ids["status"].cat.categories) == sorted(set(plain["status"].dropna()))
    pd.testing.assert_frame_equal(ids, want)
    unusable = plain["status"].isin(["placeholder", "missing"])
    assert ids.loc[unusable, "key"].isna().all()
    assert unusable.any() and (~unusable).any()
    # Rows come kind by kind (phone, email, national ID, address), records in slot order.
    order = {"phone": 0, "email": 1, "national_id": 2, "address": 3}
    assert (np.diff(plain["kind"].map(order).to_numpy()) >= 0).all()
    assert list(ids.columns) == ["rec", "kind", "slot", "raw", "value", "key", "status",
                                 "reason", "detail"]


def test_job_runner_keeps_order_needs_and_errors():
    from resolve.normalise.records import _run_jobs, _Stopwatch

    started: list[str] = []

    def job(name, value):
        def run(*done):
            started.append(name)
            return value if not done else value + sum(done[0][d] for d in ("a", "b"))
        return run

    jobs = {"a": job("a", 1), "sum": job("sum", 100), "b": job("b", 2)}
    needs = {"sum": ("a", "b")}
    for workers in (1, 2, 3):
        started.clear()
        timings: dict[str, float] = {}
        if workers == 1:  # one thread runs the list in order: "sum" must come after its needs
            jobs_in_order = {"a": jobs["a"], "b": jobs["b"], "sum": jobs["sum"]}
        else:
            jobs_in_order = jobs
        done = _run_jobs(jobs_in_order, workers, _Stopwatch(timings), needs=needs)
        assert done == {"a": 1, "b": 2, "sum": 103}
        assert started.index("sum") > max(started.index("a"), started.index("b"))
        assert set(timings) == {"a", "b", "sum"}

    def broken():
        raise RuntimeError("no")

    with pytest.raises(RuntimeError, match="no"):
        _run_jobs({"x": broken, "y": job("y", 1)}, 2, _Stopwatch(None))
    with pytest.raises(ValueError, match="needed but not given"):
        _run_jobs({"x": job("x", 1)}, 2, _Stopwatch(None), needs={"x": ("z",)})


def test_keep_freed_memory_changes_no_result():
    from resolve.ingest.memory import keep_freed_memory

    records = _records(120, seed=5)
    before = normalise_records(records, NormaliseSettings(), workers=1)
    assert isinstance(keep_freed_memory(), bool)
    after = normalise_records(records, NormaliseSettings(), workers=2)
    pd.testing.assert_frame_equal(before.identifiers, after.identifiers)
    pd.testing.assert_frame_equal(before.people, after.people)


# --- phones and emails: repeats without hashing every text ---------------------------------


def test_phone_repeats_reach_the_reference_library_once(monkeypatch):
    from resolve.normalise import phone

    texts = ["415*555*0123", "(415) 555-0123", "415*555*0123", None, "415.555.0123 x7",
             "+44 20 7946 0958", "415*555*0123", "call me", "call me", "０２０ ７９４６ ０９５８"]
    calls: list[tuple[str, str]] = []
    real = phone._parse_slow
    monkeypatch.setattr(phone, "_parse_slow", lambda t, r: calls.append((t, r)) or real(t, r))
    raw = pd.Series(texts * 3, dtype="string")
    region = pd.Series(["US", "GB", "US"] * 10, dtype="string")
    got = phone.normalise_phones(raw, region)
    assert len(calls) == len(set(calls))  # each distinct (text, region) once at most
    for i in range(len(raw)):  # the same as normalising each value on its own
        alone = phone.normalise_phones(raw.iloc[[i]], region.iloc[[i]])
        pd.testing.assert_frame_equal(got.iloc[[i]], alone)


def test_email_repeats_reach_the_validator_once(monkeypatch):
    from resolve.normalise import email

    calls: list[str] = []
    real = email._validate_one
    monkeypatch.setattr(email, "_validate_one", lambda t: calls.append(t) or real(t))
    texts = ["Zoë@example.org", "a@b.com", "Zoë@example.org", None, "<x@y.org>", "Zoë@example.org",
             "bad@@x", "A.B+c@GMAIL.com"]
    raw = pd.Series(texts * 2, dtype="string")
    got = email.normalise_emails(raw)
    assert len(calls) == len(set(calls))
    for i in range(len(raw)):
        pd.testing.assert_frame_equal(got.iloc[[i]], email.normalise_emails(raw.iloc[[i]]))


# --- dates: time-of-day groups -------------------------------------------------------------


@settings(max_examples=150, deadline=None)
@given(st.lists(st.sampled_from([
    "2023-09-01T18:54:08", "2023-09-01T18:54", "2023-09-01 18:54:08", "2023-09-01T18:54:08Z",
    "2023-09-01T18:54:08.123", "01/02/2003 1:05 PM", "2023-09-01", "", "T12:00:00",
    "2023-09-01T18:54:08+02:00", "12:34", "2023-9-1T18:54:08", "2023-09-01t18:54:08",
]) | st.text(alphabet="0123456789-:T .APMZ+", max_size=22), max_size=12))
def test_time_groups_match_the_time_pattern(values):
    from resolve.normalise import dates

    text = pc.utf8_upper(pa.array(values, pa.large_string()))
    got = dates._time_parts(text)
    found = pc.extract_regex(text, dates._TIME)
    assert got["_hit"].tolist() == pc.is_valid(found).to_pylist()
    for name in ("date", "h", "mi", "s", "frac", "ap", "zone"):
        assert got[name].to_pylist() == pc.struct_field(found, name).to_pylist(), name
