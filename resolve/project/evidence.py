"""What a reviewer saw: evidence snapshots of a set of records, read fast from a run folder.

A decision keeps a snapshot of its evidence (the records' key fields with national IDs masked
to their last four characters, the links between the records with probabilities and reasons,
the identifiers they hold, their flags and entities), so an auditor can later see what the
reviewer was shown even after the records change. Recording a decision must take
milliseconds on a run of a million records, so `RunView` reads each Parquet table once per
session and then answers look-ups by position (sorted indexes and ``searchsorted``), never by
scanning.

`evidence_hashes` condenses an item's member records and its links (type, probability
rounded to two decimals) into a short hash; a queue item whose hash differs from the one
stored with its decision has new evidence and is reopened.
"""

from __future__ import annotations

import hashlib
import re
from dataclasses import dataclass

import numpy as np
import pandas as pd
import pyarrow as pa

from resolve.errors import DecisionError
from resolve.project.runs import Project, Run

MASK = "***"
MAX_LINKS = 5000
"""Links kept in one snapshot; a larger group keeps its strongest links and a count."""
_PREFIX = re.compile(r"^([a-z_]+:)")
_NOT_ALNUM = re.compile(r"[^0-9A-Za-z]")


def mask_national_ids(values: pd.Series) -> pd.Series:
    """Hide all but the last four letters or digits: ``536-90-4399`` -> ``***4399``.

    A value with four or fewer letters and digits is hidden completely. A ``type:`` prefix
    (identifier keys such as ``ssn:536904399``) is kept. Missing stays missing.
    """
    s = values.astype("string")
    prefix = s.str.extract(r"^([a-z_]+:)", expand=False).fillna("")
    body = s.str.replace(r"^[a-z_]+:", "", regex=True).str.replace(r"[^0-9A-Za-z]", "", regex=True)
    tail = body.str.slice(-4).where(body.str.len() > 4, "")
    return (prefix + MASK + tail).where(s.notna(), pd.NA).astype("string")


def mask_national_id(value: str | None) -> str | None:
    """`mask_national_ids` for one value (the same result, without pandas overhead)."""
    if value is None:
        return None
    m = _PREFIX.match(value)
    prefix = m.group(1) if m else ""
    body = _NOT_ALNUM.sub("", value[len(prefix):])
    return prefix + MASK + (body[-4:] if len(body) > 4 else "")


def national_id_columns(columns) -> list[str]:
    """Record columns that hold national IDs (``national_id``, ``national_id_1``, ...)."""
    return [c for c in columns if c == "national_id" or (c.startswith("national_id_")
                                                         and c[12:].isdigit())]


def _ranges(sorted_keys: np.ndarray, wanted: np.ndarray) -> np.ndarray:
    """Positions in ``sorted_keys`` equal to any of ``wanted`` (both int arrays)."""
    lo = np.searchsorted(sorted_keys, wanted, side="left")
    hi = np.searchsorted(sorted_keys, wanted, side="right")
    n = hi - lo
    if n.sum() == 0:
        return np.zeros(0, dtype=np.int64)
    starts = np.repeat(lo - np.concatenate([[0], np.cumsum(n)[:-1]]), n)
    return starts + np.arange(n.sum())


@dataclass
class _Indexed:
    """An Arrow table with its rows findable by an integer key (``rec``)."""

    table: pa.Table
    order: np.ndarray
    sorted_key: np.ndarray

    def rows(self, keys: np.ndarray) -> np.ndarray:
        return self.order[_ranges(self.sorted_key, np.unique(keys))]

    def take(self, keys: np.ndarray) -> pa.Table:
        return self.table.take(pa.array(self.rows(keys), type=pa.int64()))


class RunView:
    """The latest (or a given) run of a project, loaded once and looked up by record."""

    def __init__(self, project: Project, run: Run | None = None):
        self.project = project
        self.run = run or project.latest_run()
        self.run_id = self.run.run_id
        self._cache: dict[str, object] = {}

    # ------------------------------------------------------------ loading
    def _get(self, name: str, build):
        if name not in self._cache:
            self._cache[name] = build()
        return self._cache[name]

    @property
    def records(self) -> pa.Table:
        """The run's records table (Arrow), in ``rec`` order."""
        import pyarrow.parquet as pq

        return self._get("records", lambda: pq.read_table(self.run.path / "records.parquet").combine_chunks())

    @property
    def record_index(self) -> pd.Index:
        """Record IDs by ``rec``."""
        return self._get("record_index", lambda: pd.Index(
            self.records.column("record_id").to_pandas().astype("string")))

    @property
    def entity_ids(self) -> np.ndarray:
        """Entity ID by ``rec`` (object array)."""
        def build():
            ent = self.run.table("entities", ["rec", "entity_id"])
            out = np.empty(len(self.record_index), dtype=object)
            out[ent["rec"].to_numpy(dtype=np.int64)] = ent["entity_id"].astype(str).to_numpy()
            return out
        return self._get("entity_ids", build)

    @property
    def created_at(self) -> np.ndarray:
        """``created_at`` by ``rec`` as datetime64[ns] (NaT when unknown), for the survivor rule."""
        def build():
            import pyarrow.parquet as pq

            from resolve.project.survivor import created_times

            n = len(self.record_index)
            if self.run.has("people") and "created_at" in pq.read_schema(
                    self.run.path / "people.parquet").names:
                times = pd.to_datetime(self.run.table("people", ["created_at"])["created_at"],
                                       errors="coerce")
            elif "created_at" in self.records.column_names:
                raw = pd.DataFrame({"created_at": self.records.column("created_at").to_pandas()})
                times = created_times(raw)
            else:
                times = pd.Series(pd.NaT, index=range(n), dtype="datetime64[ns]")
            if getattr(times.dtype, "tz", None) is not None:
                times = times.dt.tz_convert("UTC").dt.tz_localize(None)
            return times.to_numpy(dtype="datetime64[ns]")
        return self._get("created_at", build)

    def _indexed(self, table: str, columns: tuple[str, ...], key_of) -> _Indexed | None:
        def build():
            import pyarrow.parquet as pq

            if not self.run.has(table):
                return None
            path = self.run.path / f"{table}.parquet"
            names = pq.read_schema(path).names
            t = pq.read_table(path, columns=[c for c in columns if c in names]).combine_chunks()
            key = key_of(t)
            order = np.argsort(key, kind="stable")
            return _Indexed(t, order, key[order])
        return self._get(table + ":" + ",".join(columns), build)

    def _by_rec(self, t: pa.Table) -> np.ndarray:
        return t.column("rec").to_numpy().astype(np.int64)

    def _by_record_id(self, t: pa.Table) -> np.ndarray:
        return self.record_index.get_indexer(t.column("record_id").to_pandas().astype("string")).astype(np.int64)

    @property
    def _pairs(self):
        def build():
            import pyarrow.parquet as pq

            if not self.run.has("pairs"):
                return None
            path = self.run.path / "pairs.parquet"
            names = pq.read_schema(path).names
            t = pq.read_table(path, columns=[c for c in ("rec_a", "rec_b", "prob", "link_type", "reasons")
                                             if c in names])
            for c in ("link_type", "reasons"):
                if c not in names:
                    t = t.append_column(c, pa.nulls(len(t), pa.string()))
            a = t.column("rec_a").to_numpy().astype(np.int64)
            order = np.argsort(a, kind="stable")
            return {"a": a, "b": t.column("rec_b").to_numpy().astype(np.int64),
                    "prob": t.column("prob").to_numpy().astype(np.float64),
                    "text": t.select(["link_type", "reasons"]).combine_chunks(), "order": order,
                    "sorted": a[order]}
        return self._get("pairs", build)

    @property
    def queue(self) -> pd.DataFrame:
        """The run's review queue indexed by ``cluster_key``."""
        return self._get("queue", lambda: self.run.table("queue").set_index("cluster_key", drop=False))

    @property
    def ids_by_rec(self) -> np.ndarray:
        """Record IDs by ``rec`` (object array)."""
        return self._get("ids_by_rec", lambda: self.record_index.to_numpy(dtype=object))

    # ------------------------------------------------------------ look-ups
    def recs(self, record_ids: list[str]) -> np.ndarray:
        """``rec`` of each record ID; raises `DecisionError` for an ID not in this run."""
        pos = self.record_index.get_indexer(pd.Index(record_ids, dtype="string"))
        if (pos < 0).any():
            missing = [r for r, p in zip(record_ids, pos) if p < 0][:3]
            raise DecisionError(f"record {', '.join(missing)} is not in {self.run_id}; check the "
                                "record IDs (they are the IDs from your extract).")
        return pos.astype(np.int64)

    def has_records(self, record_ids: list[str]) -> np.ndarray:
        """True for each record ID present in this run."""
        return self.record_index.get_indexer(pd.Index(record_ids, dtype="string")) >= 0

    def queue_item(self, cluster_key: str) -> pd.Series:
        """One queue row; raises `DecisionError` when the key is not queued in this run."""
        q = self.queue
        if cluster_key not in q.index:
            raise DecisionError(f"cluster {cluster_key} is not in the queue of {self.run_id}; "
                                "list current keys with 'resolve queue'.")
        return q.loc[cluster_key]

    def record_rows(self, recs: np.ndarray) -> list[dict]:
        """Key fields of some records as dicts, national IDs masked, in the order given."""
        rows = self.records.take(pa.array(np.asarray(recs, dtype=np.int64))).to_pylist()
        id_cols = national_id_columns(self.records.column_names)
        for row in rows:
            row.pop("rec", None)
            row.pop("file", None)
            for c in id_cols:
                row[c] = mask_national_id(row[c])
        return rows

    def record_fields(self, recs: np.ndarray) -> pd.DataFrame:
        """`record_rows` as a DataFrame."""
        return pd.DataFrame(self.record_rows(recs))

    def _link_rows(self, recs: np.ndarray) -> tuple[np.ndarray, dict | None]:
        p = self._pairs
        if p is None:
            return np.zeros(0, dtype=np.int64), None
        rows = p["order"][_ranges(p["sorted"], np.unique(recs))]
        rows = rows[np.isin(p["b"][rows], recs)]
        return np.sort(rows), p

    def link_rows(self, recs: np.ndarray) -> list[dict]:
        """Links (any type) whose two records are both in ``recs``, as dicts."""
        rows, p = self._link_rows(recs)
        if p is None or len(rows) == 0:
            return []
        text = p["text"].take(pa.array(rows)).to_pylist()
        ids = self.ids_by_rec
        return [{"record_id_a": ids[a], "record_id_b": ids[b], "prob": float(pr),
                 "link_type": t["link_type"], "reasons": t["reasons"]}
                for a, b, pr, t in zip(p["a"][rows], p["b"][rows], p["prob"][rows], text)]

    def links_among(self, recs: np.ndarray) -> pd.DataFrame:
        """Links (any type) whose two records are both in ``recs`` (vectorised; many records)."""
        rows, p = self._link_rows(recs)
        cols = ["record_id_a", "record_id_b", "prob", "link_type", "reasons"]
        if p is None or len(rows) == 0:
            return pd.DataFrame({c: pd.Series(dtype="float64" if c == "prob" else "string") for c in cols})
        text = p["text"].take(pa.array(rows))
        ids = self.ids_by_rec
        return pd.DataFrame({
            "record_id_a": ids[p["a"][rows]], "record_id_b": ids[p["b"][rows]],
            "prob": p["prob"][rows],
            "link_type": text.column("link_type").to_pandas().astype("string").to_numpy(),
            "reasons": text.column("reasons").to_pandas().astype("string").to_numpy(),
        })

    def identifier_rows(self, recs: np.ndarray) -> list[dict]:
        """Identifiers held by the records: record_id, kind, key (national IDs masked), status."""
        ix = self._indexed("identifiers", ("rec", "kind", "key", "status"), self._by_rec)
        if ix is None:
            return []
        out = []
        ids = self.ids_by_rec
        for row in ix.take(recs).to_pylist():
            key = row.get("key")
            if row.get("kind") == "national_id":
                key = mask_national_id(key)
            out.append({"record_id": ids[row["rec"]], "kind": row.get("kind"), "key": key,
                        "status": row.get("status")})
        return out

    def identifiers_of(self, recs: np.ndarray) -> pd.DataFrame:
        """`identifier_rows` as a DataFrame."""
        return pd.DataFrame(self.identifier_rows(recs), columns=["record_id", "kind", "key", "status"])

    def national_ids(self, rec: int) -> pd.DataFrame:
        """Unmasked national IDs of one record: slot, raw, value, id_type, status."""
        cols = ["slot", "raw", "value", "id_type", "status"]
        ix = self._indexed("identifiers", ("rec", "kind", "slot", "raw", "value", "detail", "status"),
                           self._by_rec)
        if ix is not None:
            rows = [r for r in ix.take(np.array([rec])).to_pylist() if r.get("kind") == "national_id"]
            return pd.DataFrame([{"slot": r.get("slot"), "raw": r.get("raw"), "value": r.get("value"),
                                  "id_type": r.get("detail"), "status": r.get("status")} for r in rows],
                                columns=cols)
        row = self.records.take(pa.array([rec])).to_pylist()[0]
        return pd.DataFrame([{"slot": c, "raw": row[c], "value": None, "id_type": None, "status": None}
                             for c in national_id_columns(row) if row[c] is not None], columns=cols)

    def flag_rows(self, recs: np.ndarray) -> list[dict]:
        """Flags on the records: record_id, flag, severity, reason."""
        ix = self._indexed("flags", ("record_id", "flag", "severity", "reason"), self._by_record_id)
        if ix is None:
            return []
        return ix.take(recs).to_pylist()

    def flags_of(self, recs: np.ndarray) -> pd.DataFrame:
        """`flag_rows` as a DataFrame."""
        return pd.DataFrame(self.flag_rows(recs), columns=["record_id", "flag", "severity", "reason"])

    # ------------------------------------------------------------ snapshots
    def snapshot(self, record_ids: list[str], item: pd.Series | None = None) -> tuple[dict, str]:
        """Evidence for a decision on ``record_ids``: (JSON-ready dict, evidence hash)."""
        recs = self.recs(record_ids)
        links = self.link_rows(recs)
        h = evidence_hash(record_ids, links)
        links_total = len(links)
        if links_total > MAX_LINKS:
            links = sorted(links, key=lambda x: (-x["prob"], x["record_id_a"], x["record_id_b"]))[:MAX_LINKS]
        for link in links:
            link["prob"] = round(link["prob"], 4)
        records = self.record_rows(recs)
        for row, entity in zip(records, self.entity_ids[recs]):
            row["entity_id"] = entity
        snap = {
            "run_id": self.run_id,
            "records": [{k: _plain(v) for k, v in r.items()} for r in records],
            "links": links,
            "links_total": links_total,
            "identifiers": self.identifier_rows(recs),
            "flags": self.flag_rows(recs),
        }
        if item is not None:
            snap["queue_item"] = {k: _plain(item.get(k)) for k in
                                  ("cluster_key", "kind", "size", "score", "priority", "detail")
                                  if k in item.index}
        return snap, h


def _plain(v):
    if v is None or (not isinstance(v, (list, dict, str)) and pd.isna(v)):
        return None
    if isinstance(v, (np.integer,)):
        return int(v)
    if isinstance(v, (np.floating,)):
        return float(v)
    if hasattr(v, "isoformat"):
        return v.isoformat()
    return v


def records_as_dicts(frame: pd.DataFrame) -> list[dict]:
    """Rows as plain dicts (missing values as None), JSON-ready."""
    cols = list(frame.columns)
    return [{c: _plain(v) for c, v in zip(cols, row)}
            for row in frame.itertuples(index=False, name=None)]


def _link_label(a: str, b: str, link_type, prob: float) -> str:
    lo, hi = (a, b) if a <= b else (b, a)
    return f"{lo}|{hi}|{link_type or ''}|{'%.2f' % float(np.round(prob, 2))}"


def evidence_hash(record_ids: list[str], links: list[dict]) -> str:
    """Evidence hash of one item (the same value `evidence_hashes` gives it)."""
    members = ";".join(sorted(str(r) for r in record_ids))
    labels = ";".join(sorted(_link_label(str(x["record_id_a"]), str(x["record_id_b"]),
                                         x["link_type"], x["prob"]) for x in links))
    return hashlib.sha256(f"{members}#{labels}".encode()).hexdigest()[:16]


def evidence_hashes(members: pd.DataFrame, links: pd.DataFrame) -> dict:
    """Short evidence hash per item.

    ``members`` has ``item``, ``record_id``; ``links`` has ``item``, ``record_id_a``,
    ``record_id_b``, ``link_type``, ``prob``. The hash covers the sorted member IDs and the
    sorted links as ``a|b|type|prob`` with the probability rounded to two decimals, so it
    changes when a record joins or leaves or a link changes type or moves by 0.01 or more.
    """
    from resolve.clusters.keys import join_runs

    m = members[["item", "record_id"]].astype({"record_id": str}).sort_values(["item", "record_id"])
    items_m, text_m = join_runs(m["item"].to_numpy(), m["record_id"].to_numpy(dtype=object))
    link_text = {}
    if len(links):
        a = links["record_id_a"].astype(str).to_numpy(dtype=object)
        b = links["record_id_b"].astype(str).to_numpy(dtype=object)
        lo, hi = np.where(a <= b, a, b), np.where(a <= b, b, a)
        prob = np.char.mod("%.2f", np.round(links["prob"].to_numpy(dtype=np.float64), 2))
        label = (pd.Series(lo, dtype=object) + "|" + pd.Series(hi, dtype=object) + "|"
                 + links["link_type"].astype("string").fillna("").to_numpy(dtype=object) + "|"
                 + pd.Series(prob, dtype=object))
        lk = pd.DataFrame({"item": links["item"].to_numpy(), "label": label.to_numpy(dtype=object)})
        lk = lk.sort_values(["item", "label"])
        items_l, text_l = join_runs(lk["item"].to_numpy(), lk["label"].to_numpy(dtype=object))
        link_text = dict(zip(items_l.tolist(), text_l.tolist()))
    return {item: hashlib.sha256(f"{text}#{link_text.get(item, '')}".encode()).hexdigest()[:16]
            for item, text in zip(items_m.tolist(), text_m.tolist())}
