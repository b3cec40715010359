"""Exports: golden files for the fixture project, formula-injection escaping, contract columns,
four-eyes filtering, households confirmed and denied, cases and the HTML evidence page.

Golden files live in fixtures/exports/; rewrite them after an intended change with
``RESOLVE_UPDATE_GOLDEN=1 .venv/bin/python -m pytest tests/test_exports.py`` and read the diff.
"""

from __future__ import annotations

import csv
import io
import json
import os
import re
import stat
import xml.etree.ElementTree as ET
from pathlib import Path

import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest_project import clock, keys, make_project
from resolve.errors import DecisionError, ProjectError
from resolve.exports import KINDS, export
from resolve.exports.csv_safe import escape_formulas, escape_frame
from resolve.project import Review

GOLDEN = Path(__file__).resolve().parent.parent / "fixtures" / "exports"


def reviewed(path, settings_text: str | None = None):
    """The fixture project after a fixed set of decisions (fixed clock)."""
    project = make_project(path, settings=settings_text)
    k = keys(project)
    with Review(project, clock=clock()) as review:
        review.decide("accept", "ana", cluster_key=k["entity"], note="same person, moved house")
        review.decide("escalate", "ben", cluster_key=k["group"], note="=HYPERLINK(\"x\") two names, one ID")
        review.decide("not_household", "ana", cluster_key=k["household"])
        review.decide("household", "ben", record_ids="C004,C005")
        review.decide("split", "ana", record_ids="C007,C008", groups="C007;C008")
    return project


@pytest.fixture
def project(tmp_path):
    return reviewed(tmp_path / "book")


def read(path) -> str:
    return Path(path).read_text(encoding="utf-8")


@pytest.mark.parametrize("kind, fmt, name", [
    ("entities", None, "entities.csv"), ("households", None, "households.csv"),
    ("flags", None, "flags.csv"), ("merges", None, "merges.csv"), ("cases", "csv", "cases.csv"),
])
def test_golden_files(project, tmp_path, kind, fmt, name):
    out = tmp_path / name
    export(project, kind, out, fmt=fmt, actor="carol")
    golden = GOLDEN / name
    if os.environ.get("RESOLVE_UPDATE_GOLDEN"):
        GOLDEN.mkdir(parents=True, exist_ok=True)
        golden.write_bytes(out.read_bytes())
    assert out.read_bytes() == golden.read_bytes(), f"{name} differs from {golden}"


def test_contract_columns_and_every_record_once(project, tmp_path):
    heads = {"entities": "record_id,entity_id", "households": "record_id,household_id",
             "flags": "record_id,flag,severity,reason",
             "merges": "entity_id,survivor_record_id,record_id,decided_by,decided_at"}
    for kind, head in heads.items():
        export(project, kind, tmp_path / f"{kind}.csv", actor="carol")
        assert read(tmp_path / f"{kind}.csv").splitlines()[0] == head
    ents = pd.read_csv(tmp_path / "entities.csv", dtype=str)
    assert sorted(ents["record_id"]) == [f"C00{i}" for i in range(1, 9)]
    assert ents["record_id"].is_unique
    mode = stat.S_IMODE(os.stat(tmp_path / "entities.csv").st_mode)
    assert mode == 0o600


def test_households_drop_denied_and_add_confirmed(project, tmp_path):
    export(project, "households", tmp_path / "h.csv", actor="carol")
    h = pd.read_csv(tmp_path / "h.csv", dtype=str)
    assert sorted(h["record_id"]) == ["C004", "C005"]       # H001 (C001, C003) was denied
    assert h["household_id"].nunique() == 1 and h["household_id"].iloc[0].startswith("H")


def test_merges_hold_only_approved_decisions_with_four_eyes(tmp_path):
    project = reviewed(tmp_path / "b", "[review]\nfour_eyes = true\n")
    export(project, "merges", tmp_path / "m.csv", actor="carol")
    assert read(tmp_path / "m.csv").strip() == "entity_id,survivor_record_id,record_id,decided_by,decided_at"
    with Review(project) as review:
        review.decide("approve", "ben", target_id=1)
    res = export(project, "merges", tmp_path / "m.csv", actor="carol")
    m = pd.read_csv(tmp_path / "m.csv", dtype=str)
    assert m["record_id"].tolist() == ["C001", "C002"] and set(m["decided_by"]) == {"ana"}
    assert set(m["survivor_record_id"]) == {"C001"} and set(m["entity_id"]) == {"E001"}
    assert res.rows == 2 and any("re-run" in n for n in res.notes)


# --------------------------------------------------------------- formula injection
# CWE-1236; OWASP ASVS 5.0 1.2.10 (/work/shared/CHECKS.md): cells starting with = + - @ tab,
# carriage return or NUL are escaped with a leading single quote, e.g. =1+1 -> '=1+1.
@pytest.mark.parametrize("cell, written", [
    ("=1+1", "'=1+1"),
    ("+1+1", "'+1+1"),
    ("-2+3", "'-2+3"),
    ("@SUM(A1:A2)", "'@SUM(A1:A2)"),
    ("\t=1", "'\t=1"),
    ("\r=1", "'\r=1"),
    ("\x00=1", "'\x00=1"),
    ("=HYPERLINK(\"http://x\",\"y\")", "'=HYPERLINK(\"http://x\",\"y\")"),
    ("Ana", "Ana"),
    (" =1+1", " =1+1"),           # the rule is about the first character only
    ("a=1", "a=1"),
    # our policy: a cell that is entirely an E.164 number (ITU-T E.164: at most 15 digits) is kept
    ("+15555550101", "+15555550101"),
    ("+442083661177", "+442083661177"),   # python-phonenumbers docstring example (CHECKS.md)
    ("+1234567890123456", "'+1234567890123456"),  # 16 digits: not E.164
    ("+0123456", "'+0123456"),    # E.164 numbers never start with 0
    ("+1 555 0101", "'+1 555 0101"),
    ("+15555550101=1", "'+15555550101=1"),
])
def test_formula_cells_are_escaped(cell, written):
    assert escape_formulas(pd.Series([cell], dtype="string"))[0] == written


def test_escaping_survives_csv_quoting(tmp_path):
    from resolve.exports.csv_safe import write_csv

    frame = pd.DataFrame({"a": ["=1+1", 'say "hi", =x', "line\nbreak", None], "n": [-1.5, 2.0, 3.0, 4.0]})
    write_csv(frame, tmp_path / "f.csv")
    rows = list(csv.reader(io.StringIO(read(tmp_path / "f.csv"))))
    assert rows[1] == ["'=1+1", "-1.5"]   # numbers are numbers, not text: left alone
    assert rows[2][0] == 'say "hi", =x' and rows[3][0] == "line\nbreak" and rows[4][0] == ""


@settings(max_examples=100, deadline=None)
@given(st.lists(st.one_of(st.none(), st.text(max_size=12)), min_size=1, max_size=8))
def test_no_escaped_cell_starts_with_a_formula_character(values):
    out = escape_formulas(pd.Series(values, dtype="string"))
    for before, after in zip(values, out.tolist()):
        if before is None:
            assert after is pd.NA
            continue
        assert after in (before, "'" + before)
        risky = after[:1] in ("=", "+", "-", "@", "\t", "\r", "\x00")
        assert not risky or re.fullmatch(r"\+[1-9][0-9]{1,14}", after)
    assert escape_formulas(out).tolist() == out.tolist()   # escaping twice changes nothing


def test_flags_export_escapes_reasons(project, tmp_path):
    export(project, "flags", tmp_path / "f.csv", actor="carol")
    text = read(tmp_path / "f.csv")
    assert "'@age check" in text and "'-phone +15555550199" in text


def test_escape_frame_leaves_numeric_columns(project):
    f = escape_frame(pd.DataFrame({"x": [-1, 2], "s": ["-1", "ok"]}))
    assert f["x"].tolist() == [-1, 2] and f["s"].tolist() == ["'-1", "ok"]


# --------------------------------------------------------------- cases and html
def test_cases_json_holds_records_evidence_flags_notes_and_decisions(project, tmp_path):
    res = export(project, "cases", tmp_path / "cases.json", actor="carol")
    assert res.fmt == "json" and res.rows == 1
    doc = json.loads(read(tmp_path / "cases.json"))[0]
    assert doc["case_id"] == 1 and doc["status"] == "open" and doc["record_ids"] == ["C006", "C007"]
    assert {r["record_id"] for r in doc["evidence"]["records"]} == {"C006", "C007"}
    assert {r["national_id_1"] for r in doc["evidence"]["records"]} == {"***4321"}
    assert {f["flag"] for f in doc["current_flags"]} == {"shared_national_id_conflict"}
    assert [d["action"] for d in doc["decisions"]] == ["escalate", "split"]
    assert doc["notes"][0]["note"].startswith("=HYPERLINK")
    assert "987-65-4321" not in read(tmp_path / "cases.json")


def test_html_evidence_page_is_self_contained_and_deterministic(project, tmp_path):
    export(project, "cases", tmp_path / "a.html", case_id=1, actor="carol")
    export(project, "cases", tmp_path / "b.html", fmt="html", case_id=1, actor="carol")
    page = read(tmp_path / "a.html")
    assert page == read(tmp_path / "b.html")
    assert page.startswith("<!DOCTYPE html>") and "<script" not in page.lower()
    assert re.findall(r"(?:src|href)=", page) == []                # no outside assets
    assert re.findall(r"https?://[^\s\"']*", page) == ["http://www.w3.org/2000/svg"]
    assert "lead for human review, not a finding" in page and "local law" in page
    assert "***4321" in page and "987-65-4321" not in page
    assert "=HYPERLINK(&quot;x&quot;)" in page                    # notes are HTML-escaped
    svg = page[page.index("<svg"): page.index("</svg>") + 6]
    root = ET.fromstring(svg)                                    # well-formed SVG
    ns = "{http://www.w3.org/2000/svg}"
    lines = root.findall(f"{ns}line")
    texts = [t.text for t in root.findall(f"{ns}text")]
    assert any("national_id: ssn:***4321  (held by 2)" == t for t in texts)
    assert len(lines) == 6   # C006 and C007 each hold a phone, the shared ID and an address


def test_export_errors(project, tmp_path):
    with pytest.raises(DecisionError, match="unknown export"):
        export(project, "everything", tmp_path / "x.csv")
    with pytest.raises(DecisionError, match="add --case"):
        export(project, "cases", tmp_path / "x.html")
    with pytest.raises(DecisionError, match="no case 9"):
        export(project, "cases", tmp_path / "x.json", case_id=9)
    with pytest.raises(DecisionError, match="not html"):
        export(project, "merges", tmp_path / "x.csv", fmt="html")
    with pytest.raises(ProjectError, match="does not exist"):
        export(project, "entities", tmp_path / "no" / "x.csv")
    assert not list(tmp_path.glob(".*.partial"))


def test_audit_export_lists_the_log(project, tmp_path):
    export(project, "audit", tmp_path / "audit.csv", actor="carol")
    log = pd.read_csv(tmp_path / "audit.csv", dtype=str, keep_default_na=False)
    assert list(log.columns) == ["seq", "at", "actor", "action", "subject", "details", "prev_hash", "hash"]
    assert log["action"].tolist()[:2] == ["register_run", "accept"]
    assert set(KINDS) == {"entities", "households", "flags", "merges", "cases", "audit"}
