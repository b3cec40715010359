"""Time the review workbench on a large synthetic project (not a test; run it by hand).

    .venv/bin/python -m bench.tui_speed [--records 1000000] [--steps 200] [--decisions 40]

Builds (once, cached under bench/cache/) a project of N records whose run tables have the
shapes the pipeline writes: records, people, identifiers, scored pairs with per-field levels
and weights, entities, diagnostics with split suggestions, households, groups, flags and a
review queue of every kind. Everything is random and invented. Then, in a fresh process, it
opens the workbench headless at 120x40 and reports:

- time from process start to the work list painted on screen (target: under 2 s), as wall
  time and as the process's CPU time (the wall time on an idle machine; the machine this runs
  on is shared, so the load average is reported too);
- time to index the run tables in the background;
- per move between clusters (key ``n``): time from the request to the new cluster painted,
  and the data look-up alone (`RunIndex.cluster`), median and 95th percentile (target p95
  under 50 ms);
- per decision (accept / household through the decisions layer): median and p95;
- peak memory of the process.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
CACHE = HERE / "cache"
GIVEN = ["Ada", "Ben", "Cleo", "Dario", "Edda", "Farid", "Greta", "Hal", "Ines", "Jonas", "Kira",
         "Luis", "Mira", "Nils", "Oona", "Pavel", "Quinn", "Rosa", "Sami", "Tove", "Umar", "Vera"]
FAMILY = ["Arden", "Bexley", "Corran", "Dalby", "Eskew", "Fenwick", "Garrow", "Hollins", "Ivers",
          "Jessup", "Kettle", "Lowther", "Marley", "Norcross", "Oakes", "Pryor", "Quarles", "Rook"]
STREETS = ["Alder", "Birch", "Cedar", "Dove", "Elm", "Fern", "Glen", "Heath", "Ivy", "Juniper"]
FLAGS = [("shared_national_id_conflict", "high"), ("several_national_ids", "medium"),
         ("implausible_age", "medium"), ("identifier_hub", "medium"), ("unusual_phone_type", "low")]


def _text(values) -> "object":
    import pandas as pd

    return pd.array(values, dtype="string")


def build_project(path: Path, n: int, seed: int = 11) -> None:
    """Write a one-run project of ``n`` invented records at ``path`` (vectorised)."""
    import numpy as np
    import pandas as pd
    import pyarrow as pa
    import pyarrow.compute as pc

    from resolve.clusters.keys import member_names
    from resolve.compare.levels import FIELDS
    from resolve.project import Project

    rng = np.random.default_rng(seed)
    sizes = rng.choice([1, 2, 3, 4, 6], size=n, p=[0.62, 0.25, 0.08, 0.04, 0.01])
    sizes = sizes[: np.searchsorted(np.cumsum(sizes), n) + 1]
    n_ent = len(sizes)
    ent_sorted = np.repeat(np.arange(n_ent), sizes)[:n]
    perm = rng.permutation(n)                       # rec of the i-th record in entity order
    entity = np.empty(n, dtype=np.int64)
    entity[perm] = ent_sorted

    def digits(values, width):
        return pc.utf8_lpad(pc.cast(pa.array(values), pa.string()), width, "0")

    rec_id = pc.binary_join_element_wise("R", digits(np.arange(n) + 1, 7), "")
    given = np.array(GIVEN, dtype=object)[rng.integers(len(GIVEN), size=n_ent)][entity]
    family = np.array(FAMILY, dtype=object)[rng.integers(len(FAMILY), size=n_ent)][entity]
    birth = (np.datetime64("1940-01-01") + rng.integers(0, 24000, size=n_ent)).astype(str)[entity]
    phone_n = rng.integers(2_000_000_000, 9_999_999_999, size=n_ent)[entity]
    phone = pc.binary_join_element_wise("+1", pc.cast(pa.array(phone_n), pa.string()), "")
    nid_n = rng.integers(1_000_000, 899_999_999, size=n_ent)[entity]
    nid_s = digits(nid_n, 9)
    nid = pc.binary_join_element_wise(pc.utf8_slice_codeunits(nid_s, 0, 3), pc.utf8_slice_codeunits(nid_s, 3, 5),
                                      pc.utf8_slice_codeunits(nid_s, 5, 9), "-")
    email = pc.utf8_lower(pc.binary_join_element_wise(pa.array(given), ".", pa.array(family),
                                                      digits(entity % 1000, 3), "@example.org", ""))
    house = pc.cast(pa.array(rng.integers(1, 400, size=n_ent)[entity]), pa.string())
    street = pc.binary_join_element_wise(house, pa.array(np.array(STREETS, dtype=object)[entity % len(STREETS)]),
                                         "Road", " ")
    postcode = digits(10000 + entity % 80000, 5)
    created = (np.datetime64("2005-01-01") + rng.integers(0, 7000, size=n)).astype(str)
    missing = rng.random((3, n)) < np.array([[0.1], [0.3], [0.4]])

    def masked(arr, drop):
        return pa.array(np.where(drop, None, np.asarray(arr.to_pylist() if isinstance(arr, pa.Array) else arr,
                                                          dtype=object)), type=pa.string())

    records = pd.DataFrame({
        "rec": np.arange(n, dtype=np.int32), "record_id": pd.arrays.ArrowStringArray(rec_id),
        "source": _text(np.array(["branch", "app", "cards"], dtype=object)[rng.integers(3, size=n)]),
        "row_number": np.arange(1, n + 1, dtype=np.int64), "given_name": _text(given),
        "family_name": _text(family), "birth_date": _text(birth),
        "phone_1": pd.arrays.ArrowStringArray(masked(phone, missing[0])),
        "email_1": pd.arrays.ArrowStringArray(masked(email, missing[1])),
        "national_id_1": pd.arrays.ArrowStringArray(masked(nid, missing[2])),
        "street": pd.arrays.ArrowStringArray(street), "city": _text(np.full(n, "Lakemont", dtype=object)),
        "postcode": pd.arrays.ArrowStringArray(postcode), "country": _text(np.full(n, "US", dtype=object)),
        "created_at": _text(created)})
    address_key = pc.utf8_lower(pc.binary_join_element_wise(street, postcode, "|"))
    people = pd.DataFrame({"record_id": records["record_id"],
                           "given_key": records["given_name"].str.lower(),
                           "family_key": records["family_name"].str.lower(),
                           "suffix": _text([None] * n), "birth_date": records["birth_date"],
                           "birth_year": records["birth_date"].str.slice(0, 4).astype(float),
                           "address_key": pd.arrays.ArrowStringArray(address_key),
                           "created_at": pd.to_datetime(records["created_at"])})
    parts = []
    for kind, raw, key, drop in (("phone", phone, phone, missing[0]), ("email", email, email, missing[1]),
                                 ("national_id", nid, pc.binary_join_element_wise("us_ssn:", nid_s, ""), missing[2]),
                                 ("address", street, address_key, np.zeros(n, dtype=bool))):
        keep = np.flatnonzero(~drop)
        take = pa.array(keep)
        parts.append(pd.DataFrame({
            "rec": keep.astype(np.int32), "kind": kind,
            "slot": {"phone": "phone_1", "email": "email_1", "national_id": "national_id_1"}.get(kind, "street"),
            "raw": pd.arrays.ArrowStringArray(pc.take(raw, take)),
            "value": pd.arrays.ArrowStringArray(pc.take(key, take)),
            "key": pd.arrays.ArrowStringArray(pc.take(key, take)), "status": "valid", "reason": None,
            "detail": "us_ssn" if kind == "national_id" else None}))
    identifiers = pd.concat(parts, ignore_index=True).sort_values("rec", kind="stable").reset_index(drop=True)
    identifiers = identifiers.astype({"kind": "string", "slot": "string", "status": "string",
                                      "reason": "string", "detail": "string"})

    # pairs: chains inside entities, review pairs across entities, low pairs at random
    order = perm                                    # records in entity order
    same = ent_sorted[1:] == ent_sorted[:-1]
    a1, b1 = order[:-1][same], order[1:][same]
    m_review = n // 30
    a2, b2 = rng.integers(0, n, size=m_review), rng.integers(0, n, size=m_review)
    m_low = n // 2
    a3, b3 = rng.integers(0, n, size=m_low), rng.integers(0, n, size=m_low)
    a = np.concatenate([a1, a2, a3])
    b = np.concatenate([b1, b2, b3])
    band = np.concatenate([np.zeros(len(a1)), np.ones(m_review), np.full(m_low, 2)]).astype(np.int64)
    ok = (a != b) & ((band != 1) | (entity[a] != entity[b]))
    a, b, band = np.minimum(a, b)[ok], np.maximum(a, b)[ok], band[ok]
    uniq = np.unique(a.astype(np.int64) * n + b, return_index=True)[1]
    a, b, band = a[uniq], b[uniq], band[uniq]
    m = len(a)
    pairs = pd.DataFrame({"rec_a": a.astype(np.int32), "rec_b": b.astype(np.int32),
                          "keys": np.ones(m, dtype=np.int32)})
    weight = np.full(m, math.log2(0.01 / 0.99))
    top = {0: 0.9, 1: 0.55, 2: 0.15}
    for spec in FIELDS:
        hi = spec.n_levels - 1
        p_top = np.vectorize(top.get)(band)
        lvl = np.where(rng.random(m) < p_top, hi, rng.integers(0, hi + 1, size=m)).astype(np.int8)
        w = np.where(lvl == 0, 0.0, np.where(lvl == 1, -2.5, 1.0 + 5.0 * lvl / hi)).astype(np.float32)
        pairs[spec.column], pairs[spec.weight_column] = lvl, w
        weight += w
    shift = np.where(band == 0, 4.0, np.where(band == 1, -22.0, -26.0))
    weight = weight + shift
    prob = 1.0 / (1.0 + np.exp2(-weight))
    pairs["weight"] = weight.astype(np.float32)
    pairs["prob"] = prob
    low = np.array(["none", "household", "shared_identity"], dtype=object)[rng.choice(3, size=m, p=[0.9, 0.07, 0.03])]
    link = np.where(prob >= 0.99, "same_person", np.where(prob >= 0.5, "review", low))
    pairs["link_type"] = _text(link)
    pairs["reasons"] = _text(np.where(link == "same_person", "same_family_name;same_birth_date", "given_names_differ"))

    ent_name = pc.binary_join_element_wise("E", digits(np.arange(n_ent), 8), "")
    ent_names = np.asarray(ent_name.to_pylist(), dtype=object)
    entities = pd.DataFrame({"rec": records["rec"], "record_id": records["record_id"],
                             "entity_id": _text(ent_names[entity])})
    multi = np.flatnonzero(sizes >= 2)
    diag = pd.DataFrame({"entity_id": _text(ent_names[multi]), "size": sizes[multi].astype(np.int64)})
    split_e = multi[sizes[multi] >= 3][: max(1, n // 200)]
    starts = np.concatenate([[0], np.cumsum(sizes)])
    ids_sorted = np.asarray(rec_id.to_pylist(), dtype=object)[order]
    split_groups = {e: ids_sorted[starts[e]:starts[e + 1]] for e in split_e.tolist()}
    groups_text = {e: ",".join(sorted(v[: len(v) // 2])) + ";" + ",".join(sorted(v[len(v) // 2:]))
                   for e, v in split_groups.items()}
    diag["split_kind"] = _text([("weak_bridge" if e in groups_text else None) for e in multi.tolist()])
    diag["split_groups"] = _text([groups_text.get(e) for e in multi.tolist()])
    for col in ("weakest_link", "bridges", "articulation_points", "separated_records", "cut_links"):
        diag[col] = _text([None] * len(multi))
    diag["min_prob"] = 0.995
    diag["cut_weight"] = pd.array([None] * len(multi), dtype="Float64")

    # queue items: lists of entity codes, expanded to their records
    n_items = {"entity": m_review // 2, "split": len(split_e), "household": n // 100, "group": n // 500,
               "flagged": n // 100}
    item_ents, item_kind = [], []
    rev = np.flatnonzero(band == 1)[: n_items["entity"]]
    for i in rev.tolist():
        item_ents.append([entity[a[i]], entity[b[i]]])
        item_kind.append("entity")
    for e in split_e.tolist():
        item_ents.append([e])
        item_kind.append("split")
    for kind, k in (("household", 2), ("group", 3), ("flagged", 1)):
        picks = rng.integers(0, n_ent, size=(n_items[kind], k))
        item_ents += picks.tolist()
        item_kind += [kind] * n_items[kind]
    item = np.repeat(np.arange(len(item_ents)), [len(x) for x in item_ents])
    ents = np.concatenate([np.asarray(x) for x in item_ents])
    member_item = np.repeat(item, sizes[ents])
    member_pos = np.concatenate([np.arange(starts[e], starts[e + 1]) for e in ents])
    named = member_names(member_item, pd.Series(ids_sorted[member_pos], dtype="string"), "itm-")
    kinds = np.array(item_kind, dtype=object)
    prefix = {"entity": "ent-", "split": "spl-", "household": "hh-", "group": "grp-", "flagged": "flg-"}
    keys = [prefix[k] + key[4:] for k, key in zip(kinds[named["group"]], named["key"])]
    queue = pd.DataFrame({"cluster_key": _text(keys), "kind": _text(kinds[named["group"]]),
                          "size": named["size"].to_numpy(), "score": rng.random(len(named)),
                          "priority": np.round(rng.random(len(named)) * 100, 2),
                          "record_ids": named["record_ids"].astype("string"),
                          "entity_ids": _text([";".join(ent_names[np.asarray(item_ents[g])]) for g in named["group"]]),
                          "detail": _text(np.where(kinds[named["group"]] == "split", "weak_bridge", ""))})
    queue = queue.drop_duplicates("cluster_key").sort_values(["priority", "cluster_key"], ascending=[False, True])
    queue = queue.reset_index(drop=True)

    flagged = rng.choice(n, size=n // 20, replace=False)
    fk = rng.integers(len(FLAGS), size=len(flagged))
    flags = pd.DataFrame({"record_id": records["record_id"].to_numpy()[flagged],
                          "flag": _text([FLAGS[k][0] for k in fk]), "severity": _text([FLAGS[k][1] for k in fk]),
                          "reason": _text(["An invented reason sentence for this flag."] * len(flagged)),
                          "scope": _text(["record"] * len(flagged)), "entity_id": _text(ent_names[entity[flagged]]),
                          "group_id": _text([None] * len(flagged))}).astype({"record_id": "string"})
    hh = rng.integers(0, n_ent, size=(n // 100, 2))
    households = pd.DataFrame({"entity_id": _text(ent_names[hh.ravel()]),
                               "household_id": _text(np.repeat([f"H{i:07d}" for i in range(len(hh))], 2)),
                               "size": 2, "evidence": _text(["same_address"] * hh.size)})
    households = households.drop_duplicates("entity_id")
    gg = rng.integers(0, n_ent, size=(n // 500, 3))
    groups = pd.DataFrame({"entity_id": _text(ent_names[gg.ravel()]),
                           "group_id": _text(np.repeat([f"G{i:07d}" for i in range(len(gg))], 3)),
                           "group_kind": _text(["ring_like"] * gg.size)}).drop_duplicates("entity_id")
    hubs = pd.DataFrame({"kind": _text([]), "key": _text([])})
    model = {"format": "resolve.match-model", "version": 1,
             "prior": {"lambda": 0.01, "weight": round(math.log2(0.01 / 0.99), 4)}}
    project = Project.create(path)
    project.save_run({"records": records, "people": people, "identifiers": identifiers, "pairs": pairs,
                      "entities": entities, "diagnostics": diag, "households": households,
                      "groups": groups, "flags": flags, "queue": queue, "hubs": hubs},
                     {"created": "2024-06-01T00:00:00+00:00", "input_rows": n, "accepted": n,
                      "quarantined": 0, "thresholds": {"auto": 0.99, "review": 0.5}},
                     documents={"model.json": model})


def _pct(values, q) -> float:
    import numpy as np

    return float(np.percentile(np.asarray(values) * 1000, q)) if len(values) else float("nan")


def measure(path: Path, steps: int, decisions: int, started: float) -> dict:
    """Run in a fresh process: open the workbench headless and time it (``started``: time.time()
    of the parent just before it launched this process)."""
    import asyncio

    import numpy as np

    os.environ.setdefault("RESOLVE_KEYS", str(path / "no-personal-keys.toml"))
    from tui.app import make_app

    out: dict = {}

    async def go():
        app = make_app(path, "bench")
        offset = time.time() - time.perf_counter()
        async with app.run_test(size=(120, 40)) as pilot:
            while "queue_painted_at" not in app.timings:
                await asyncio.sleep(0.005)
            out["queue_on_screen_s"] = round(app.timings["queue_painted_at"][0] + offset - started, 3)
            out["queue_on_screen_cpu_s"] = round(app.timings["queue_painted_cpu"][0], 3)
            out["load_average"] = round(os.getloadavg()[0], 1)
            while app.queue is None:
                await asyncio.sleep(0.02)
            out["queue_items"] = len(app.queue)
            while app.index is None:
                await asyncio.sleep(0.02)
            out["index_s"] = round(app.timings["index"][0], 2)
            await app.workers.wait_for_complete()
            await pilot.pause()
            await pilot.press("enter")
            await app.workers.wait_for_complete()
            await pilot.pause()
            app.timings["cluster"] = []
            for i in range(steps):
                await pilot.press("n" if (i // 20) % 2 == 0 else "p")
                await app.workers.wait_for_complete()
                await pilot.pause()
            nav = app.timings["cluster"]
            out["cluster_paint_ms"] = {"n": len(nav), "median": round(_pct(nav, 50), 1), "p95": round(_pct(nav, 95), 1)}
            rng = np.random.default_rng(1)
            looks = []
            for pos in rng.integers(0, len(app.queue), size=1000).tolist():
                t = time.perf_counter()
                app.index.cluster(app.queue.item(pos))
                looks.append(time.perf_counter() - t)
            out["cluster_lookup_ms"] = {"n": len(looks), "median": round(_pct(looks, 50), 2),
                                        "p95": round(_pct(looks, 95), 2)}
            app.timings["decision"] = []
            for i in range(decisions):
                item = app.screen.view.item
                if int(item["size"]) >= 2:
                    await pilot.press("h" if item["kind"] == "household" else "a")
                    await app.workers.wait_for_complete()
                    await pilot.pause()
                await pilot.press("n")
                await app.workers.wait_for_complete()
                await pilot.pause()
            dec = app.timings.get("decision", [])
            out["decision_ms"] = {"n": len(dec), "median": round(_pct(dec, 50), 1), "p95": round(_pct(dec, 95), 1)}
    asyncio.run(go())
    out["peak_rss_mb"] = round(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024)
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--records", type=int, default=1_000_000)
    parser.add_argument("--steps", type=int, default=200)
    parser.add_argument("--decisions", type=int, default=40)
    parser.add_argument("--child", default=None, help=argparse.SUPPRESS)
    parser.add_argument("--started", type=float, default=None, help=argparse.SUPPRESS)
    args = parser.parse_args()
    path = CACHE / f"tui-project-{args.records}"
    if args.child:
        print(json.dumps(measure(Path(args.child), args.steps, args.decisions, args.started)))
        return
    if not (path / "runs").is_dir() or not any((path / "runs").glob("run-*")):
        t = time.perf_counter()
        build_project(path, args.records)
        print(f"built a {args.records:,}-record project in {time.perf_counter() - t:.1f}s", flush=True)
    store = path / "review.sqlite"
    for suffix in ("", "-wal", "-shm"):
        Path(str(store) + suffix).unlink(missing_ok=True)
    started = time.time()
    proc = subprocess.run([sys.executable, "-m", "bench.tui_speed", "--records", str(args.records),
                           "--steps", str(args.steps), "--decisions", str(args.decisions),
                           "--child", str(path), "--started", repr(started)],
                          capture_output=True, text=True, cwd=HERE.parent)
    if proc.returncode != 0:
        sys.stderr.write(proc.stderr[-4000:])
        raise SystemExit(proc.returncode)
    result = json.loads(proc.stdout.strip().splitlines()[-1])
    result["records"] = args.records
    print(json.dumps(result, indent=2))


if __name__ == "__main__":
    main()
