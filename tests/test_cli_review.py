"""The review commands through click's CliRunner: exit codes, one-line errors, output."""

from __future__ import annotations

import json
import sqlite3

import pytest
from click.testing import CliRunner

import resolve.cli_review as cli_review  # registers the commands on the group
from conftest_project import keys, make_project
from resolve.cli import main
from resolve.exports import KINDS

COMMANDS = [["export"], ["queue"], ["decide"], ["decide-bulk"], ["status"], ["audit"],
            ["audit", "verify"], ["audit", "show"], ["reveal"]]


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


@pytest.fixture
def book(tmp_path):
    return make_project(tmp_path / "book")


@pytest.mark.parametrize("command", COMMANDS, ids=" ".join)
def test_every_command_has_help_with_an_example(command):
    result = run(*command, "--help")
    assert result.exit_code == 0
    assert "Example" in result.output


def test_export_kinds_match_the_library():
    assert set(cli_review.EXPORT_KINDS) == set(KINDS)


def test_queue_text_and_json(book):
    result = run("queue", "--project", book.path)
    assert result.exit_code == 0
    assert keys(book)["group"] in result.output and "open" in result.output
    result = run("queue", "--project", book.path, "--json", "--kind", "entity")
    items = json.loads(result.output)
    assert [i["record_ids"] for i in items] == [["C001", "C002"]]
    assert items[0]["state"] == "open" and items[0]["decision_id"] is None
    result = run("queue", "--project", book.path, "--state", "decided")
    assert result.exit_code == 0 and "nothing in the queue matches" in result.output


def test_decide_then_queue_and_status_show_it(book):
    key = keys(book)["entity"]
    result = run("decide", "--project", book.path, "--cluster", key, "--action", "accept",
                 "--reviewer", "ana", "--note", "same person")
    assert result.exit_code == 0, result.output
    assert result.output.strip() == "decision 1 recorded: accept C001, C002 by ana (survivor C001)"
    items = json.loads(run("queue", "--project", book.path, "--json").output)
    assert {i["kind"]: i["state"] for i in items}["entity"] == "decided"
    status = json.loads(run("status", "--project", book.path, "--json").output)
    assert status["decisions"]["by_reviewer"] == {"ana": {"accept": 1}}
    text = run("status", "--project", book.path).output
    assert "decisions: 1 recorded, 1 in force" in text and "ana: accept 1" in text


def test_split_escalate_undo_and_approve(book):
    r = run("decide", "--project", book.path, "--records", "C003,C004,C005", "--action", "split",
            "--groups", "C003,C004;C005", "--reviewer", "ana")
    assert r.exit_code == 0 and "split C003, C004, C005" in r.output
    r = run("decide", "--project", book.path, "--cluster", keys(book)["group"], "--action", "escalate",
            "--reviewer", "ben", "--note", "two names, one ID")
    assert "case 1 opened" in r.output
    r = run("decide", "--project", book.path, "--action", "undo", "--decision", "1", "--reviewer", "ben")
    assert r.exit_code == 0 and "undo of decision 1" in r.output and "supersedes 1" in r.output


def test_usage_errors_exit_2(book):
    r = run("decide", "--project", book.path, "--cluster", "k", "--records", "C001,C002",
            "--action", "accept", "--reviewer", "ana")
    assert r.exit_code == 2 and "exactly one of --cluster" in r.output
    r = run("decide", "--project", book.path, "--action", "approve", "--reviewer", "ana")
    assert r.exit_code == 2 and "--decision" in r.output
    r = run("decide", "--project", book.path, "--records", "C001,C002", "--action", "merge",
            "--reviewer", "ana")
    assert r.exit_code == 2


def test_library_errors_are_one_line_exit_1(book):
    r = run("decide", "--project", book.path, "--records", "C001,C999", "--action", "accept",
            "--reviewer", "ana")
    assert r.exit_code == 1
    assert r.output.strip().count("\n") == 0 and r.output.startswith("error: record C999")
    r = run("queue", "--project", book.path.parent / "nowhere")
    assert r.exit_code == 1 and "is not a resolve project" in r.output


def test_four_eyes_refusal_is_a_clear_error(tmp_path):
    book = make_project(tmp_path / "b", settings="[review]\nfour_eyes = true\n")
    r = run("decide", "--project", book.path, "--records", "C001,C002", "--action", "accept",
            "--reviewer", "ana")
    assert "awaiting approval by a second reviewer" in r.output
    r = run("decide", "--project", book.path, "--action", "approve", "--decision", "1", "--reviewer", "ana")
    assert r.exit_code == 1 and "a different reviewer must approve it" in r.output
    r = run("decide", "--project", book.path, "--action", "approve", "--decision", "1", "--reviewer", "ben")
    assert r.exit_code == 0 and "approve of decision 1 by ben" in r.output


def test_bulk_dry_run_then_real(book):
    r = run("decide-bulk", "--project", book.path, "--action", "accept", "--kind", "entity",
            "--min-score", "0.8", "--reviewer", "ana", "--dry-run")
    assert r.exit_code == 0 and "would accept 1 items" in r.output and keys(book)["entity"] in r.output
    r = run("decide-bulk", "--project", book.path, "--action", "accept", "--kind", "entity",
            "--min-score", "0.8", "--reviewer", "ana")
    assert r.exit_code == 0 and "accept: 1 items decided (decisions 1-1); 0 skipped" in r.output


def test_export_and_audit_verify_and_tamper(book, tmp_path):
    out = tmp_path / "entities.csv"
    r = run("export", "entities", "--project", book.path, "--out", out, "--reviewer", "carol")
    assert r.exit_code == 0 and "wrote 8 rows of entities (csv)" in r.output and out.exists()
    r = run("audit", "verify", "--project", book.path)
    assert r.exit_code == 0 and r.output.startswith("ok: 2 audit entries verified")
    r = run("audit", "show", "--project", book.path, "--json")
    assert [e["action"] for e in json.loads(r.output)] == ["register_run", "export"]
    conn = sqlite3.connect(book.path / "review.sqlite")
    conn.execute("DROP TRIGGER audit_log_no_update")
    conn.execute("UPDATE audit_log SET actor = 'someone' WHERE seq = 2")
    conn.commit()
    conn.close()
    r = run("audit", "verify", "--project", book.path)
    assert r.exit_code == 1 and "audit log broken at entry 2" in r.output


def test_export_case_html(book, tmp_path):
    run("decide", "--project", book.path, "--cluster", keys(book)["group"], "--action", "escalate",
        "--reviewer", "ben", "--note", "look")
    out = tmp_path / "case.html"
    r = run("export", "cases", "--project", book.path, "--case", "1", "--format", "html", "--out", out)
    assert r.exit_code == 0 and "wrote 1 cases of cases (html)" in r.output
    assert "<svg" in out.read_text()
    r = run("export", "cases", "--project", book.path, "--format", "html", "--out", out)
    assert r.exit_code == 1 and "add --case ID" in r.output


def test_reveal_prints_the_id_and_logs(book):
    r = run("reveal", "--project", book.path, "--record", "C006", "--reviewer", "ana")
    assert r.exit_code == 0 and "987-65-4321" in r.output and "logged in the audit log" in r.output
    shown = json.loads(run("audit", "show", "--project", book.path, "--json").output)
    assert shown[-1]["action"] == "reveal" and shown[-1]["actor"] == "ana"
