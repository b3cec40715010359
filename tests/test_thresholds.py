"""Thresholds chosen by a reviewer are kept for the next run, audited."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from resolve.errors import ProjectError
from resolve.pipeline import RunSettings, run_pipeline
from resolve.project import Project
from resolve.project.audit import verify_audit
from resolve.project.thresholds import load_thresholds, save_thresholds

FIXTURE = Path(__file__).resolve().parent.parent / "fixtures" / "sample" / "customers.csv"


def test_round_trip_audit_and_next_run_uses_them(tmp_path):
    project = tmp_path / "book"
    Project.create(project)
    assert load_thresholds(project) is None
    save_thresholds(project, 0.97, 0.4, "alex")
    assert load_thresholds(project) == {"auto": 0.97, "review": 0.4}
    assert (project / "thresholds.toml").stat().st_mode & 0o077 == 0
    ok, broken, _ = verify_audit(project)
    assert ok and broken is None
    run_pipeline([FIXTURE], project, settings=RunSettings(today="2026-12-01"))
    manifest = json.loads((project / "runs" / "run-0001" / "manifest.json").read_text())
    assert manifest["thresholds"] == {"auto": 0.97, "review": 0.4}


def test_options_win_over_saved(tmp_path):
    project = tmp_path / "book"
    Project.create(project)
    save_thresholds(project, 0.97, 0.4, "alex")
    run_pipeline([FIXTURE], project, settings=RunSettings(today="2026-12-01", auto_threshold=0.995))
    manifest = json.loads((project / "runs" / "run-0001" / "manifest.json").read_text())
    assert manifest["thresholds"] == {"auto": 0.995, "review": 0.4}


def test_bad_values_refused(tmp_path):
    Project.create(tmp_path / "p")
    with pytest.raises(ProjectError):
        save_thresholds(tmp_path / "p", 0.3, 0.9, "alex")
    (tmp_path / "p" / "thresholds.toml").write_text("[thresholds]\nauto = 'x'\n")
    with pytest.raises(ProjectError, match="damaged"):
        load_thresholds(tmp_path / "p")
