"""Rules about a single record: implausible ages and unusual phone types.

These look at one record at a time and need no entity or group context. A birth date that
makes an applicant a child or a 120-year-old at account opening, or a "personal" phone that is
really a VoIP, premium-rate or toll-free line, is worth a second look; neither proves anything.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.signals.context import Inputs, hits

PHONE_TYPE_WORDS = {
    "voip": "a VoIP number",
    "premium_rate": "a premium-rate number",
    "toll_free": "a toll-free number",
    "personal_number": "a personal (forwarding) number",
    "shared_cost": "a shared-cost number",
    "pager": "a pager number",
    "uan": "a universal access (company) number",
}


def implausible_age(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records whose age at creation (or today, when creation is unknown) is out of range.

    Age is in whole years from the birth date; with only a birth year, from 1 July of that
    year. A birth date after the reference date is reported as such.
    """
    r = inp.records
    year = r["birth_year"].where(r["birth_year"].between(1, 9999))
    mid_year = pd.to_datetime(
        {"year": year.fillna(2000), "month": 7, "day": 1}, errors="coerce"
    ).where(year.notna())
    birth = r["birth"].fillna(mid_year)
    created = r["created_at"].notna()
    ref = r["created_at"].where(created, inp.today)
    by, bm, bd = birth.dt.year, birth.dt.month, birth.dt.day
    ry, rm, rd = ref.dt.year, ref.dt.month, ref.dt.day
    age = ry - by - ((rm < bm) | ((rm == bm) & (rd < bd))).astype("int64")
    future = birth > ref
    young = ~future & (age < params["min_age"])
    old = age > params["max_age"]
    hit = (future | young | old).fillna(False).to_numpy(dtype=bool)
    h = pd.DataFrame({
        "rec": r["rec"].to_numpy()[hit],
        "future": future.to_numpy()[hit],
        "young": young.to_numpy()[hit],
        "created": created.to_numpy()[hit],
        "age": age.to_numpy()[hit],
        "ref": ref.to_numpy()[hit],
    })
    when = pd.Series(np.where(h["created"], " when the record was created", " today"), dtype="string")
    age_text = h["age"].astype("int64").astype("string")
    bound = np.where(h["young"], ", under the minimum of " + str(params["min_age"]) + ".",
                     ", over the maximum of " + str(params["max_age"]) + ".")
    reason = "Age was " + age_text + when + pd.Series(bound, dtype="string")
    after = "Birth date is after the date the record was created (" + h["ref"].dt.strftime("%Y-%m-%d") + ")."
    future_text = after.where(h["created"], "Birth date is in the future.")
    reason = reason.mask(h["future"], future_text)
    return hits(h["rec"], reason, "record")


def unusual_phone_type(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records carrying a phone whose number type is in ``types``."""
    ids = inp.ids
    ids = ids[(ids["kind"] == "phone") & ids["detail"].isin(params["types"]) & (ids["status"] != "placeholder")]
    detail = ids["detail"].astype("string")
    words = detail.map(PHONE_TYPE_WORDS).astype("string").fillna("a " + detail.str.replace("_", " ") + " number")
    reason = inp.describe(ids) + " is " + words + ", rarely a customer's own line."
    return hits(ids["rec"], reason, "record")
