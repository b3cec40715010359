"""One case as a self-contained HTML evidence page.

An investigator often has to pass a case to someone without the tool: a colleague, a
manager, a file note. The page is one file with no outside assets, no scripts and no fonts
to fetch: the records side by side, a drawing (inline SVG) of which records share which
identifier values, the links with their probabilities and reasons, the flags, notes and
decisions, and the caution that all of it is a lead for human review. National IDs are
masked to their last four characters, as everywhere on screen.

The drawing is deterministic: records on the left in record-ID order, identifier values on
the right (values held by more records first, then by kind and value), a line for each
record holding a value; the same case gives the same bytes.
"""

from __future__ import annotations

from html import escape

CAUTION = ("This page is a lead for human review, not a finding about any person. Records, "
           "links and flags show where identifiers agree or conflict; they do not show who did "
           "what or why. Take no action on this page alone: follow your institution's "
           "procedures and local law.")
KIND_COLOURS = {"national_id": "#b03a2e", "phone": "#1f618d", "email": "#7d3c98",
                "address": "#1e8449"}
MAX_VALUES = 40
ROW = 34
STYLE = """
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;margin:2em;color:#1b1b1b;max-width:1200px}
h1{font-size:1.4em}h2{font-size:1.1em;margin-top:1.6em;border-bottom:1px solid #ccc}
table{border-collapse:collapse;font-size:.9em}
td,th{border:1px solid #ccc;padding:.3em .5em;text-align:left;vertical-align:top}
th{background:#f2f2f2}.caution{border-left:4px solid #b9770e;background:#fef5e7;padding:.6em 1em}
.muted{color:#666}svg text{font-family:inherit;font-size:12px}
"""


def _e(value) -> str:
    return "" if value is None else escape(str(value), quote=True)


def _table(rows: list[dict], columns: list[str]) -> str:
    if not rows:
        return '<p class="muted">None.</p>'
    head = "".join(f"<th>{_e(c)}</th>" for c in columns)
    body = "".join("<tr>" + "".join(f"<td>{_e(r.get(c))}</td>" for c in columns) + "</tr>"
                   for r in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


FIELD_ORDER = ("source", "row_number", "given_name", "middle_name", "family_name", "full_name",
               "birth_date", "national_id", "phone", "email", "street", "city", "postcode",
               "country", "created_at", "entity_id")


def _field_rank(name: str) -> tuple[int, str]:
    for i, prefix in enumerate(FIELD_ORDER):
        if name == prefix or name.startswith(prefix + "_"):
            return i, name
    return len(FIELD_ORDER), name


def _side_by_side(records: list[dict]) -> str:
    if not records:
        return '<p class="muted">No records in the snapshot.</p>'
    records = sorted(records, key=lambda r: str(r.get("record_id")))
    fields = sorted({k for r in records for k in r if k != "record_id"}, key=_field_rank)
    head = "<th>field</th>" + "".join(f"<th>{_e(r.get('record_id'))}</th>" for r in records)
    rows = []
    for f in fields:
        values = [r.get(f) for r in records]
        if all(v is None for v in values):
            continue
        rows.append(f"<tr><th>{_e(f)}</th>" + "".join(f"<td>{_e(v)}</td>" for v in values) + "</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>"


def _clip(text: str, n: int = 40) -> str:
    return text if len(text) <= n else text[: n - 1] + "\u2026"


def sharing_svg(records: list[dict], identifiers: list[dict]) -> str:
    """Inline SVG: records (left) joined by lines to the identifier values they hold (right)."""
    ids = sorted({str(r.get("record_id")) for r in records}
                 | {str(i.get("record_id")) for i in identifiers})
    holders: dict[tuple[str, str], set[str]] = {}
    for i in identifiers:
        if i.get("key") is None:
            continue
        holders.setdefault((str(i.get("kind")), str(i.get("key"))), set()).add(str(i.get("record_id")))
    values = sorted(holders, key=lambda v: (-len(holders[v]), v[0], v[1]))
    hidden = max(0, len(values) - MAX_VALUES)
    values = values[:MAX_VALUES]
    names = {str(r.get("record_id")): " ".join(str(r[k]) for k in ("given_name", "family_name", "full_name")
                                               if r.get(k)) for r in records}
    height = ROW * max(len(ids), len(values), 1) + 60
    width, left, right = 900, 30, 520
    y_rec = {rid: 50 + i * ROW for i, rid in enumerate(ids)}
    y_val = {v: 50 + i * ROW for i, v in enumerate(values)}
    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
             f'viewBox="0 0 {width} {height}" role="img" aria-label="records and the identifiers they share">',
             f'<text x="{left}" y="22" font-weight="bold">records</text>',
             f'<text x="{right}" y="22" font-weight="bold">identifier values</text>']
    for v in values:
        colour = KIND_COLOURS.get(v[0], "#555")
        for rid in sorted(holders[v]):
            if rid in y_rec:
                w = 2 if len(holders[v]) > 1 else 1
                parts.append(f'<line x1="{left + 230}" y1="{y_rec[rid]}" x2="{right - 10}" '
                             f'y2="{y_val[v]}" stroke="{colour}" stroke-width="{w}"/>')
    for rid in ids:
        y = y_rec[rid]
        parts.append(f'<rect x="{left}" y="{y - 13}" width="230" height="24" rx="4" '
                     f'fill="#eef2f7" stroke="#7f8c8d"/>')
        parts.append(f'<text x="{left + 8}" y="{y + 4}">{_e(_clip(rid + "  " + names.get(rid, ""), 34))}</text>')
    for v in values:
        y = y_val[v]
        colour = KIND_COLOURS.get(v[0], "#555")
        shared = len(holders[v]) > 1
        parts.append(f'<circle cx="{right}" cy="{y}" r="6" fill="{colour}"/>')
        label = f"{v[0]}: {_clip(v[1])}" + (f"  (held by {len(holders[v])})" if shared else "")
        weight = ' font-weight="bold"' if shared else ""
        parts.append(f'<text x="{right + 14}" y="{y + 4}"{weight}>{_e(label)}</text>')
    if hidden:
        parts.append(f'<text x="{right}" y="{height - 12}" class="muted">{hidden} more values not drawn</text>')
    parts.append("</svg>")
    return "".join(parts)


def case_page(doc: dict) -> str:
    """The HTML evidence page of one case document (`resolve.exports.cases.case_documents`)."""
    ev = doc.get("evidence") or {}
    records = ev.get("records") or []
    links = ev.get("links") or []
    title = f"Case {doc['case_id']}: evidence for review"
    facts = [
        ("status", doc.get("status")), ("opened by", doc.get("opened_by")),
        ("opened at (UTC)", doc.get("opened_at")), ("cluster", doc.get("cluster_key")),
        ("records", ", ".join(doc.get("record_ids") or [])), ("note", doc.get("note")),
        ("evidence from run", ev.get("run_id")),
    ]
    facts_html = "".join(f"<tr><th>{_e(k)}</th><td>{_e(v)}</td></tr>" for k, v in facts)
    more = ""
    if ev.get("links_total", len(links)) > len(links):
        more = f'<p class="muted">{ev["links_total"] - len(links)} weaker links not shown.</p>'
    return "".join([
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">",
        f"<title>{_e(title)}</title><style>{STYLE}</style></head><body>",
        f"<h1>{_e(title)}</h1>",
        f'<p class="caution"><strong>Caution.</strong> {_e(CAUTION)}</p>',
        f"<table>{facts_html}</table>",
        "<h2>Records side by side</h2>",
        '<p class="muted">As recorded when the case was opened; national IDs show their last '
        "four characters only.</p>",
        _side_by_side(records),
        "<h2>Who shares which identifier</h2>",
        sharing_svg(records, ev.get("identifiers") or []),
        "<h2>Links between the records</h2>",
        _table(links, ["record_id_a", "record_id_b", "prob", "link_type", "reasons"]), more,
        "<h2>Flags at escalation</h2>",
        _table(ev.get("flags") or [], ["record_id", "flag", "severity", "reason"]),
        f"<h2>Flags in the latest run ({_e(doc.get('current_run'))})</h2>",
        _table(doc.get("current_flags") or [], ["record_id", "flag", "severity", "reason"]),
        "<h2>Notes</h2>",
        _table(doc.get("notes") or [], ["decision_id", "reviewer", "decided_at", "note"]),
        "<h2>Decisions on these records</h2>",
        _table(doc.get("decisions") or [], ["decision_id", "action", "reviewer", "decided_at",
                                            "in_force", "approved_by", "superseded_by", "note"]),
        "</body></html>\n",
    ])
