"""Ingest: formats, encodings, mapping detection, and the row accounting on broken input."""

from __future__ import annotations

import json

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from resolve.errors import InputError, MappingError
from resolve.ingest import IngestSettings, load_mapping, read_inputs
from resolve.ingest.mapping import detect_mapping

HEADER = "Cust No,First Name,Surname,DOB,Mobile,Home Tel,E-mail,SSN\n"


def write(tmp_path, name, data: bytes):
    p = tmp_path / name
    p.write_bytes(data)
    return p


def test_broken_csv_every_row_accounted(tmp_path):
    big = "x" * (1024 * 1024)  # a 1 MB field
    body = (
        HEADER
        + '1,Ann,Lee,1980-01-02,2025550143,,ann@example.org,536-90-4399\n'
        + '2,"Bo, Jr","Smith\nJones",,,,,\n'          # quoted comma and embedded newline
        + "3,too,few\n"                                # ragged row
        + "1,Dup,Row,,,,,\n"                           # duplicate ID
        + ",No,Id,,,,,\n"                              # blank ID
        + f"5,Huge,{big},,,,,\n"                       # field over the size limit
        + "6,Cam,Ray,,,,,,,\n"                         # too many fields
    ).encode() + b"7,Bad\xff\xfeBytes,Kay,,,,,\n" + b"8,Eve,Ng,,,,,\n"
    p = write(tmp_path, "broken.csv", body)
    res = read_inputs([p])
    assert res.input_rows == 9
    assert len(res.records) + len(res.quarantine) == 9
    assert res.records["record_id"].tolist() == ["1", "2", "8"]
    assert res.records["family_name"].tolist()[1] == "Smith\nJones"
    reasons = dict(zip(res.quarantine["row_number"], res.quarantine["reason"]))
    assert reasons == {3: "wrong_field_count", 4: "duplicate_record_id", 5: "no_record_id",
                       6: "field_too_long", 7: "wrong_field_count", 8: "bad_encoding"}
    dup = res.quarantine[res.quarantine["reason"] == "duplicate_record_id"].iloc[0]
    assert "row 1" in dup["detail"]
    assert res.files.iloc[0][["rows", "accepted", "quarantined"]].tolist() == [9, 3, 6]


def test_utf8_bom_and_semicolons(tmp_path):
    p = write(tmp_path, "bom.csv", "\ufeffid;name;email\n1;Zoë;z@example.org\n".encode("utf-8"))
    res = read_inputs([p])
    assert list(res.records["record_id"]) == ["1"]
    assert res.records["full_name"].iloc[0] == "Zoë"
    assert res.records["email_1"].iloc[0] == "z@example.org"


def test_latin1_file_gives_one_line_hint(tmp_path):
    rows = "id,name\n" + "".join(f"{i},Zoë{i}\n" for i in range(50))
    p = write(tmp_path, "latin.csv", rows.encode("latin-1"))
    with pytest.raises(InputError, match="--encoding"):
        read_inputs([p])
    res = read_inputs([p], settings=IngestSettings(encoding="latin-1"))
    assert len(res.records) == 50


def test_parquet_and_jsonl_with_sources(tmp_path):
    pq.write_table(pa.table({"id": ["a1", "a2"], "first_name": ["Ann", "Ben"],
                             "last_name": ["Lee", "Ode"], "dob": ["1990-01-01", None]}),
                   tmp_path / "branch.parquet")
    lines = [json.dumps({"id": "b1", "first_name": "Cy", "last_name": "Poe", "dob": "1970-05-06"}),
             "{not json", json.dumps({"id": "b2", "first_name": "Di", "last_name": "Ray"})]
    write(tmp_path, "app.jsonl", ("\n".join(lines) + "\n").encode())
    res = read_inputs([tmp_path / "branch.parquet", tmp_path / "app.jsonl"])
    assert res.records["record_id"].tolist() == ["a1", "a2", "b1", "b2"]
    assert res.records["source"].tolist() == ["branch", "branch", "app", "app"]
    assert res.quarantine["reason"].tolist() == ["unparseable_row"]
    assert res.quarantine["row_number"].tolist() == [2]
    assert res.input_rows == 5


def test_detection_by_header_synonyms_and_contents():
    sample = pd.DataFrame({
        "Cust No": ["1", "2"], "fname": ["A", "B"], "Surname": ["C", "D"],
        "Date of Birth": ["1990-01-01", "1991-02-03"], "Cell": ["+1 202 555 0143", "2025550199"],
        "Tel": ["020 8366 1177", None], "contact": ["a@x.com", "b@y.org"],
        "SSN/TIN": ["536-90-4399", "123-45-6789"], "ZIP": ["02134", "10001"],
    })
    m = detect_mapping(sample)
    assert m.columns["record_id"] == ["Cust No"]
    assert m.columns["given_name"] == ["fname"]
    assert m.columns["family_name"] == ["Surname"]
    assert m.columns["birth_date"] == ["Date of Birth"]
    assert m.columns["phone"] == ["Cell", "Tel"]
    assert m.columns["email"] == ["contact"]          # by contents
    assert m.columns["national_id"] == ["SSN/TIN"]
    assert m.columns["postcode"] == ["ZIP"]


def test_mapping_round_trip_and_errors(tmp_path):
    sample = pd.DataFrame({"ref": ["1"], "name": ["Ann Lee"], "mobile": ["2025550143"]})
    m = detect_mapping(sample)
    path = tmp_path / "mapping.toml"
    path.write_text(m.to_toml())
    again = load_mapping(path)
    assert again.columns == m.columns
    bad = tmp_path / "bad.toml"
    bad.write_text('[columns]\ngiven_name = "first"\n')
    with pytest.raises(MappingError, match="record_id"):
        load_mapping(bad)
    p = write(tmp_path, "x.csv", b"ref,name\n1,Ann\n")
    wrong = tmp_path / "wrong.toml"
    wrong.write_text('[columns]\nrecord_id = "ref"\nfull_name = "nom"\n')
    with pytest.raises(MappingError, match="nom"):
        read_inputs([p], wrong)


def test_missing_file_and_missing_record_id(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        read_inputs([tmp_path / "nope.csv"])
    p = write(tmp_path, "noid.csv", b"colour,flavour\nred,sweet\nred,sour\n")
    with pytest.raises(MappingError):
        read_inputs([p])
