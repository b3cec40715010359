"""Rules about national IDs: shared across disagreeing people, several per person, never issued.

The primary elements of a fabricated identity are a name, a birth date and a national ID
(Federal Reserve synthetic identity definition, 2021; see docs/signals.md). These rules look
for the national-ID shapes of that pattern: one ID carried by entities that disagree on name
and birth date, one entity carrying several IDs, and IDs from ranges never issued or known to
be misused (the normaliser sets those reason codes; this module only words them).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from rapidfuzz import process
from rapidfuzz.distance import OSA

from resolve.errors import InputError
from resolve.signals.context import Inputs, entities_per_value, entity_pairs, hits, number_groups, plural

NEVER_ISSUED_WORDING = {
    "never_issued_area": "has an area number (first three digits) that is never issued",
    "never_issued_group": "has a group number (middle two digits) that is never issued",
    "never_issued_serial": "has a serial number (last four digits) that is never issued",
}
INVALID_WORDING = {  # reason codes of resolve.normalise.national_id
    "bad_checksum": "fails its check digit",
    "wrong_length": "has the wrong number of characters",
    "bad_format": "is not in a recognised format",
    "bad_prefix": "has a prefix its issuer never uses",
    "bad_suffix": "has a suffix its issuer never uses",
    "missing_suffix": "lacks its suffix letter",
    "bad_component": "has a part outside the issuer's allowed values",
}


def _national_ids(inp: Inputs) -> pd.DataFrame:
    return inp.ids[inp.ids["kind"] == "national_id"]


def _worded(rows: pd.DataFrame, wording: dict, fallback_prefix: str) -> pd.Series:
    """Sentence part per row from its reason code, with a fallback naming the code."""
    reason = rows["reason"].astype("string")
    known = reason.map(wording).astype("string")
    return known.fillna(fallback_prefix + " (" + reason.fillna("no reason given") + ")")


def never_issued(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records carrying a national ID whose reason code says it is never issued."""
    ids = _national_ids(inp)
    ids = ids[ids["reason"].isin(params["reasons"])]
    wording = _worded(ids, NEVER_ISSUED_WORDING, "is in a range that is never issued")
    return hits(ids["rec"], inp.describe(ids) + " " + wording + ".", "record")


def known_misused(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records carrying a national ID that is a known, widely misused sample number."""
    ids = _national_ids(inp)
    ids = ids[ids["reason"].isin(params["reasons"])]
    reason = inp.describe(ids) + " is a published sample number known to be widely misused."
    return hits(ids["rec"], reason, "record")


def invalid(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records carrying a national ID that fails validation, except for ``skip_reasons``.

    The skipped reason codes are those the never-issued and known-misused rules word better.
    """
    ids = _national_ids(inp)
    ids = ids[ids["status"].isin(params["statuses"]) & ~ids["reason"].isin(params["skip_reasons"])]
    wording = _worded(ids, INVALID_WORDING, "is not valid")
    return hits(ids["rec"], inp.describe(ids) + " " + wording + ".", "record")


def _conflicting_pairs(inp: Inputs, pairs: pd.DataFrame, either: bool) -> pd.DataFrame:
    """The (kid, ent_a, ent_b) rows of ``pairs`` whose entities disagree on name and birth date."""
    profiles = inp.records[["ent", "given", "family", "birth"]].drop_duplicates()
    both = pairs.merge(profiles.add_suffix("_a"), on="ent_a").merge(profiles.add_suffix("_b"), on="ent_b")
    ga, fa, gb, fb = (both[c].to_numpy() for c in ("given_a", "family_a", "given_b", "family_b"))
    named = (ga >= 0) & (fa >= 0) & (gb >= 0) & (fb >= 0)
    same_name = named & (((ga == gb) & (fa == fb)) | ((ga == fb) & (fa == gb)))
    dated = both["birth_a"].notna().to_numpy() & both["birth_b"].notna().to_numpy()
    same_date = dated & (both["birth_a"] == both["birth_b"]).to_numpy()
    agg = pd.DataFrame({
        "kid": both["kid"].to_numpy(), "ent_a": both["ent_a"].to_numpy(), "ent_b": both["ent_b"].to_numpy(),
        "named": named, "same_name": same_name, "dated": dated, "same_date": same_date,
    }).groupby(["kid", "ent_a", "ent_b"], sort=False).any().reset_index()
    name_differs = agg["named"] & ~agg["same_name"]
    date_differs = agg["dated"] & ~agg["same_date"]
    return agg[(name_differs | date_differs) if either else (name_differs & date_differs)]


def shared_id_conflict(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records whose national ID is also carried by entities that disagree on name and birth date.

    Two entities disagree on the name when some record of each has a name and no record of
    one has the same given and family name as a record of the other (swapped order counts as
    the same); likewise for the birth date. ``differ_on = "both"`` needs both to disagree,
    ``"either"`` one of them. Missing values never make a disagreement.
    """
    ids = _national_ids(inp)
    ids = ids[ids["status"].isin(params["statuses"]) & (ids["kid"] >= 0)]
    count = entities_per_value(ids)
    holders = ids.loc[(count >= params["min_entities"]) & (count <= params["max_entities_compared"]), ["kid", "ent"]]
    if params["differ_on"] not in ("both", "either"):
        raise InputError("Parameter 'differ_on' of shared_national_id_conflict must be \"both\" or \"either\".")
    either = params["differ_on"] == "either"
    conflict = _conflicting_pairs(inp, entity_pairs(holders), either)
    if conflict.empty:
        return hits([], [], "group")
    ends = pd.concat([
        conflict[["kid", "ent_a"]].rename(columns={"ent_a": "ent"}),
        conflict[["kid", "ent_b"]].rename(columns={"ent_b": "ent"}),
    ])
    others = ends.groupby(["kid", "ent"]).size().rename("others").reset_index()
    flagged = ids.merge(others, on=["kid", "ent"])
    one = flagged["others"].to_numpy() == 1
    joiner = " or " if either else " and "
    reason = (
        inp.describe(flagged) + " is also carried by "
        + plural(flagged["others"], "other entity", "other entities")
        + np.where(one, " whose name", " whose names") + joiner
        + np.where(one, "birth date differ.", "birth dates differ.")
    )
    return hits(flagged["rec"], reason, "group", number_groups(flagged["kid"], "shared-id"))


def several_ids(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records of an entity that carries ``min_ids`` or more clearly different national IDs.

    With ``same_type_only`` the IDs are counted per ID type (the identifier's ``detail``), so a
    person with a home-country and a foreign ID is not flagged. Two IDs closer than
    ``min_edit_distance`` (optimal string alignment: one wrong, missing or extra character, or
    two neighbours swapped, is distance 1) are taken for a typing slip and not counted.
    """
    ids = _national_ids(inp)
    ids = ids[ids["status"].isin(params["statuses"]) & (ids["kid"] >= 0)]
    if params["same_type_only"]:
        id_type = ids["detail"].astype("string").fillna("unknown")
    else:
        id_type = pd.Series("any", index=ids.index, dtype="string")
    ids = ids.assign(id_type=id_type)
    held = ids[["ent", "id_type", "kid", "row"]].drop_duplicates(["ent", "id_type", "kid"])
    pairs = held.merge(held, on=["ent", "id_type"], suffixes=("_a", "_b"))
    pairs = pairs[pairs["kid_a"] < pairs["kid_b"]]
    values = inp.values.to_numpy(dtype=object, na_value="")
    distance = process.cpdist(values[pairs["row_a"].to_numpy()], values[pairs["row_b"].to_numpy()],
                              scorer=OSA.distance)
    far = pairs[np.asarray(distance) >= params["min_edit_distance"]]
    ends = pd.concat([
        far[["ent", "id_type", "kid_a"]].rename(columns={"kid_a": "kid"}),
        far[["ent", "id_type", "kid_b"]].rename(columns={"kid_b": "kid"}),
    ]).drop_duplicates()
    ends["n"] = ends.groupby(["ent", "id_type"])["kid"].transform("size")
    ends = ends[ends["n"] >= params["min_ids"]]
    flagged = ids.merge(ends, on=["ent", "id_type", "kid"])
    type_words = ("" if not params["same_type_only"] else " of type " + flagged["id_type"])
    reason = (
        "This entity carries " + flagged["n"].astype("string") + " different national IDs" + type_words
        + "; the one on this record ends in "
        + inp.describe(flagged).str.replace("National ID ending ", "", regex=False) + "."
    )
    return hits(flagged["rec"], reason, "entity")
