"""Assemble the normalised record tables from the individual normalisers.

`normalise_records` is the stage function. It turns the ingest `RecordTable` into
- ``people``: one row per record (index ``rec``) with canonical name, birth-date and address
  columns, and
- ``identifiers``: the long identifier table (one row per record and identifier column with a
  value), which is what blocking, comparison, groups and signals work from.

Multi-column roles (two phone columns, say) are stacked into one long column first so each
normaliser runs once per run over all distinct values, not once per column.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np
import pandas as pd

from resolve.normalise.country import normalise_countries

SERVICE_NUMBER_TYPES = ("toll_free", "premium_rate", "shared_cost", "uan", "voicemail")
IDENTIFIER_COLUMNS = ["rec", "kind", "slot", "raw", "value", "key", "status", "reason", "detail"]


@dataclass
class NormaliseSettings:
    default_country: str = "US"
    today: dt.date | None = None
    email_providers: dict | None = None


@dataclass
class NormalisedRecords:
    people: pd.DataFrame
    identifiers: pd.DataFrame


def _col(records: pd.DataFrame, name: str) -> pd.Series | None:
    return records[name].reset_index(drop=True) if name in records.columns else None


def _slots(records: pd.DataFrame, role: str) -> list[str]:
    return [c for c in records.columns if c.startswith(f"{role}_") and c[len(role) + 1:].isdigit()]


def _stack(records: pd.DataFrame, role: str, context: pd.Series):
    """Stack the numbered columns of a role into (rec, slot, raw, context) rows with values."""
    slots = _slots(records, role)
    if not slots:
        return None
    n = len(records)
    raw = pd.concat([records[s].reset_index(drop=True) for s in slots], ignore_index=True)
    rec = np.tile(np.arange(n, dtype=np.int32), len(slots))
    slot = np.repeat(np.array(slots, dtype=object), n)
    ctx = pd.concat([context] * len(slots), ignore_index=True)
    keep = raw.notna().to_numpy()
    return (pd.Series(rec[keep]), pd.Series(slot[keep], dtype="string"),
            raw[keep].reset_index(drop=True), ctx[keep].reset_index(drop=True))


def _arr(series: pd.Series):
    """The column's own array (Arrow-backed strings stay Arrow: no round trip via objects)."""
    return series.array


def _identifier_frame(kind, rec, slot, raw, result, key, detail) -> pd.DataFrame:
    return pd.DataFrame({
        "rec": rec.to_numpy(np.int32), "kind": kind, "slot": _arr(slot),
        "raw": _arr(raw), "value": _arr(result["value"]), "key": _arr(key),
        "status": _arr(result["status"]), "reason": _arr(result["reason"]),
        "detail": _arr(detail),
    })


def normalise_records(records: pd.DataFrame, settings: NormaliseSettings | None = None
                      ) -> NormalisedRecords:
    """Run every normaliser over the accepted records; see the module docstring."""
    from resolve.normalise.address import normalise_addresses
    from resolve.normalise.dates import normalise_dates, parse_timestamps
    from resolve.normalise.email import normalise_emails
    from resolve.normalise.names import normalise_names
    from resolve.normalise.national_id import normalise_national_ids
    from resolve.normalise.phone import normalise_phones

    settings = settings or NormaliseSettings()
    n = len(records)
    index = pd.RangeIndex(n, name="rec")
    country = normalise_countries(_col(records, "country"), settings.default_country,
                                  index=pd.RangeIndex(n))
    id_country = normalise_countries(_col(records, "national_id_country"), "", index=pd.RangeIndex(n))
    id_country = id_country.mask(id_country == "", country)

    names = normalise_names(_col(records, "given_name"), _col(records, "family_name"),
                            _col(records, "full_name"))
    dates = normalise_dates(_col(records, "birth_date") if "birth_date" in records.columns
                            else pd.Series(pd.array([None] * n, dtype="string")),
                            country, today=settings.today)
    addresses = normalise_addresses(_col(records, "street"), _col(records, "city"),
                                    _col(records, "postcode"), country)
    people = pd.DataFrame(index=index)
    people["record_id"] = _arr(records["record_id"])
    people["source"] = _arr(records["source_system"] if "source_system" in records.columns
                            else records["source"])
    people["country"] = _arr(country)
    for c in names.columns:
        target = "name_status" if c == "status" else "name_reason" if c == "reason" else c
        if c == "value":
            continue
        people[target] = _arr(names[c])
    people["birth_date"] = _arr(dates["value"])
    people["birth_status"] = _arr(dates["status"])
    people["birth_reason"] = _arr(dates["reason"])
    people["birth_ambiguous"] = _arr(dates["ambiguous"])
    people["birth_year"] = _arr(dates["year"])
    people["birth_month"] = _arr(dates["month"])
    people["birth_day"] = _arr(dates["day"])
    for c in ("house_number", "unit", "street_name", "postcode", "city", "address_key"):
        if c in addresses.columns:
            people[c] = _arr(addresses[c])
    people["address_status"] = _arr(addresses["status"])
    people["address_reason"] = _arr(addresses["reason"])
    if "created_at" in records.columns:
        people["created_at"] = parse_timestamps(_col(records, "created_at")).to_numpy()
    else:
        people["created_at"] = pd.Series(pd.NaT, index=index, dtype="datetime64[ns]")

    parts = []
    stacked = _stack(records, "phone", country)
    if stacked is not None:
        rec, slot, raw, ctx = stacked
        res = normalise_phones(raw, ctx)
        # Service numbers (toll-free, premium, shared-cost...) belong to businesses such as
        # call centres, not to a customer: keep them visible but never link on them.
        service = res["number_type"].isin(SERVICE_NUMBER_TYPES).to_numpy() & (
            res["status"] == "valid").to_numpy()
        if service.any():
            res = res.copy()
            res.loc[service, "status"] = "placeholder"
            res.loc[service, "reason"] = "service_number"
        parts.append(_identifier_frame("phone", rec, slot, raw, res, res["value"],
                                       res["number_type"]))
    stacked = _stack(records, "email", country)
    if stacked is not None:
        rec, slot, raw, _ = stacked
        res = normalise_emails(raw, settings.email_providers)
        parts.append(_identifier_frame("email", rec, slot, raw, res, res["mailbox_key"],
                                       res["domain"]))
    stacked = _stack(records, "national_id", id_country)
    if stacked is not None:
        rec, slot, raw, ctx = stacked
        res = normalise_national_ids(raw, ctx)
        key = (res["id_type"].astype("string") + ":" + res["value"].astype("string"))
        parts.append(_identifier_frame("national_id", rec, slot, raw, res, key, res["id_type"]))
    has_addr = people["address_key"].notna().to_numpy() if "address_key" in people else np.zeros(n, bool)
    if has_addr.any():
        addr = pd.DataFrame({
            "rec": np.arange(n, dtype=np.int32)[has_addr], "kind": "address",
            "slot": "street", "raw": _col(records, "street").array[has_addr]
            if "street" in records.columns else None,
            "value": people["address_key"].array[has_addr],
            "key": people["address_key"].array[has_addr],
            "status": people["address_status"].array[has_addr],
            "reason": people["address_reason"].array[has_addr], "detail": None,
        })
        parts.append(addr)
    if parts:
        identifiers = pd.concat(parts, ignore_index=True)
    else:
        identifiers = pd.DataFrame({c: [] for c in IDENTIFIER_COLUMNS})
    identifiers = identifiers.astype({"rec": "int32", "kind": "category", "slot": "string",
                                      "raw": "string", "value": "string", "key": "string",
                                      "status": "category", "reason": "string",
                                      "detail": "string"})
    # Unusable values never serve as keys for finding shared identifiers.
    unusable = identifiers["status"].isin(["placeholder", "missing"]).to_numpy()
    identifiers.loc[unusable, "key"] = pd.NA
    return NormalisedRecords(people, identifiers)
