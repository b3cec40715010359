"""The command line: exit codes, one-line errors, help on every command, end-to-end run."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pandas as pd
import pytest
from click.testing import CliRunner

from resolve.cli import main

FIXTURE = Path(__file__).resolve().parent.parent / "fixtures" / "sample"


def invoke(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def all_commands(group=main, prefix=()):
    for name, cmd in group.commands.items():
        yield prefix + (name,), cmd
        if hasattr(cmd, "commands"):
            yield from all_commands(cmd, prefix + (name,))


def test_every_command_has_help_with_an_example():
    for path, cmd in all_commands():
        result = invoke(*path, "--help")
        assert result.exit_code == 0, path
        if not hasattr(cmd, "commands"):
            assert "Example" in result.output, f"'resolve {' '.join(path)}' help lacks an example"


def test_usage_error_exits_2():
    assert invoke("run").exit_code == 2
    assert invoke("no-such-command").exit_code == 2


def test_missing_input_is_one_line_exit_1(tmp_path):
    result = invoke("profile", tmp_path / "absent.csv")
    assert result.exit_code == 1
    assert result.output.strip().count("\n") == 0
    assert result.output.startswith("error: ")


def test_missing_required_role_is_one_line_exit_1(tmp_path):
    p = tmp_path / "x.csv"
    p.write_text("colour,name\nred,Ann Lee\nred,Bo Ray\n")
    result = invoke("run", p, "--project", tmp_path / "proj")
    assert result.exit_code == 1
    assert "record_id" in result.output and "Traceback" not in result.output


def test_profile_json(tmp_path):
    result = invoke("profile", FIXTURE / "customers.csv", "--json")
    assert result.exit_code == 0
    data = json.loads(result.output)
    assert data["input_rows"] == data["accepted"] + data["quarantined"] == 600
    assert data["mapping"]["record_id"] == ["Cust No"]


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    root = tmp_path_factory.mktemp("cli")
    proj = root / "book"
    result = invoke("run", FIXTURE / "customers.csv", "--project", proj, "--today", "2026-12-01",
                    "--quiet")
    assert result.exit_code == 0, result.output
    return proj


def test_run_writes_mapping_and_run(project):
    assert (project / "mapping.toml").exists()
    assert (project / "runs" / "run-0001" / "manifest.json").exists()
    manifest = json.loads((project / "runs" / "run-0001" / "manifest.json").read_text())
    assert manifest["input_rows"] == manifest["accepted"] + manifest["quarantined"]
    assert (project.stat().st_mode & 0o077) == 0  # owner-only folder


def test_evaluate_on_fixture(project):
    result = invoke("evaluate", "--project", project, "--truth", FIXTURE / "truth.csv", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["same_person"]["pairwise"]["precision"] > 0.9


def test_explain_pair(project):
    truth = pd.read_csv(FIXTURE / "truth.csv", dtype=str)
    dup = truth[truth["label"] == "duplicate"].iloc[0]
    same = truth[(truth["person_id"] == dup["person_id"])]
    first = same[same["record_id"] != dup["record_id"]].iloc[0]
    result = invoke("explain", "--project", project, first["record_id"], dup["record_id"])
    assert result.exit_code == 0, result.output
    assert "match probability" in result.output
    bad = invoke("explain", "--project", project, "nope", dup["record_id"])
    assert bad.exit_code == 1 and "nope" in bad.output


def test_demo_data_bad_rate_is_usage_error(tmp_path):
    result = invoke("demo-data", "--records", 100, "--out", tmp_path / "d", "--rate", "nonsense=2")
    assert result.exit_code == 2


def test_rerun_same_input_same_entities(project, tmp_path):
    again = tmp_path / "again"
    shutil.copytree(project, again, ignore=shutil.ignore_patterns("runs"))
    (again / "runs").mkdir()
    invoke("run", FIXTURE / "customers.csv", "--project", again, "--today", "2026-12-01", "-q")
    a = pd.read_parquet(project / "runs" / "run-0001" / "entities.parquet")
    b = pd.read_parquet(again / "runs" / "run-0001" / "entities.parquet")
    pd.testing.assert_frame_equal(a, b)
