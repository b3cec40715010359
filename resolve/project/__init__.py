"""Project folders: settings, mapping, one folder per run with Parquet results, review store.

A project is a plain folder (no server). See docs/projects.md for the layout.
"""

from resolve.project.runs import Project, Run

__all__ = ["Project", "Run"]
