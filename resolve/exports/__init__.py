"""Exports: entity map, households, flags, approved merges, cases and the audit log.

`export` writes one kind of export to a file (owner-only), logs it in the audit log with the
file's SHA-256 (so an auditor can later tell whether a file is the one exported), and returns
an `ExportResult`. CSV cells a spreadsheet would run as formulas are escaped
(`resolve.exports.csv_safe`). Columns and rules per kind: docs/exports.md.
"""

from __future__ import annotations

import getpass
import json
import os
from dataclasses import dataclass, field
from pathlib import Path

from resolve.errors import DecisionError, ProjectError
from resolve.project.audit import append_entry
from resolve.project.decisions import Review
from resolve.project.runs import file_sha256

FORMATS = {
    "entities": ("csv",), "households": ("csv",), "flags": ("csv",), "merges": ("csv",),
    "cases": ("json", "csv", "html"), "audit": ("csv",),
}
KINDS = tuple(FORMATS)


@dataclass
class ExportResult:
    """What an export wrote."""

    kind: str
    fmt: str
    path: Path
    rows: int
    sha256: str
    notes: list[str] = field(default_factory=list)


def _format(kind: str, out_path: Path, fmt: str | None, case_id) -> str:
    if kind not in FORMATS:
        raise DecisionError(f"unknown export {kind!r}; use one of {', '.join(KINDS)}.")
    if fmt is None:
        suffix = out_path.suffix.lower().lstrip(".")
        suffix = "html" if suffix == "htm" else suffix
        fmt = suffix if suffix in FORMATS[kind] else FORMATS[kind][0]
    fmt = fmt.lower()
    if fmt not in FORMATS[kind]:
        raise DecisionError(f"{kind} exports as {' or '.join(FORMATS[kind])}, not {fmt}.")
    if fmt == "html" and case_id is None:
        raise DecisionError("the HTML evidence page is for one case; add --case ID.")
    if case_id is not None and kind != "cases":
        raise DecisionError("--case is only for the cases export.")
    return fmt


def _write(review: Review, kind: str, fmt: str, path: Path, case_id) -> tuple[int, list[str]]:
    from resolve.exports import tables
    from resolve.exports.cases import case_documents, cases_table
    from resolve.exports.csv_safe import open_private, write_csv
    from resolve.exports.html import case_page

    notes: list[str] = []
    if kind == "cases":
        docs = case_documents(review, case_id)
        if fmt == "json":
            with open_private(path) as fh:
                fh.write(json.dumps(docs, indent=2, sort_keys=True, ensure_ascii=False, default=str) + "\n")
        elif fmt == "csv":
            return write_csv(cases_table(docs), path), notes
        else:
            with open_private(path) as fh:
                fh.write(case_page(docs[0]))
        return len(docs), notes
    frame = {"entities": tables.entities_table, "households": tables.households_table,
             "flags": tables.flags_table, "merges": tables.merges_table,
             "audit": tables.audit_table}[kind](review)
    if kind in ("entities", "merges"):
        pending = tables.pending_note(review)
        if pending:
            notes.append(pending)
    return write_csv(frame, path), notes


def export(project, kind: str, out_path: str | Path, fmt: str | None = None,
           case_id: int | None = None, actor: str | None = None) -> ExportResult:
    """Write export ``kind`` to ``out_path`` and log it in the audit log.

    ``project`` is a folder, a `Project` or a `Review`; ``fmt`` defaults from the file suffix;
    ``case_id`` picks one case (required for ``fmt="html"``); ``actor`` names who exported
    (default: the operating-system user).
    """
    out_path = Path(out_path)
    fmt = _format(kind, out_path, fmt, case_id)
    if not out_path.parent.is_dir():
        raise ProjectError(f"folder {out_path.parent} does not exist; create it or choose "
                           "another --out.")
    owned = not isinstance(project, Review)
    review = Review(project) if owned else project
    tmp = out_path.with_name(f".{out_path.name}.partial")
    try:
        rows, notes = _write(review, kind, fmt, tmp, case_id)
        digest = file_sha256(tmp)
        try:
            run_id = review.view.run_id
        except ProjectError:
            run_id = None
        who = actor or _user()
        append_entry(review.store, who, "export", f"export:{kind}", {
            "kind": kind, "format": fmt, "path": str(out_path.resolve()), "rows": rows,
            "sha256": digest, "case_id": case_id, "run_id": run_id})
        os.replace(tmp, out_path)
        return ExportResult(kind, fmt, out_path, rows, digest, notes)
    finally:
        if tmp.exists():
            tmp.unlink()
        if owned:
            review.close()


def _user() -> str:
    try:
        return getpass.getuser()
    except Exception:  # noqa: BLE001 - no login name in some containers
        return "unknown"


__all__ = ["ExportResult", "FORMATS", "KINDS", "export"]
