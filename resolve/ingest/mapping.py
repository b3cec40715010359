"""Column mapping: which source columns play which role, read from TOML or detected.

The mapping file is a contract (docs/input.md): roles on the left, source column names on the
right, a list for roles that take several columns, and a ``[defaults]`` table (``country`` is
the region assumed for phones and IDs written without one). When the user gives no mapping,
`detect_mapping` proposes one from header names and, for columns whose names say nothing, from
their contents; the pipeline writes the detected mapping into the project so the user can read
and edit it.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from resolve.errors import MappingError
from resolve.ingest.roles import MULTI_ROLES, NAME_ROLES, REQUIRED_ROLES, ROLE_BY_NAME, ROLES

DEFAULTS = {"country": "US"}

_NON_ALNUM = re.compile(r"[^0-9a-z]+")
_EMAIL_LIKE = re.compile(r"^[^@\s]+@[^@\s]+\.[^@\s]+$")
_PHONE_LIKE = re.compile(r"^\+?[\d\s().\-/]{7,24}(?:\s*(?:x|ext\.?|#)\s*\d{1,6})?$", re.I)
_SSN_LIKE = re.compile(r"^\d{3}-\d{2}-\d{4}$")
_DATE_LIKE = re.compile(
    r"^(\d{4}[-/.]\d{1,2}[-/.]\d{1,2}|\d{1,2}[-/.]\d{1,2}[-/.]\d{2,4}|\d{8}|"
    r"\d{1,2}[\s-][A-Za-z]{3,9}[\s-]\d{2,4}|[A-Za-z]{3,9}\.?\s\d{1,2},?\s\d{4})"
)


def fold_header(name: str) -> str:
    """Fold a header for matching: lower case, punctuation to spaces, spaces collapsed."""
    return _NON_ALNUM.sub(" ", str(name).lower()).strip()


@dataclass
class Mapping:
    """Roles to source columns, plus defaults. ``columns[role]`` is always a list."""

    columns: dict[str, list[str]] = field(default_factory=dict)
    defaults: dict[str, str] = field(default_factory=lambda: dict(DEFAULTS))
    notes: list[str] = field(default_factory=list)

    def single(self, role: str) -> str | None:
        cols = self.columns.get(role) or []
        return cols[0] if cols else None

    def validate(self, headers: list[str] | None = None, *, origin: str = "mapping") -> None:
        """Raise MappingError unless required roles are present and named columns exist."""
        unknown = sorted(set(self.columns) - set(ROLE_BY_NAME))
        if unknown:
            raise MappingError(
                f"{origin} names unknown role(s) {', '.join(unknown)}; "
                f"known roles: {', '.join(r.name for r in ROLES)}."
            )
        for role in REQUIRED_ROLES:
            if not self.columns.get(role):
                raise MappingError(
                    f"no column is mapped to the required role '{role}'; add "
                    f"'{role} = \"<column>\"' under [columns] in a mapping file and pass --mapping."
                )
        if not any(self.columns.get(r) for r in NAME_ROLES):
            raise MappingError(
                "no name column is mapped (given_name, family_name or full_name); "
                "add one under [columns] in a mapping file and pass --mapping."
            )
        for role, cols in self.columns.items():
            if len(cols) > 1 and role not in MULTI_ROLES:
                raise MappingError(f"role '{role}' takes one column but {origin} gives {len(cols)}.")
        if headers is not None:
            present = set(headers)
            missing = [c for cols in self.columns.values() for c in cols if c not in present]
            if missing:
                raise MappingError(
                    f"{origin} names column(s) not in the input: {', '.join(missing)}; "
                    f"input columns are: {', '.join(headers)}."
                )

    def to_toml(self) -> str:
        """Render as the mapping TOML contract (readable and editable by the user)."""
        lines = ["# Column mapping for resolve (docs/input.md). Roles on the left,",
                 "# source column names on the right; edit and pass with --mapping."]
        for note in self.notes:
            lines.append(f"# {note}")
        lines.append("")
        lines.append("[columns]")
        for role in ROLES:
            cols = self.columns.get(role.name)
            if not cols:
                continue
            if role.multi:
                rendered = "[" + ", ".join(_toml_str(c) for c in cols) + "]"
            else:
                rendered = _toml_str(cols[0])
            lines.append(f"{role.name} = {rendered}")
        lines.append("")
        lines.append("[defaults]")
        for key, value in sorted(self.defaults.items()):
            lines.append(f"{key} = {_toml_str(value)}")
        return "\n".join(lines) + "\n"


def _toml_str(value: str) -> str:
    escaped = str(value).replace("\\", "\\\\").replace('"', '\\"')
    return f'"{escaped}"'


def load_mapping(path: str | Path) -> Mapping:
    """Read a mapping TOML file; raise MappingError with a one-line reason if it is unusable."""
    p = Path(path)
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise MappingError(f"mapping file {p} does not exist.") from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise MappingError(f"mapping file {p} is not valid TOML: {exc}.") from None
    cols = data.get("columns")
    if not isinstance(cols, dict):
        raise MappingError(f"mapping file {p} has no [columns] table.")
    columns: dict[str, list[str]] = {}
    for role, value in cols.items():
        if isinstance(value, str):
            columns[role] = [value]
        elif isinstance(value, list) and all(isinstance(v, str) for v in value):
            columns[role] = list(value)
        else:
            raise MappingError(f"mapping file {p}: role '{role}' must be a column name or a list.")
    defaults = dict(DEFAULTS)
    defaults.update({k: str(v) for k, v in (data.get("defaults") or {}).items()})
    mapping = Mapping(columns=columns, defaults=defaults)
    mapping.validate(origin=f"mapping file {p}")
    return mapping


def _match_header(folded: str) -> str | None:
    """Role whose synonym equals the folded header, else the longest synonym it contains."""
    for role in ROLES:
        if folded in role.synonyms:
            return role.name
    tokens = set(folded.split())
    best: tuple[int, str] | None = None
    for role in ROLES:
        for syn in role.synonyms:
            syn_tokens = syn.split()
            if len(syn_tokens) >= 1 and set(syn_tokens) <= tokens and len(syn) >= 3:
                score = len(syn)
                if best is None or score > best[0]:
                    best = (score, role.name)
    return best[1] if best else None


def _share(sample: pd.Series, pattern: re.Pattern) -> float:
    values = sample.dropna().astype(str).str.strip()
    values = values[values != ""]
    if values.empty:
        return 0.0
    return float(values.map(lambda v: bool(pattern.match(v))).mean())


_CONTENT_CHECKS = {
    "email": (_EMAIL_LIKE, 0.5),
    "phone": (_PHONE_LIKE, 0.5),
    "birth_date": (_DATE_LIKE, 0.5),
    "created_at": (_DATE_LIKE, 0.5),
}


def detect_mapping(sample: pd.DataFrame, defaults: dict[str, str] | None = None) -> Mapping:
    """Propose a mapping from header names and a sample of rows.

    Names decide first; a column matched by name to a role with a content check (email, phone,
    dates) keeps the role only if enough of its sample looks right. Columns no name matched are
    then tried by content (emails, phones, SSN-shaped IDs). Every decision is written as a note
    into the mapping so the user can see why.
    """
    columns: dict[str, list[str]] = {}
    notes: list[str] = []
    unmatched: list[str] = []
    for header in sample.columns:
        role = _match_header(fold_header(header))
        if role is None:
            unmatched.append(header)
            continue
        check = _CONTENT_CHECKS.get(role)
        if check is not None and sample[header].notna().any():
            share = _share(sample[header], check[0])
            if share < check[1]:
                notes.append(f"'{header}' looks like {role} by name but only {share:.0%} of "
                             f"sampled values fit; left unmapped.")
                unmatched.append(header)
                continue
        if role in columns and role not in MULTI_ROLES:
            notes.append(f"'{header}' also looks like {role}; kept '{columns[role][0]}'.")
            continue
        columns.setdefault(role, []).append(header)
        notes.append(f"'{header}' -> {role} (header name)")
    for header in unmatched:
        col = sample[header]
        if _share(col, _EMAIL_LIKE) >= 0.8:
            columns.setdefault("email", []).append(header)
            notes.append(f"'{header}' -> email (contents)")
        elif _share(col, _SSN_LIKE) >= 0.8:
            columns.setdefault("national_id", []).append(header)
            notes.append(f"'{header}' -> national_id (contents look like SSNs)")
        elif _share(col, _DATE_LIKE) < 0.5 and _share(col, _PHONE_LIKE) >= 0.8:
            columns.setdefault("phone", []).append(header)
            notes.append(f"'{header}' -> phone (contents)")
        else:
            notes.append(f"'{header}' not mapped (no role recognised)")
    if not columns.get("record_id"):
        for header in sample.columns:
            col = sample[header]
            if header in unmatched and col.notna().all() and col.is_unique and len(col) > 1:
                columns["record_id"] = [header]
                notes.append(f"'{header}' -> record_id (values unique in the sample; check this)")
                break
    mapping = Mapping(columns=columns, defaults=dict(defaults or DEFAULTS), notes=notes)
    return mapping
