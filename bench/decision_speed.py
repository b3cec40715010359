"""Time recording reviewer decisions on a run of 1,000,000 records, and re-applying 10,000.

Not a test: run it by hand (``.venv/bin/python bench/decision_speed.py [--records N]``).
Builds a synthetic run (random numbers shaped like the real tables: records, people,
identifiers, entities, scored pairs, flags and a queue of small review items) in a temporary
project, then:

1. opens one review session and records decisions on queue items one at a time (accept,
   reject, note, escalate in turn), timing each; the first decision also loads the run's
   tables and is reported on its own;
2. writes 10,000 further decisions straight into the store and times
   ``ReviewStore.constraints()`` (what every later run calls to re-apply decisions).

Targets: a decision at most 20 ms at the 95th percentile; constraints() at most 5 s.
"""

from __future__ import annotations

import argparse
import json
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from resolve.clusters.keys import member_names
from resolve.project import Project, Review, ReviewStore
from resolve.project.audit import append_entries, canonical
from resolve.project.decisions import decision_content_hash, records_key


def _text(prefix: str, numbers: np.ndarray, width: int = 7) -> pd.Series:
    return pd.Series(np.char.add(prefix, np.char.zfill(numbers.astype(str), width)), dtype="string")


def synthetic_run(n: int, seed: int = 1) -> dict[str, pd.DataFrame]:
    """Run tables for ``n`` records: people of 1-3 records, review items of 2-4 records."""
    rng = np.random.default_rng(seed)
    rec = np.arange(n, dtype=np.int32)
    record_id = _text("R", rec)
    person = np.sort(rng.integers(0, int(n * 0.7), n))
    given = np.array(["Ana", "Bruno", "Carla", "Davi", "Eva", "Felix", "Gina", "Hugo"])
    family = np.array(["Ribeiro", "Costa", "Dias", "Nunes", "Moreau", "Lopes", "Silva", "Rocha"])
    created = pd.Timestamp("2015-01-01") + pd.to_timedelta(rng.integers(0, 3000, n), unit="D")
    records = pd.DataFrame({
        "rec": rec, "record_id": record_id,
        "source": pd.Series(np.where(rng.random(n) < 0.5, "branch", "app"), dtype="string"),
        "row_number": rec.astype(np.int64) + 1,
        "given_name": pd.Series(given[person % 8], dtype="string"),
        "family_name": pd.Series(family[(person // 8) % 8], dtype="string"),
        "birth_date": pd.Series((pd.Timestamp("1950-01-01") + pd.to_timedelta(person % 20000, unit="D"))
                                .strftime("%Y-%m-%d"), dtype="string"),
        "phone_1": _text("+1555", person % 9_000_000, 7),
        "email_1": _text("p", person, 8) + "@example.com",
        "national_id_1": _text("9", person % 99_999_999, 8),
        "street": _text("", person % 5000, 1) + " Elm Street",
        "city": pd.Series("Springfield", index=range(n), dtype="string"),
        "postcode": _text("", person % 90000, 5),
        "created_at": pd.Series(created.strftime("%Y-%m-%d"), dtype="string"),
    })
    people = pd.DataFrame({"record_id": record_id, "created_at": created})
    ids = []
    for kind, col in (("phone", "phone_1"), ("email", "email_1"), ("national_id", "national_id_1")):
        v = records[col]
        ids.append(pd.DataFrame({"rec": rec, "kind": kind, "slot": col, "raw": v, "value": v,
                                 "key": ("ssn:" + v) if kind == "national_id" else v,
                                 "status": "valid", "detail": pd.NA}))
    identifiers = pd.concat(ids, ignore_index=True).astype(
        {c: "string" for c in ("kind", "slot", "raw", "value", "key", "status", "detail")})
    same = np.flatnonzero(person[1:] == person[:-1])
    a = np.concatenate([same, rng.integers(0, n - 1, n // 2)]).astype(np.int32)
    b = np.concatenate([same + 1, rng.integers(0, n - 1, n // 2)]).astype(np.int32)
    keep = a != b
    a, b = np.minimum(a, b)[keep], np.maximum(a, b)[keep]
    m = len(a)
    prob = np.where(np.arange(m) < len(same), rng.uniform(0.6, 1.0, m), rng.uniform(0, 0.3, m))
    link = np.where(prob > 0.9, "same_person", np.where(prob > 0.6, "review", "none"))
    pairs = pd.DataFrame({"rec_a": a, "rec_b": b, "prob": prob,
                          "link_type": pd.Series(link, dtype="string"),
                          "reasons": pd.Series("same_name;shared_phone", index=range(m), dtype="string")})
    entities = pd.DataFrame({"rec": rec, "record_id": record_id,
                             "entity_id": _text("E", rec, 9)})
    flagged = rng.choice(n, n // 20, replace=False)
    flags = pd.DataFrame({"record_id": record_id.iloc[flagged].to_numpy(), "flag": "implausible_age",
                          "severity": "low", "reason": "birth date gives an age over 110",
                          "scope": "record", "entity_id": pd.NA, "group_id": pd.NA}).astype("string")
    # queue: review items of 2-4 consecutive records of one person
    starts = np.flatnonzero(np.concatenate([[True], person[1:] != person[:-1]]))
    sizes = np.diff(np.append(starts, n))
    multi = starts[sizes >= 2][:20000]
    msize = sizes[sizes >= 2][:20000]
    group = np.repeat(np.arange(len(multi)), msize)
    member = np.concatenate([np.arange(s, s + k) for s, k in zip(multi, msize)])
    named = member_names(group, record_id.iloc[member].reset_index(drop=True), "ent-")
    queue = pd.DataFrame({"cluster_key": named["key"], "kind": "entity", "size": named["size"],
                          "score": rng.uniform(0.6, 0.9, len(named)),
                          "priority": rng.uniform(0, 100, len(named)).round(2),
                          "record_ids": named["record_ids"], "entity_ids": "",
                          "detail": "review_links"}).astype({"kind": "string", "entity_ids": "string",
                                                            "detail": "string"})
    return {"records": records, "people": people, "identifiers": identifiers, "pairs": pairs,
            "entities": entities, "flags": flags, "queue": queue}


def record_decisions(project: Project, count: int) -> dict:
    """Record ``count`` decisions one by one; per-decision times in ms."""
    actions = ("accept", "reject", "note", "escalate")
    with Review(project) as review:
        keys = review.view.queue["cluster_key"].tolist()
        t0 = time.perf_counter()
        review.decide("note", "bench", cluster_key=keys[0], note="warm-up")
        first = (time.perf_counter() - t0) * 1000
        times = []
        for i, key in enumerate(keys[1:count + 1]):
            action = actions[i % len(actions)]
            note = "checked" if action in ("note", "escalate") else None
            t = time.perf_counter()
            review.decide(action, f"reviewer{i % 3}", cluster_key=key, note=note)
            times.append((time.perf_counter() - t) * 1000)
    arr = np.array(times)
    return {"first_decision_ms": round(first, 1), "decisions": len(arr),
            "p50_ms": round(float(np.percentile(arr, 50)), 2),
            "p95_ms": round(float(np.percentile(arr, 95)), 2),
            "max_ms": round(float(arr.max()), 2)}


def bulk_insert(project: Project, count: int, start_record: int) -> None:
    """Write ``count`` accept/reject/split decisions on fresh record pairs and triples."""
    with ReviewStore.open(project.path) as store, store.atomic():
        next_id = store.next_id("decisions")
        entries = []
        for i in range(count):
            base = start_record + 3 * i
            ids = [f"R{base + k:07d}" for k in range(3)]
            action = ("accept", "reject", "split")[i % 3]
            parts = None if action == "accept" else [[ids[0], ids[1]], [ids[2]]] if action == "split" \
                else [[r] for r in ids]
            row = {"decision_id": next_id + i, "action": action, "reviewer": "bulk",
                   "decided_at": store.clock(), "cluster_key": None, "kind": None,
                   "records_key": records_key(ids), "record_ids": ";".join(ids),
                   "groups": json.dumps(parts) if parts else None, "target_id": None,
                   "case_id": None, "survivor_record_id": None, "note": None, "run_id": "run-0001",
                   "evidence": "{}", "evidence_hash": None}
            row["content_hash"] = decision_content_hash(row)
            members = [(r, p) for p, g in enumerate(parts) for r in g] if parts else [(r, 0) for r in ids]
            store.insert_decision(row, members)
            entries.append(("bulk", action, f"decision:{row['decision_id']}",
                            {"content_hash": row["content_hash"], "decision_id": row["decision_id"]}))
        append_entries(store, entries)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--records", type=int, default=1_000_000)
    parser.add_argument("--decisions", type=int, default=400)
    parser.add_argument("--reapply", type=int, default=10_000)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        t = time.perf_counter()
        tables = synthetic_run(args.records)
        project = Project.create(Path(tmp) / "bench")
        project.save_run(tables, {"created": "2024-01-01T00:00:00+00:00", "accepted": args.records})
        build = time.perf_counter() - t
        speed = record_decisions(project, args.decisions)
        bulk_insert(project, args.reapply, start_record=args.records // 2)
        with ReviewStore.open(project.path) as store:
            t = time.perf_counter()
            must, cannot = store.constraints()
            reapply = time.perf_counter() - t
        report = {"records": args.records, "pairs": len(tables["pairs"]),
                  "queue_items": len(tables["queue"]), "build_s": round(build, 1),
                  **speed, "reapply_decisions": args.reapply + args.decisions + 1,
                  "constraints_s": round(reapply, 3), "must_link_pairs": len(must),
                  "cannot_link_pairs": len(cannot)}
        print(canonical(report))


if __name__ == "__main__":
    main()
