"""A small hand-made project for the workbench tests: one item of every kind.

Everyone and everything here is invented. Phones are in the 555-01xx range (reserved for
fiction, NANP practice per /work/shared/CHECKS.md); national IDs are made-up nine-digit
numbers. The tables have the shapes the pipeline writes (docs/architecture.md), fixed by hand
so that the screen snapshots do not move when the pipeline's models are tuned.

Items:
- ``entity``: K01 and K02, one person written twice, joined by a review-band link;
- ``split``: entity E03 of K03..K06, a father and a son of one name held together by one
  weak link (K04-K05: the son's record K05 was keyed with the father's birth date), with a
  suggested split K03,K04 | K05,K06;
- ``household``: K07 and K08 share a home and a landline;
- ``group``: K09, K10, K11 carry one national ID under different names and birth dates
  (flagged ``shared_national_id_conflict``);
- ``flagged``: K12 with an implausible birth date.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from resolve.clusters.keys import member_names
from resolve.compare.levels import FIELDS
from resolve.project import Project

PRIOR = 0.05
THRESHOLDS = {"auto": 0.99, "review": 0.5}

RECORDS = [
    # record_id, source, given, family, birth, phone_1, email_1, national_id_1, street, city, postcode, created
    ("K01", "branch", "Maria", "Okafor", "1984-03-15", "(212) 555-0142", "m.okafor@example.org",
     "401-22-7391", "18 Linden Row", "Port Elwin", "10451", "2015-04-02"),
    ("K02", "app", "Mariah", "Okafor", "1984-03-15", "212-555-0147", "maria.okafor@example.net",
     None, "18 Linden Row Apt 2", "Port Elwin", "10451", "2021-09-14"),
    ("K03", "branch", "Tobias", "Renner", "1971-07-02", "(303) 555-0117", "t.renner@example.org",
     "402-51-1180", "7 Quarry Lane", "Hollis Bay", "80202", "2012-01-20"),
    ("K04", "app", "Toby", "Renner", "1971-07-02", "303-555-0117", None,
     "402-51-1180", "7 Quarry Ln", "Hollis Bay", "80202", "2019-05-30"),
    ("K05", "cards", "Tobias", "Renner", "1971-07-02", "303-555-0118", "tobias.r@example.com",
     None, "7 Quarry Lane", "Hollis Bay", "80202", "2022-03-11"),
    ("K06", "cards", "Tobias", "Renner", "1998-11-23", "303-555-0118", "tobias.r@example.com",
     "403-77-2046", "7 Quarry Lane", "Hollis Bay", "80202", "2023-08-01"),
    ("K07", "branch", "Ines", "Varga", "1966-02-09", "(415) 555-0160", "varga.home@example.org",
     "404-10-5522", "3 Harbour View", "Leeford", "94107", "2010-10-10"),
    ("K08", "branch", "Pal", "Varga", "1964-12-30", "(415) 555-0160", None,
     "404-10-9913", "3 Harbour View", "Leeford", "94107", "2010-10-10"),
    ("K09", "app", "Dana", "Whitlock", "1990-06-06", "(702) 555-0101", "dw90@example.com",
     "405-66-3108", "12 Mesa Drive", "Sable Springs", "89101", "2023-01-03"),
    ("K10", "app", "Corin", "Ashby", "1987-01-19", "(702) 555-0102", "cashby@example.com",
     "405-66-3108", "88 Dune Road", "Sable Springs", "89102", "2023-01-05"),
    ("K11", "cards", "Lio", "Pemberton", "1995-09-27", "(702) 555-0103", "lio.p@example.com",
     "405-66-3108", "4 Cactus Way", "Sable Springs", "89103", "2023-01-06"),
    ("K12", "cards", "Wren", "Halloway", "1889-04-01", "(808) 555-0190", None,
     None, "1 Palm Court", "Kailo", "96813", "2022-12-12"),
]
COLUMNS = ["record_id", "source", "given_name", "family_name", "birth_date", "phone_1", "email_1",
           "national_id_1", "street", "city", "postcode", "created_at"]

# level per field for each pair (given, family, suffix, birth, national_id, phone, email, address)
PAIRS = [
    # rec_a, rec_b, levels, link_type, reasons
    (0, 1, (3, 6, 0, 6, 0, 1, 1, 2), "review", "same_family_name;same_birth_date"),
    (2, 3, (5, 6, 0, 6, 3, 3, 0, 4), "same_person",
     "shared_national_id;same_address;shared_phone;same_family_name;same_birth_date"),
    (4, 5, (7, 6, 0, 1, 0, 3, 3, 4), "same_person",
     "same_address;shared_phone;shared_email;same_family_name;same_given_name;birth_dates_differ"),
    (3, 4, (5, 6, 0, 6, 0, 1, 0, 4), "same_person", "same_address;same_family_name;same_birth_date"),
    (6, 7, (1, 6, 0, 1, 1, 2, 0, 4), "household",
     "same_address;shared_landline;same_family_name;given_names_differ;birth_dates_differ"),
    (8, 9, (1, 1, 0, 1, 3, 1, 1, 1), "shared_identity",
     "shared_national_id;family_names_differ;given_names_differ;birth_dates_differ"),
    (8, 10, (1, 1, 0, 1, 3, 1, 1, 1), "shared_identity",
     "shared_national_id;family_names_differ;given_names_differ;birth_dates_differ"),
    (9, 10, (1, 1, 0, 1, 3, 1, 1, 1), "shared_identity",
     "shared_national_id;family_names_differ;given_names_differ;birth_dates_differ"),
    (2, 11, (1, 1, 0, 1, 0, 1, 0, 1), "none", "family_names_differ;given_names_differ;birth_dates_differ"),
]
# match weight (bits) of each level, per field; a simple invented model
LEVEL_WEIGHTS = {
    "given_name": [0, -2.0, 0.5, 1.0, 1.5, 2.0, 1.2, 2.8],
    "family_name": [0, -2.0, 0.5, 1.2, 1.8, 2.0, 3.0, 0],
    "suffix": [0, -1.0, 0.3],
    "birth_date": [0, -2.5, 1.0, 1.5, 2.0, 2.2, 4.0],
    "national_id": [0, -3.0, 3.0, 5.5],
    "phone": [0, -0.5, 1.5, 3.0],
    "email": [0, -0.3, 1.5, 4.0],
    "address": [0, -0.8, 1.2, 2.0, 2.5],
}


def _queue_row(kind, prefix, ids, entity_ids, score, priority, detail) -> dict:
    named = member_names(np.zeros(len(ids), dtype=np.int64), pd.Series(ids, dtype="string"), prefix)
    return {"cluster_key": named["key"].iloc[0], "kind": kind, "size": len(ids), "score": score,
            "priority": priority, "record_ids": ";".join(sorted(ids)),
            "entity_ids": ";".join(sorted(set(entity_ids))), "detail": detail}


def tables() -> dict[str, pd.DataFrame]:
    """Every run table of the test project."""
    records = pd.DataFrame(RECORDS, columns=COLUMNS).astype("string")
    n = len(records)
    records.insert(0, "rec", np.arange(n, dtype=np.int32))
    records.insert(3, "file", pd.array(["customers.csv"] * n, dtype="string"))
    records.insert(4, "row_number", np.arange(1, n + 1, dtype=np.int64))

    people = pd.DataFrame({
        "record_id": records["record_id"],
        "given_key": records["given_name"].str.lower(), "family_key": records["family_name"].str.lower(),
        "suffix": pd.array([None] * n, dtype="string"), "birth_date": records["birth_date"],
        "birth_year": records["birth_date"].str.slice(0, 4).astype(float),
        "address_key": (records["street"].str.lower() + "|" + records["postcode"]).astype("string"),
        "created_at": pd.to_datetime(records["created_at"]),
    })

    ident = []
    for r in records.itertuples(index=False):
        for kind, col in (("phone", "phone_1"), ("email", "email_1"), ("national_id", "national_id_1")):
            raw = getattr(r, col)
            if pd.isna(raw):
                continue
            if kind == "phone":
                value = "+1" + "".join(ch for ch in raw if ch.isdigit())
                key, detail = value, "fixed_line_or_mobile"
            elif kind == "email":
                value = key = raw.lower()
                detail = None
            else:
                value = raw.replace("-", "")
                key, detail = f"us_ssn:{value}", "us_ssn"
            ident.append((r.rec, kind, col, raw, value, key, "valid", None, detail))
        akey = f"{r.street.lower()}|{r.postcode}"
        ident.append((r.rec, "address", "street", r.street, akey, akey, "valid", None, None))
    identifiers = pd.DataFrame(ident, columns=["rec", "kind", "slot", "raw", "value", "key", "status",
                                               "reason", "detail"])
    identifiers = identifiers.astype({"rec": "int32"}).astype(
        {c: "string" for c in identifiers.columns if c != "rec"})

    prior_w = math.log2(PRIOR / (1 - PRIOR))
    rows = []
    for a, b, levels, link_type, reasons in PAIRS:
        row = {"rec_a": a, "rec_b": b, "keys": 1}
        total = prior_w
        for spec, lvl in zip(FIELDS, levels):
            row[spec.column] = lvl
        for spec, lvl in zip(FIELDS, levels):
            w = LEVEL_WEIGHTS[spec.name][lvl]
            row[spec.weight_column] = w
            total += w
        row["weight"] = total
        row["prob"] = 1.0 / (1.0 + 2.0 ** (-total))
        row["link_type"] = link_type
        row["reasons"] = reasons
        rows.append(row)
    pairs = pd.DataFrame(rows)
    pairs = pairs.astype({"rec_a": "int32", "rec_b": "int32", "keys": "int32",
                          **{s.column: "int8" for s in FIELDS}, **{s.weight_column: "float32" for s in FIELDS},
                          "weight": "float32", "link_type": "string", "reasons": "string"})

    entity = ["E01", "E02", "E03", "E03", "E03", "E03", "E07", "E08", "E09", "E10", "E11", "E12"]
    entities = pd.DataFrame({"rec": records["rec"], "record_id": records["record_id"],
                             "entity_id": pd.array(entity, dtype="string")})
    p_bridge = float(pairs.loc[(pairs.rec_a == 3) & (pairs.rec_b == 4), "prob"].iloc[0])
    diagnostics = pd.DataFrame([{
        "entity_id": "E03", "size": 4, "n_links": 3, "density": 0.5, "min_prob": p_bridge,
        "mean_prob": 0.99, "weakest_link": "K04,K05", "n_review_links": 0, "n_conflicts": 0,
        "bridges": "K03,K04;K04,K05;K05,K06", "articulation_points": "K04;K05",
        "split_kind": "weak_bridge", "split_groups": "K03,K04;K05,K06", "separated_records": "K05;K06",
        "cut_links": "K04,K05", "cut_weight": p_bridge}])
    diagnostics = diagnostics.astype({c: "string" for c in ("entity_id", "weakest_link", "bridges",
                                                            "articulation_points", "split_kind",
                                                            "split_groups", "separated_records", "cut_links")})
    households = pd.DataFrame({"entity_id": pd.array(["E07", "E08"], dtype="string"),
                               "household_id": pd.array(["H07", "H07"], dtype="string"),
                               "size": [2, 2], "evidence": pd.array(["same_address;shared_landline"] * 2, dtype="string"),
                               "shared_values": pd.array(["address:3 harbour view|94107"] * 2, dtype="string")})
    groups = pd.DataFrame({"entity_id": pd.array(["E09", "E10", "E11"], dtype="string"),
                           "group_id": pd.array(["G09"] * 3, dtype="string"),
                           "group_kind": pd.array(["ring_like"] * 3, dtype="string"),
                           "n_entities": [3, 3, 3], "n_shared_values": [1, 1, 1]})
    conflict = "National ID ending 3108 is also carried by 2 other entities whose names and birth dates differ."
    flags = pd.DataFrame({
        "record_id": pd.array(["K09", "K10", "K11", "K12", "K03"], dtype="string"),
        "flag": pd.array(["shared_national_id_conflict"] * 3 + ["implausible_age", "several_national_ids"],
                         dtype="string"),
        "severity": pd.array(["high", "high", "high", "medium", "medium"], dtype="string"),
        "reason": pd.array([conflict] * 3 + [
            "Birth date 1889-04-01 gives an age of 135 at the reference date.",
            "This entity carries 2 different national IDs of type us_ssn; the one on this record ends in 1180."],
            dtype="string"),
        "scope": pd.array(["group"] * 3 + ["record", "entity"], dtype="string"),
        "entity_id": pd.array(["E09", "E10", "E11", "E12", "E03"], dtype="string"),
        "group_id": pd.array(["G09"] * 3 + [None, None], dtype="string"),
    })
    p = dict(zip(zip(pairs.rec_a, pairs.rec_b), pairs.prob))
    queue = pd.DataFrame([
        _queue_row("group", "grp-", ["K09", "K10", "K11"], ["E09", "E10", "E11"],
                   float(np.mean([p[(8, 9)], p[(8, 10)], p[(9, 10)]])), 70.0, "ring_like"),
        _queue_row("split", "spl-", ["K03", "K04", "K05", "K06"], ["E03"], p_bridge, 48.5, "weak_bridge"),
        _queue_row("entity", "ent-", ["K01", "K02"], ["E01", "E02"], p[(0, 1)], 41.2, "review_links"),
        _queue_row("flagged", "flg-", ["K12"], ["E12"], float("nan"), 30.0, "flagged_records"),
        _queue_row("household", "hh-", ["K07", "K08"], ["E07", "E08"], p[(6, 7)], 12.0,
                   "same_address;shared_landline"),
    ])
    queue = queue.astype({"cluster_key": "string", "kind": "string", "record_ids": "string",
                          "entity_ids": "string", "detail": "string"})
    return {"records": records, "people": people, "identifiers": identifiers, "pairs": pairs,
            "entities": entities, "diagnostics": diagnostics, "households": households,
            "groups": groups, "flags": flags, "queue": queue}


def model() -> dict:
    """A minimal model document with the prior and the thresholds."""
    prior_w = math.log2(PRIOR / (1 - PRIOR))
    return {"format": "resolve.match-model", "version": 1,
            "prior": {"lambda": PRIOR, "weight": round(prior_w, 4)},
            "thresholds": {"accept_probability": THRESHOLDS["auto"],
                           "review_probability": THRESHOLDS["review"]}}


def make_project(path, settings: str | None = None) -> Project:
    """Create the test project at ``path`` with one run."""
    project = Project.create(path)
    if settings:
        (project.path / "project.toml").write_text(settings, encoding="utf-8")
    project.save_run(tables(), {"created": "2024-06-01T08:00:00+00:00", "input_rows": 12,
                                "accepted": 12, "quarantined": 0, "thresholds": dict(THRESHOLDS)},
                     documents={"model.json": model()})
    return project


# The ticking clock and the key-per-kind lookup are shared with the store tests.
from conftest_project import clock, keys as keys_by_kind  # noqa: E402,F401
