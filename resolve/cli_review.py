"""Review commands of the `resolve` command line: queue, decide, status, audit, reveal, export.

A thin layer: each command parses options, calls the library (`resolve.project`,
`resolve.exports`) and prints a short summary. Library errors become one line on stderr and
exit code 1 (`resolve.cli.guarded`); wrong option combinations are usage errors (exit 2).
The commands register themselves on the `resolve` group when this module is imported.
"""

from __future__ import annotations

import json
import sys

import click

from resolve.cli import CONTEXT, guarded, main, project_option

EXPORT_KINDS = ("entities", "households", "flags", "merges", "cases", "audit")
QUEUE_KINDS = ("entity", "split", "household", "group", "flagged")
QUEUE_STATES = ("open", "decided", "awaiting_approval", "reopened")
ACTIONS = ("accept", "reject", "split", "household", "not-household", "escalate", "note",
           "undo", "approve")
BULK_ACTIONS = ("accept", "reject", "household", "not-household")
TEXT_ROWS = 50


def _plain(value):
    """JSON-ready scalar (pandas missing values become null)."""
    import pandas as pd

    if value is None or (not isinstance(value, (str, list, dict)) and pd.isna(value)):
        return None
    if hasattr(value, "item"):
        return value.item()
    return value


def _clip(text: str, n: int) -> str:
    return text if len(text) <= n else text[: n - 1] + "~"


@main.command("export", context_settings=CONTEXT)
@click.argument("kind", type=click.Choice(EXPORT_KINDS))
@project_option
@click.option("--out", "out", required=True, type=click.Path(dir_okay=False),
              help="File to write (created readable by you only).")
@click.option("--case", "case_id", type=int, default=None,
              help="One case only (cases export); required for --format html.")
@click.option("--format", "fmt", type=click.Choice(["csv", "json", "html"]), default=None,
              help="Default: from the --out suffix, else csv (cases: json).")
@click.option("--reviewer", "actor", default=None,
              help="Name the audit log records as exporter (default: your login name).")
@guarded
def export_command(kind, project, out, case_id, fmt, actor):
    """Export KIND from the project: entities, households, flags, merges, cases or audit.

    Every export is written to the audit log with the file's SHA-256. CSV cells that a
    spreadsheet would run as formulas are escaped (docs/exports.md).

    \b
    Examples:
      resolve export merges --project book --out merges.csv
      resolve export cases --project book --case 3 --format html --out case-3.html
    """
    from resolve.exports import export

    result = export(project, kind, out, fmt=fmt, case_id=case_id, actor=actor)
    unit = "cases" if kind == "cases" else "rows"
    click.echo(f"wrote {result.rows} {unit} of {kind} ({result.fmt}) to {result.path}")
    click.echo(f"sha256 {result.sha256}")
    for note in result.notes:
        click.echo(f"note: {note}", err=True)


@main.command("queue", context_settings=CONTEXT)
@project_option
@click.option("--json", "as_json", is_flag=True, help="Print the items as JSON.")
@click.option("--kind", type=click.Choice(QUEUE_KINDS), default=None, help="Only this kind of item.")
@click.option("--state", type=click.Choice(QUEUE_STATES), default=None, help="Only items in this state.")
@click.option("--limit", type=click.IntRange(min=1), default=None,
              help=f"At most N items (text output shows {TEXT_ROWS} unless given).")
@guarded
def queue_command(project, as_json, kind, state, limit):
    """List what awaits review, most pressing first, with stable cluster keys.

    States: open, decided, awaiting_approval (four-eyes), reopened (decided before, but the
    evidence changed in the latest run).

    \b
    Examples:
      resolve queue --project book --state open --limit 20
      resolve queue --project book --kind group --json > groups.json
    """
    from resolve.project.status import queue_state

    q = queue_state(project)
    if kind:
        q = q[q["kind"] == kind]
    if state:
        q = q[q["state"] == state]
    total = len(q)
    shown = q.head(limit if limit else (total if as_json else TEXT_ROWS))
    if as_json:
        items = []
        for row in shown.to_dict(orient="records"):
            item = {k: _plain(v) for k, v in row.items()}
            for k in ("record_ids", "entity_ids"):
                item[k] = str(item[k]).split(";") if item.get(k) else []
            items.append(item)
        click.echo(json.dumps(items, indent=2))
        return
    if total == 0:
        click.echo("nothing in the queue matches.")
        return
    click.echo(f"{'cluster':<20} {'kind':<10} {'size':>5} {'score':>6} {'prio':>6} {'state':<17} records")
    for row in shown.itertuples(index=False):
        score = "" if _plain(row.score) is None else f"{float(row.score):.2f}"
        click.echo(f"{row.cluster_key:<20} {row.kind:<10} {int(row.size):>5} {score:>6} "
                   f"{float(row.priority):>6.1f} {row.state:<17} "
                   f"{_clip(str(row.record_ids).replace(';', ','), 40)}")
    if len(shown) < total:
        click.echo(f"... {total - len(shown)} more; use --limit or --json.")


def _summary(decision) -> str:
    text = f"decision {decision.decision_id} recorded: {decision.action.replace('_', '-')}"
    if decision.target_id is not None:
        text += f" of decision {decision.target_id}"
    else:
        text += " " + _clip(", ".join(decision.record_ids), 60)
    text += f" by {decision.reviewer}"
    if decision.survivor_record_id:
        text += f" (survivor {decision.survivor_record_id})"
    if decision.case_id is not None:
        text += f"; case {decision.case_id} opened"
    if decision.supersedes:
        text += f"; supersedes {', '.join(map(str, decision.supersedes))}"
    if not decision.counts:
        text += "; awaiting approval by a second reviewer"
    return text


@main.command("decide", context_settings=CONTEXT)
@project_option
@click.option("--cluster", "cluster_key", default=None, help="Queue item key (from 'resolve queue').")
@click.option("--records", "record_ids", default=None, help="Record IDs separated by commas.")
@click.option("--action", required=True, type=click.Choice(ACTIONS), help="What you decide.")
@click.option("--reviewer", required=True, help="Your name, as the audit log should show it.")
@click.option("--groups", default=None, help='Split groups: records by ",", groups by ";" ("A,B;C").')
@click.option("--note", default=None, help="A note (required for note and escalate).")
@click.option("--decision", "target_id", type=int, default=None,
              help="The decision to undo or approve.")
@guarded
def decide_command(project, cluster_key, record_ids, action, reviewer, groups, note, target_id):
    """Record one decision (one transaction, written to the audit log).

    accept: one person; reject: not one person; split: --groups "A,B;C"; household /
    not-household; escalate: open a case (needs --note); note; undo / approve --decision ID
    (approve must come from a different reviewer).

    \b
    Examples:
      resolve decide --project book --cluster ent-3f2a9c1d0b7e --action accept --reviewer ana
      resolve decide --project book --records C001,C002,C003 --action split \\
          --groups "C001,C002;C003" --reviewer ana --note "C003 is the father"
      resolve decide --project book --action approve --decision 12 --reviewer ben
    """
    from resolve.project.decisions import record_decision

    if action in ("undo", "approve"):
        if target_id is None:
            raise click.UsageError(f"--action {action} needs --decision ID.")
        if cluster_key or record_ids or groups:
            raise click.UsageError(f"--action {action} takes --decision, not --cluster/--records/--groups.")
    else:
        if bool(cluster_key) == bool(record_ids) and not (action == "split" and groups and not cluster_key):
            raise click.UsageError("give exactly one of --cluster KEY or --records ID,ID,...")
        if target_id is not None:
            raise click.UsageError("--decision is only for --action undo or approve.")
    decision = record_decision(project, action, reviewer, cluster_key=cluster_key,
                               record_ids=record_ids, groups=groups, note=note, target_id=target_id)
    click.echo(_summary(decision))


@main.command("decide-bulk", context_settings=CONTEXT)
@project_option
@click.option("--action", required=True, type=click.Choice(BULK_ACTIONS), help="What to decide.")
@click.option("--reviewer", required=True, help="Your name, as the audit log should show it.")
@click.option("--kind", type=click.Choice(QUEUE_KINDS), default=None, help="Only this kind of item.")
@click.option("--min-score", type=click.FloatRange(0, 1), default=None, help="Only items scoring at least this.")
@click.option("--max-score", type=click.FloatRange(0, 1), default=None, help="Only items scoring at most this.")
@click.option("--limit", type=click.IntRange(min=1), default=None, help="At most N items.")
@click.option("--note", default=None, help="A note written on every decision.")
@click.option("--dry-run", is_flag=True, help="List what would be decided; write nothing.")
@guarded
def decide_bulk_command(project, action, reviewer, kind, min_score, max_score, limit, note, dry_run):
    """Decide every open queue item matching the filter, in one transaction.

    Items that would contradict a standing decision are skipped and listed.

    \b
    Example:
      resolve decide-bulk --project book --action accept --kind entity --min-score 0.99 \\
          --reviewer ana --dry-run
    """
    from resolve.project.decisions import decide_bulk

    result = decide_bulk(project, action, reviewer, kind=kind, min_score=min_score,
                         max_score=max_score, limit=limit, note=note, dry_run=dry_run)
    verb = action.replace("-", " ")
    if dry_run:
        click.echo(f"would {verb} {len(result.candidates)} items (dry run, nothing written):")
        for key in result.candidates["cluster_key"].head(TEXT_ROWS):
            click.echo(f"  {key}")
        return
    ids = [d.decision_id for d in result.decided]
    span = f" (decisions {min(ids)}-{max(ids)})" if ids else ""
    click.echo(f"{verb}: {len(ids)} items decided{span}; {len(result.skipped)} skipped")
    for key, reason in result.skipped[:TEXT_ROWS]:
        click.echo(f"  skipped {key}: {reason}")


@main.command("status", context_settings=CONTEXT)
@project_option
@click.option("--json", "as_json", is_flag=True, help="Print the status as JSON.")
@guarded
def status_command(project, as_json):
    """Runs, the queue by kind and state, decisions by reviewer and action, audit head.

    \b
    Example:
      resolve status --project book --json
    """
    from resolve.project.status import project_status

    s = project_status(project)
    if as_json:
        click.echo(json.dumps(s, indent=2, default=str))
        return
    click.echo(f"project {s['project']}  (four-eyes {'on' if s['four_eyes'] else 'off'}, "
               f"survivor rule {s['survivor_rule']})")
    for r in s["runs"]:
        extra = f", {r['entities']} entities" if "entities" in r else ""
        click.echo(f"  {r['run_id']}  {r.get('created')}  {r.get('accepted')} records, "
                   f"{r.get('queue')} queue items{extra}")
    states = ", ".join(f"{k} {v}" for k, v in s["queue"]["by_state"].items())
    click.echo(f"queue: {states}")
    for kind, per in s["queue"]["by_kind_and_state"].items():
        click.echo(f"  {kind}: " + ", ".join(f"{k} {v}" for k, v in sorted(per.items())))
    d = s["decisions"]
    click.echo(f"decisions: {d['total']} recorded, {d['in_force']} in force, "
               f"{d['awaiting_approval']} awaiting approval, {d['superseded']} superseded")
    for reviewer, per in sorted(d["by_reviewer"].items()):
        click.echo(f"  {reviewer}: " + ", ".join(f"{k} {v}" for k, v in sorted(per.items())))
    click.echo(f"cases: {s['cases']['open']} open, {s['cases']['withdrawn']} withdrawn")
    click.echo(f"audit: {s['audit']['entries']} entries, head {s['audit']['head']}")


@main.group("audit", context_settings=CONTEXT)
def audit_group():
    """Check or show the tamper-evident audit log.

    \b
    Examples:
      resolve audit verify --project book
      resolve audit show --project book --limit 20
    """


@audit_group.command("verify", context_settings=CONTEXT)
@project_option
@guarded
def audit_verify_command(project):
    """Recompute the audit hash chain; exit 1 naming the first broken entry.

    Keep the printed head hash somewhere else: a later verify that shows the same entries
    and head proves nothing was removed from the end.

    \b
    Example:
      resolve audit verify --project book
    """
    from resolve.project.audit import verify_audit

    ok, seq, message = verify_audit(project)
    if ok:
        click.echo(f"ok: {message}")
        return
    where = f" at entry {seq}" if seq is not None else ""
    click.echo(f"error: audit log broken{where}: {message}", err=True)
    sys.exit(1)


@audit_group.command("show", context_settings=CONTEXT)
@project_option
@click.option("--limit", type=click.IntRange(min=1), default=20, show_default=True,
              help="Show the newest N entries.")
@click.option("--json", "as_json", is_flag=True, help="Print entries as JSON.")
@guarded
def audit_show_command(project, limit, as_json):
    """Show the newest audit entries.

    \b
    Example:
      resolve audit show --project book --limit 5
    """
    from resolve.project.audit import audit_frame
    from resolve.project.store import ReviewStore
    from resolve.project.runs import Project

    with ReviewStore.open(Project.open(project).path) as store:
        log = audit_frame(store).tail(limit)
    if as_json:
        rows = [{k: _plain(v) for k, v in r.items()} for r in log.to_dict(orient="records")]
        for r in rows:
            r["details"] = json.loads(r["details"])
        click.echo(json.dumps(rows, indent=2))
        return
    for r in log.itertuples(index=False):
        click.echo(f"{r.seq:>6}  {r.at}  {r.actor:<12} {r.action:<14} {r.subject}")


@main.command("reveal", context_settings=CONTEXT)
@project_option
@click.option("--record", "record_id", required=True, help="The record whose national IDs to show.")
@click.option("--reviewer", required=True, help="Your name; the reveal is written to the audit log.")
@guarded
def reveal_command(project, record_id, reviewer):
    """Print the unmasked national IDs of one record (an audited action).

    \b
    Example:
      resolve reveal --project book --record C001 --reviewer ana
    """
    from resolve.project.decisions import record_reveal

    found = record_reveal(project, reviewer, record_id)
    if found.empty:
        click.echo(f"record {record_id} holds no national ID (the look-up is logged).")
        return
    for row in found.itertuples(index=False):
        kind = _plain(row.id_type) or "national ID"
        click.echo(f"{row.slot}: {row.raw}  ({kind}, {_plain(row.status) or 'unchecked'})")
    click.echo(f"revealed {len(found)} national ID(s) of record {record_id}; logged in the audit log.")
