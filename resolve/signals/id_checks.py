"""Rules about one national ID on one record: never issued, known misused, invalid.

The national-ID normaliser decides whether a number could ever have been issued (for US SSNs,
the Social Security Administration's published never-assigned ranges), whether it is a
published sample number, and whether it passes its check digit and format. These rules word
those reason codes for a reviewer. One refinement needs the rest of the book: a number in a
never-issued range that is one typing slip from a valid number the same person gave elsewhere
(same entity, or an entity with the same family name and birth date) is most likely a typing
error, not a made-up number, and is reported as an invalid ID at low severity instead.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from rapidfuzz import process
from rapidfuzz.distance import OSA

from resolve.signals.context import Inputs, hits

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


def national_ids(inp: Inputs) -> pd.DataFrame:
    """The national ID rows of ``inp.ids`` (cached on ``inp``)."""
    if "national_ids" not in inp.cache:
        inp.cache["national_ids"] = inp.ids[(inp.ids["kind"] == "national_id").to_numpy(dtype=bool)]
    return inp.cache["national_ids"]


def _worded(rows: pd.DataFrame, wording: dict, fallback_prefix: str) -> pd.Series:
    """Sentence part per row from its reason code, with a fallback naming the code."""
    reason = rows["reason"].astype("string")
    known = reason.map(wording).astype("string")
    return known.fillna(fallback_prefix + " (" + reason.fillna("no reason given") + ")")


def typing_slips(inp: Inputs) -> pd.DataFrame:
    """Never-issued ID rows that are one typing slip from a valid ID of the same person.

    "The same person" is the same entity, or another entity with the same family name and
    the same birth date on some record. One typing slip is an optimal string alignment
    distance of 1 between the compact numbers (a wrong, missing or extra digit, or two
    neighbouring digits swapped). Returns the never-issued rows (index of ``inp.ids``) with
    ``near_row``, the ``row`` of the valid ID. Cached on ``inp``.
    """
    if "typing_slips" in inp.cache:
        return inp.cache["typing_slips"]
    reasons = inp.rules["national_id_never_issued"]["parameters"]["reasons"]
    ids = national_ids(inp)
    bad = ids[ids["reason"].isin(reasons)]
    valid = ids[(ids["status"] == "valid") & (ids["kid"] >= 0)][["ent", "row"]]
    found = bad.iloc[0:0].assign(near_row=pd.Series(dtype=np.int64))
    if len(bad) and len(valid):
        r = inp.records
        known = r[["ent", "family", "birth"]][((r["family"] >= 0) & r["birth"].notna()).to_numpy()]
        bad_ents = bad["ent"].unique()
        mine = known[np.isin(known["ent"].to_numpy(), bad_ents)][["ent", "family", "birth"]].drop_duplicates()
        person = known[np.isin(known["family"].to_numpy(), mine["family"].to_numpy())]
        person = person[["ent", "family", "birth"]].drop_duplicates()
        bad_people = mine
        alike = bad_people.merge(person.rename(columns={"ent": "other"}), on=["family", "birth"])[["ent", "other"]]
        itself = bad[["ent"]].drop_duplicates().assign(other=bad["ent"].drop_duplicates().to_numpy())
        others = pd.concat([itself, alike]).drop_duplicates()
        pairs = bad[["ent", "row"]].reset_index().merge(others, on="ent").merge(
            valid.rename(columns={"ent": "other", "row": "near_row"}), on="other")
        distance = np.asarray(process.cpdist(inp.texts(pairs["row"]), inp.texts(pairs["near_row"]),
                                             scorer=OSA.distance))
        near = pairs[distance <= 1].sort_values(["index", "near_row"]).drop_duplicates("index")
        found = bad.loc[near["index"].to_numpy()].assign(near_row=near["near_row"].to_numpy())
    inp.cache["typing_slips"] = found
    return found


def never_issued(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records carrying a national ID whose reason code says it is never issued.

    With ``typing_slips_excluded`` the IDs found by `typing_slips` are left to
    ``national_id_invalid``, which words them as probable typing errors.
    """
    ids = national_ids(inp)
    ids = ids[ids["reason"].isin(params["reasons"])]
    if params["typing_slips_excluded"]:
        ids = ids.drop(index=typing_slips(inp).index)
    wording = _worded(ids, NEVER_ISSUED_WORDING, "is in a range that is never issued")
    return hits(ids["rec"], inp.describe(ids) + " " + wording + ".", "record")


def known_misused(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records carrying a national ID that is a known, widely misused sample number."""
    ids = national_ids(inp)
    ids = ids[ids["reason"].isin(params["reasons"])]
    reason = inp.describe(ids) + " is a published sample number known to be widely misused."
    return hits(ids["rec"], reason, "record")


def invalid(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records carrying a national ID that fails validation, except for ``skip_reasons``.

    The skipped reason codes are those the never-issued and known-misused rules word better;
    never-issued IDs that `typing_slips` takes for a typing error come back here (when the
    never-issued rule leaves them out), worded as such.
    """
    ids = national_ids(inp)
    ids = ids[ids["status"].isin(params["statuses"]) & ~ids["reason"].isin(params["skip_reasons"])]
    wording = _worded(ids, INVALID_WORDING, "is not valid")
    out = [hits(ids["rec"], inp.describe(ids) + " " + wording + ".", "record")]
    never = inp.rules["national_id_never_issued"]
    if never["enabled"] and never["parameters"]["typing_slips_excluded"]:
        slips = typing_slips(inp)
        if len(slips):
            near = inp.ids.loc[slips["near_row"].to_numpy()]  # ids is indexed by its row number
            near_name = inp.describe(near).str.replace("National ID ending ", "", regex=False)
            reason = (
                inp.describe(slips) + " " + _worded(slips, NEVER_ISSUED_WORDING, "is in a range that is never issued")
                + ", but is one typing slip from the valid ID ending " + near_name.to_numpy()
                + " that the same person gave (same entity, or same family name and birth date): "
                "probably a typing error."
            )
            out.append(hits(slips["rec"], reason, "record"))
    return pd.concat(out, ignore_index=True)
