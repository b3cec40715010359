"""A follow-up rule: entities that share contact details with an entity already flagged.

When an analyst finds an identity built on a never-issued or borrowed national ID, the next
question is who else uses its phone, email or address. A fabricated identity that shares a
mobile with one other fabricated identity is too small to make a ring, but its partner's bad
ID gives it away. This rule runs after the others, on their flags: an entity sharing a
contact value, with no household or same-person explanation (as `ring_pattern` defines it),
with an entity that carries one of the ``from_flags`` gets a flag naming that value and the
partner's flag. It looks one step out only, so a flag never spreads along a chain.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.signals.contacts import unexplained_pairs
from resolve.signals.context import Inputs, hits, number_groups

PARTNER_WORDING = {
    "shared_national_id_conflict": "whose national ID is also carried by people with another name and birth date",
    "national_id_never_issued": "whose national ID is in a range that is never issued",
    "national_id_known_misused": "whose national ID is a published sample number",
    "ring_pattern": "that is part of a ring of entities sharing phones and emails",
    "several_national_ids": "that carries several national IDs",
}


def linked_to_flagged(inp: Inputs, params: dict, flags: pd.DataFrame) -> pd.DataFrame:
    """Records of entities sharing a contact value nothing explains with a flagged entity.

    ``flags`` holds the flags of the first pass (``rec``, ``flag``, ``severity``); entities
    with a flag in ``from_flags`` at a severity in ``from_severities`` are the starting
    points. Entities that carry such a flag themselves are not flagged again.
    """
    source = flags[flags["flag"].isin(params["from_flags"]) & flags["severity"].isin(params["from_severities"])]
    if source.empty:
        return hits([], [], "group")
    rec_ent = pd.Series(inp.records["ent"].to_numpy(), index=inp.records["rec"].to_numpy())
    start = pd.DataFrame({"ent": rec_ent.reindex(source["rec"].to_numpy()).to_numpy(),
                          "partner_flag": source["flag"].astype("string").to_numpy()}).drop_duplicates()
    ring = inp.rules["ring_pattern"]["parameters"]
    joined = {**ring, "kinds": params["kinds"], "statuses": params["statuses"],
              "max_entities_per_value": params["max_entities_per_value"]}
    pairs = unexplained_pairs(inp, joined)
    if pairs.empty:
        return hits([], [], "group")
    both = pd.concat([
        pairs.rename(columns={"ent_a": "ent", "ent_b": "partner"}),
        pairs.rename(columns={"ent_b": "ent", "ent_a": "partner"}),
    ], ignore_index=True)
    both = both.merge(start.rename(columns={"ent": "partner"}), on="partner")
    flagged_ents = start["ent"].unique()
    both = both[~np.isin(both["ent"].to_numpy(), flagged_ents)]
    if both.empty:
        return hits([], [], "group")
    # the entity's own records that carry the shared value
    mine = np.zeros(int(inp.records["ent"].max()) + 1, dtype=bool)
    mine[both["ent"].to_numpy()] = True
    rows = inp.ids[mine[inp.ids["ent"].to_numpy()]]
    carry = rows[["row", "rec", "ent", "kid", "kind"]].merge(both[["ent", "kid", "partner_flag"]], on=["ent", "kid"])
    carry = carry.drop_duplicates(["rec", "kid", "partner_flag"])
    wording = carry["partner_flag"].map(PARTNER_WORDING).astype("string")
    wording = wording.fillna("flagged " + carry["partner_flag"].astype("string"))
    reason = (
        "Shares " + inp.describe(carry).str.replace(r"^(\w)", lambda m: m.group(1).lower(), regex=True)
        + " with another entity " + wording
        + "; no family name, shared home or same-person match explains it."
    )
    return hits(carry["rec"], reason, "group", number_groups(carry["kid"], "linked"))
