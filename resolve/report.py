"""Plain-text renderings of library results for the terminal (no colour needed, no UI)."""

from __future__ import annotations


def _table(headers: list[str], rows: list[list]) -> str:
    cells = [[str(h) for h in headers]] + [[("" if v is None else str(v)) for v in r] for r in rows]
    widths = [max(len(r[i]) for r in cells) for i in range(len(headers))]
    lines = []
    for j, row in enumerate(cells):
        lines.append("  ".join(v.ljust(widths[i]) if i == 0 else v.rjust(widths[i])
                               for i, v in enumerate(row)).rstrip())
        if j == 0:
            lines.append("  ".join("-" * w for w in widths))
    return "\n".join(lines)


def format_profile(p: dict) -> str:
    """Render the dict from `resolve.profile.profile_extract` as readable tables."""
    out = [f"Input rows {p['input_rows']:,} = accepted {p['accepted']:,} + quarantined "
           f"{p['quarantined']:,}", ""]
    out.append(_table(["file", "rows", "accepted", "quarantined", "encoding"],
                      [[f["file"], f"{f['rows']:,}", f"{f['accepted']:,}", f"{f['quarantined']:,}",
                        f["encoding"]] for f in p["files"]]))
    out += ["", "Fill rate by role (column)"]
    out.append(_table(["role (column)", "filled", "rate"],
                      [[k, f"{v['filled']:,}", f"{v['rate']:.1%}"] for k, v in p["fill"].items()]))
    out += ["", "Identifier quality"]
    rows = []
    for kind, q in p["quality"].items():
        top = ", ".join(f"{k} {v:,}" for k, v in list(q["top_reasons"].items())[:3])
        rows.append([kind, f"{q['values']:,}", f"{q['valid']:,}", f"{q['invalid']:,}",
                     f"{q['placeholder']:,}", f"{q['missing']:,}", top])
    out.append(_table(["kind", "values", "valid", "invalid", "placeholder", "missing",
                       "top reasons"], rows))
    if p["most_shared_values"]:
        out += ["", "Most shared identifier values (check for placeholders and hubs)"]
        out.append(_table(["kind", "value", "records", "status"],
                          [[s["kind"], s["value"], s["records"], s["status"]]
                           for s in p["most_shared_values"]]))
    if p["quarantined"]:
        out += ["", "Quarantined rows by reason"]
        out.append(_table(["reason", "rows"],
                          [[k, f"{v:,}"] for k, v in p["quarantine_reasons"].items()]))
    for note in p.get("notes", []):
        out.append(f"note: {note}")
    return "\n".join(out)


def format_run_summary(s) -> str:
    """Render a `resolve.pipeline.RunSummary` as a short summary."""
    links = ", ".join(f"{k} {v:,}" for k, v in sorted(s.links.items()))
    total = sum(s.timings.values())
    lines = [
        f"{s.run_id} saved in {s.project}",
        f"Input rows {s.input_rows:,} = accepted {s.accepted:,} + quarantined {s.quarantined:,}",
        f"Candidate pairs {s.candidate_pairs:,}; links: {links}",
        f"Entities {s.entities:,} ({s.multi_record_entities:,} with several records); "
        f"households {s.households:,}; identity-sharing groups {s.groups:,}",
        f"Flags {s.flags:,} on {s.flagged_records:,} records; review queue {s.queue:,} items",
        f"Thresholds: auto {s.model['thresholds']['auto']:.3f}, "
        f"review {s.model['thresholds']['review']:.3f}",
        "Stages: " + ", ".join(f"{k} {v:.1f}s" for k, v in s.timings.items())
        + f" (total {total:.1f}s)",
        "Links and flags are leads for human review, not findings about a person.",
    ]
    lines += [f"note: {n}" for n in s.notes]
    return "\n".join(lines)
