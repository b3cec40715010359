"""Project folders: settings, mapping, one folder per run with Parquet results, review store.

A project is a plain folder (no server). See docs/projects.md for the layout and
docs/review-and-audit.md for decisions and the audit log.
"""

from resolve.project.runs import Project, Run
from resolve.project.store import ReviewSettings, ReviewStore, load_review_settings
from resolve.project.audit import verify_audit
from resolve.project.decisions import (Decision, Review, decide_bulk, record_decision,
                                       record_reveal, register_run)
from resolve.project.status import project_status, queue_state

__all__ = [
    "Decision",
    "Project",
    "Review",
    "ReviewSettings",
    "ReviewStore",
    "Run",
    "decide_bulk",
    "load_review_settings",
    "project_status",
    "queue_state",
    "record_decision",
    "record_reveal",
    "register_run",
    "verify_audit",
]
