"""Work-list filters and other light facts the screens need before any table is read.

Kept free of pandas and numpy so that the workbench's first screen can be drawn while the
heavier libraries are still loading in a worker (the work list must be on screen within two
seconds of start, even on a million-record project).
"""

from __future__ import annotations

import getpass
import tomllib
from dataclasses import dataclass
from pathlib import Path

KINDS = ("entity", "split", "household", "group", "flagged")
STATES = ("open", "decided", "escalated", "awaiting_approval", "reopened")
PAGE_SIZE = 500
ANY_FLAG = "any flag"


def reviewer_name(project_dir: str | Path, given: str | None = None) -> str:
    """The reviewer's name: the option, else project.toml ``[review] reviewer``, else the OS user."""
    if given and given.strip():
        return given.strip()
    path = Path(project_dir) / "project.toml"
    if path.is_file():
        try:
            review = tomllib.loads(path.read_text(encoding="utf-8")).get("review", {}) or {}
        except (tomllib.TOMLDecodeError, UnicodeDecodeError):
            review = {}
        name = review.get("reviewer")
        if isinstance(name, str) and name.strip():
            return name.strip()
    try:
        return getpass.getuser()
    except (KeyError, OSError):
        return "reviewer"


@dataclass(frozen=True)
class QueueFilter:
    """What the reviewer narrowed the work list to; None means no narrowing."""

    kind: str | None = None
    flag: str | None = None
    state: str | None = None
    reviewer: str | None = None
    search: str | None = None

    def describe(self) -> str:
        """The filters in force, in a few words."""
        parts = [f"{name}: {value}" for name, value in (
            ("kind", self.kind), ("flag", self.flag), ("state", self.state),
            ("reviewer", self.reviewer), ("find", self.search)) if value]
        return " · ".join(parts) if parts else "no filter"


def cycle(options: list, current):
    """The option after ``current`` (None stands for 'all' and comes first)."""
    choices = [None, *options]
    try:
        i = choices.index(current)
    except ValueError:
        i = 0
    return choices[(i + 1) % len(choices)]
