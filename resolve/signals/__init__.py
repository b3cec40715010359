"""Risk signals: flags with reason codes and sentences on records, entities and groups.

Investigators need leads, not verdicts: a short list of records whose identifiers show a
pattern seen in fabricated or stolen identities (Federal Reserve synthetic identity material,
docs/signals.md), each with a reason code they can filter on and a sentence naming the
evidence. Every rule lives in a readable, tunable table (resolve/data/signal_rules.toml).

A flag is a lead for human review, never a finding about a person. Take no adverse action on
a flag alone; follow your institution's procedures and local law.
"""

from __future__ import annotations

import pandas as pd

from resolve.signals import associates, id_checks, identity, record, sharing
from resolve.signals.context import prepare
from resolve.signals.rules import SEVERITIES, load_rules, merge_rules

COLUMNS = ("record_id", "flag", "severity", "reason", "scope", "entity_id", "group_id")
SCOPES = ("record", "entity", "group")

RULES = {
    "shared_national_id_conflict": identity.shared_id_conflict,
    "shared_national_id_likely_holder": identity.likely_holder,
    "several_national_ids": identity.several_ids,
    "several_national_ids_merge_doubt": identity.several_ids_merge_doubt,
    "national_id_never_issued": id_checks.never_issued,
    "national_id_known_misused": id_checks.known_misused,
    "national_id_invalid": id_checks.invalid,
    "placeholder_identifier": sharing.placeholder,
    "identifier_hub": sharing.hub,
    "ring_pattern": sharing.ring,
    "implausible_age": record.implausible_age,
    "burst_shared_identifier": sharing.burst,
    "unusual_phone_type": record.unusual_phone_type,
}
FOLLOW_UP_RULES = {  # rules that read the flags of the rules above
    "linked_to_flagged_entity": associates.linked_to_flagged,
}


def compute_signals(
    people: pd.DataFrame,
    identifiers: pd.DataFrame,
    entities: pd.DataFrame,
    links: pd.DataFrame | None = None,
    groups: pd.DataFrame | None = None,
    rules: dict | None = None,
    today=None,
) -> pd.DataFrame:
    """Apply every enabled rule; one row per (record, flag, reason), sorted by record.

    Columns: record_id, flag (rule code), severity (low/medium/high), reason (one sentence,
    national IDs and phones masked to their last four characters), scope (record, entity or
    group), entity_id (as given in ``entities``) and group_id (a run-local label such as
    ``shared-id-00001``, or for a ring lying inside one identity-sharing group of ``groups``
    that group's group_id; blank for record and entity flags).

    ``rules`` is a dict shaped like the rule file (any subset; it is applied over the packaged
    defaults) or the result of `load_rules`. Rules in `FOLLOW_UP_RULES` run last and read
    the flags of the others. ``today`` (date, string or Timestamp) is the
    reference date for ages of records with no creation date; pass it for repeatable output.
    """
    table = merge_rules(rules) if rules is not None else load_rules()
    inp = prepare(people, identifiers, entities, links, groups, today)
    inp.rules = table
    found = []
    for code in RULES:
        rule = table[code]
        if not rule["enabled"]:
            continue
        out = RULES[code](inp, rule["parameters"])
        if len(out):
            found.append(out.assign(flag=code, severity=rule["severity"]))
    first_pass = pd.concat(found, ignore_index=True) if found else pd.DataFrame(
        {"rec": pd.Series(dtype="int64"), "flag": pd.Series(dtype="string"), "severity": pd.Series(dtype="string")})
    for code, follow_up in FOLLOW_UP_RULES.items():
        rule = table[code]
        if rule["enabled"]:
            out = follow_up(inp, rule["parameters"], first_pass)
            if len(out):
                found.append(out.assign(flag=code, severity=rule["severity"]))
    if not found:
        return _empty(inp.records)
    flags = pd.concat(found, ignore_index=True)
    recs = inp.records.set_index("rec")
    flags["record_id"] = recs["record_id"].reindex(flags["rec"]).to_numpy()
    flags["entity_id"] = recs["entity_id"].reindex(flags["rec"]).to_numpy()
    flags = flags.drop_duplicates(["rec", "flag", "reason"])
    flags = flags.sort_values(["rec", "flag", "reason"], kind="stable").reset_index(drop=True)
    out = flags[list(COLUMNS)].copy()
    for column in ("record_id", "flag", "severity", "reason", "scope", "group_id"):
        out[column] = out[column].astype("string")
    return out


def _empty(records: pd.DataFrame) -> pd.DataFrame:
    out = pd.DataFrame({c: pd.Series(dtype="string") for c in COLUMNS})
    out["entity_id"] = pd.Series(dtype=records["entity_id"].dtype)
    return out


__all__ = ["COLUMNS", "FOLLOW_UP_RULES", "RULES", "SCOPES", "SEVERITIES", "compute_signals", "load_rules",
           "merge_rules"]
