"""An index over one run's tables, so that opening a cluster never scans a whole table.

Moving from one cluster to the next must take well under 50 ms on a million-record run. The
tables are read once (in a worker) and kept as Arrow tables with their keys in numpy arrays
ordered by ``rec`` (`tui.arrow_rows`); a cluster's records, identifiers, links and flags are
then found by binary search (`numpy.searchsorted`) over those keys and gathered chunk by
chunk: the cost depends on the cluster's size, not on the run's.

National IDs are masked to their last four characters everywhere here (the library's
`mask_national_id`); the full value is only given out through an audited reveal.
"""

from __future__ import annotations

import threading
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.compare.levels import FIELDS
from resolve.project import Run
from resolve.project.evidence import mask_national_id, national_id_columns
from resolve.scoring.explain import stored_prior
from tui.arrow_rows import KeyOrder, Rows, index_in, ranges, read, rows_of, strings
from tui.data import QueueData, split_members

MAX_RECORDS_SHOWN = 40
MAX_PAIRS_SHOWN = 400
RECORD_FIELDS = ("source", "given_name", "family_name", "full_name", "birth_date", "phone",
                 "email", "national_id", "national_id_country", "street", "city", "postcode",
                 "country", "created_at", "source_system")
EVIDENCE_PEOPLE = ("given_key", "family_key", "suffix", "birth_date", "birth_year", "address_key")
SHORT_LABEL = {"given_name": "given name", "family_name": "family name", "suffix": "suffix",
               "birth_date": "birth date", "national_id": "national ID", "phone": "phone",
               "email": "email", "address": "address"}
SHOWN = {"given_name": ("given_key",), "family_name": ("family_key",), "suffix": ("suffix",),
         "birth_date": ("birth_date",), "address": ("address_key",)}


def _text(values) -> np.ndarray:
    return pd.Series(values, dtype="string").fillna("").to_numpy(dtype=object)


@dataclass
class ClusterView:
    """Everything the cluster screen shows for one work-list item (small, plain Python)."""

    item: dict
    record_ids: list[str]
    recs: np.ndarray
    shown: list[str]
    missing: list[str]
    fields: list[str]
    values: dict[str, list]
    identifiers: list[dict]
    pairs: list[dict]
    pairs_total: int
    flags: list[dict]
    split: dict | None
    context: list[str] = field(default_factory=list)

    @property
    def key(self) -> str:
        return str(self.item.get("cluster_key", ""))

    def value(self, column: str, record_id: str):
        """One shown field of one shown record."""
        return self.values.get(column, [None] * len(self.shown))[self.shown.index(record_id)]


class RunIndex:
    """Sorted, in-memory views of one run's tables for fast look-ups by record.

    Built once per session in a worker. Tables stay in Arrow (no pandas copies of a million
    rows); record and entity IDs are mapped to positions with Arrow's hash look-up
    (``index_in``), and every per-record table is ordered by ``rec`` for binary search.
    """

    def __init__(self, run: Run):
        self.run = run
        records = read(run, "records")
        if records is None:
            raise FileNotFoundError(f"run {run.run_id} has no records table")
        self.records = Rows(records.drop_columns([c for c in ("rec", "file", "row_number")
                                                  if c in records.column_names]))
        self.n = records.num_rows
        self.record_ids = strings(records.column("record_id"))
        self.field_columns = [c for c in self._ordered_columns(self.records.column_names)]
        self.national_id_columns = national_id_columns(self.records.column_names)
        self._people: Rows | None | bool = False
        self._people_lock = threading.Lock()

        ent = read(run, "entities", ["rec", "entity_id"])
        self.entity_code = np.full(self.n, -1, dtype=np.int64)
        self.entity_names = pa.array([], type=pa.string())
        if ent is not None and ent.num_rows:
            encoded = pc.dictionary_encode(strings(ent.column("entity_id")))
            self.entity_code[ent.column("rec").to_numpy().astype(np.int64)] = \
                encoded.indices.to_numpy(zero_copy_only=False).astype(np.int64)
            self.entity_names = encoded.dictionary

        ids = read(run, "identifiers", ["rec", "kind", "key", "status", "detail"])
        self.identifiers = rows_of(ids)
        self.identifier_by_rec = KeyOrder(ids.column("rec").to_numpy() if ids is not None else [])

        pair_cols = ["rec_a", "rec_b", "keys", "weight", "prob", "link_type",
                     *[s.column for s in FIELDS], *[s.weight_column for s in FIELDS]]
        pairs = read(run, "pairs", pair_cols)
        self.pairs = rows_of(pairs)
        empty = np.zeros(0, dtype=np.int64)
        self.pair_a = pairs.column("rec_a").to_numpy().astype(np.int64) if pairs is not None else empty
        self.pair_b = pairs.column("rec_b").to_numpy().astype(np.int64) if pairs is not None else empty
        self.pair_prob = (pairs.column("prob").to_numpy().astype(np.float64) if pairs is not None
                          else np.zeros(0))
        self.pair_by_a = KeyOrder(self.pair_a)

        flags = read(run, "flags", ["record_id", "flag", "severity", "reason", "scope", "group_id"])
        self.flags = rows_of(flags)
        self.flag_rec = index_in(flags.column("record_id"), self.record_ids) if flags is not None else empty
        self.flag_by_rec = KeyOrder(self.flag_rec)

        n_ent = len(self.entity_names)
        self.diagnostics = rows_of(read(run, "diagnostics", ["entity_id", "split_kind", "split_groups",
                                                            "cut_links", "separated_records"]))
        households = read(run, "households", ["entity_id", "household_id", "evidence"])
        groups = read(run, "groups", ["entity_id", "group_id", "group_kind"])
        # one hash look-up for the entity IDs of all three tables
        tables = [self.diagnostics.table if self.diagnostics is not None else None, households, groups]
        columns = [strings(tb.column("entity_id")) for tb in tables if tb is not None and tb.num_rows]
        codes = index_in(pa.concat_arrays(columns), self.entity_names) if columns else np.zeros(0, np.int64)
        split, start = {}, 0
        for i, tb in enumerate(tables):
            if tb is not None and tb.num_rows:
                split[i], start = codes[start:start + tb.num_rows], start + tb.num_rows
        self.diag_of_entity = np.full(n_ent, -1, dtype=np.int64)
        if 0 in split:
            ok = split[0] >= 0
            self.diag_of_entity[split[0][ok]] = np.flatnonzero(ok)
        self.household_of = self._per_entity(households, split.get(1), "household_id", "evidence")
        self.group_of = self._per_entity(groups, split.get(2), "group_id", "group_kind")
        self._names: pa.Array | None = None
        self._member_item: np.ndarray | None = None
        self._member_rec: np.ndarray | None = None
        self._item_rec: np.ndarray | None = None
        self._item_start: np.ndarray | None = None

    @property
    def people(self) -> Rows | None:
        """The compared keys of every record (read on first use: only evidence needs them)."""
        with self._people_lock:
            if self._people is False:
                people = read(self.run, "people", ["record_id", *EVIDENCE_PEOPLE])
                self._people = Rows(people) if people is not None and people.num_rows == self.n else None
            return self._people

    def _per_entity(self, table: pa.Table | None, code: np.ndarray | None, id_col: str, detail_col: str):
        """(id, detail) object arrays by entity code ('' where the entity has none)."""
        n = len(self.entity_names)
        ids = np.full(n, "", dtype=object)
        details = np.full(n, "", dtype=object)
        if table is None or code is None or id_col not in table.column_names:
            return ids, details
        ok = code >= 0
        ids[code[ok]] = _text(table.column(id_col).to_pandas())[ok]
        if detail_col in table.column_names:
            details[code[ok]] = _text(table.column(detail_col).to_pandas())[ok]
        return ids, details

    @staticmethod
    def _ordered_columns(columns: list[str]) -> list[str]:
        out = []
        for base in RECORD_FIELDS:
            out += [c for c in columns if c == base or (c.startswith(base + "_") and c[len(base) + 1:].isdigit())]
        out += [c for c in columns if c not in out and c != "record_id"]
        return out

    # ---------------------------------------------------------------- work-list support
    def attach(self, queue: QueueData) -> None:
        """Map every queue member to its record (for clusters and search); flag the items."""
        item, ids = split_members(queue.frame["record_ids"])
        rec = index_in(ids, self.record_ids)
        self._item_rec = rec
        self._item_start = np.searchsorted(item, np.arange(len(queue) + 1))
        ok = rec >= 0
        item, rec = item[ok], rec[ok]
        order = np.argsort(rec, kind="stable")
        self._member_rec, self._member_item = rec[order], item[order]
        if self.flags is None or self.flags.num_rows == 0:
            queue.set_flags([], np.zeros(len(queue), dtype=np.int64))
            return
        encoded = pc.dictionary_encode(strings(self.flags.column("flag")))
        codes = encoded.indices.to_numpy(zero_copy_only=False).astype(np.int64)
        names = [str(n) for n in encoded.dictionary.to_pylist()][:62]
        bits = np.where(codes < 62, np.left_shift(np.int64(1), np.minimum(codes, 61)), 0)
        per_rec = np.zeros(self.n, dtype=np.int64)
        valid = self.flag_rec >= 0
        np.bitwise_or.at(per_rec, self.flag_rec[valid], bits[valid])
        per_item = np.zeros(len(queue), dtype=np.int64)
        np.bitwise_or.at(per_item, item, per_rec[rec])
        queue.set_flags(names, per_item)

    def search(self, text: str) -> np.ndarray:
        """Positions of work-list items holding a record whose ID equals ``text`` or whose name
        contains it (case-insensitive). Needs `attach` first."""
        text = text.strip()
        if not text or self._member_rec is None:
            return np.zeros(0, dtype=np.int64)
        if self._names is None:
            parts = [pc.fill_null(self.records.column(c).cast(pa.string()), "")
                     for c in ("given_name", "family_name", "full_name") if c in self.records.column_names]
            joined = pc.binary_join_element_wise(*parts, " ") if parts else pa.array([""] * self.n)
            self._names = pc.utf8_lower(joined)
        hit = pc.match_substring(self._names, text.lower())
        hit = pc.or_(hit, pc.equal(self.record_ids, text))
        recs = np.flatnonzero(np.asarray(hit.to_numpy(zero_copy_only=False)))
        rows = ranges(self._member_rec, recs)
        return np.unique(self._member_item[rows])

    # ---------------------------------------------------------------- one cluster
    def recs_of(self, record_ids: list[str]) -> np.ndarray:
        """``rec`` per record ID (-1 when the record is not in this run)."""
        return index_in(pa.array(record_ids, type=pa.string()), self.record_ids)

    def ids_of(self, recs: np.ndarray) -> list[str]:
        """Record ID of each ``rec``."""
        return [str(r) for r in self.record_ids.take(pa.array(recs, type=pa.int64())).to_pylist()]
    def cluster(self, item: dict) -> ClusterView:
        """Gather one item's records, identifiers, links, flags and split suggestion.

        Every look-up is a binary search over the run's sorted keys (or the item's members
        mapped once by `attach`) followed by a ``take`` of the few rows found; results are
        plain lists (a cluster is small, and pandas' per-call overhead would cost more than
        the work).
        """
        ids = [r for r in str(item.get("record_ids") or "").split(";") if r]
        pos = item.get("position")
        if self._item_rec is not None and pos is not None and 0 <= int(pos) < len(self._item_start) - 1 \
                and self._item_start[int(pos) + 1] - self._item_start[int(pos)] == len(ids):
            all_recs = self._item_rec[self._item_start[int(pos)]:self._item_start[int(pos) + 1]]
        else:
            all_recs = self.recs_of(ids)
        missing = [r for r, p in zip(ids, all_recs.tolist()) if p < 0]
        present = all_recs[all_recs >= 0]
        recs = present[:MAX_RECORDS_SHOWN]
        shown, fields, values = self.record_fields(recs)
        pairs, total = self.pairs_among(present)
        return ClusterView(
            item=item, record_ids=ids, recs=recs, shown=shown, missing=missing, fields=fields,
            values=values, identifiers=self.identifiers_of(recs), pairs=pairs, pairs_total=total,
            flags=self.flags_of(present), split=self.split_of(present),
            context=self.context_of(present))

    def entity_names_of(self, recs: np.ndarray) -> list[str]:
        """Entity ID of each record ('' where unknown)."""
        codes = self.entity_code[recs]
        if not len(self.entity_names):
            return [""] * len(recs)
        names = self.entity_names.take(pa.array(np.maximum(codes, 0))).to_pylist()
        return [str(n) if c >= 0 else "" for n, c in zip(names, codes.tolist())]

    def record_fields(self, recs: np.ndarray) -> tuple[list[str], list[str], dict[str, list]]:
        """(record IDs, columns holding a value, column -> values) of some records.

        National IDs are masked; the entity ID is added as a last column.
        """
        data = self.records.take(recs).to_pydict()
        shown = [str(r) for r in data.get("record_id", [])]
        values: dict[str, list] = {}
        for column in self.field_columns:
            col = [None if v is None or str(v).strip() == "" else str(v) for v in data.get(column, [])]
            if any(v is not None for v in col):
                if column in self.national_id_columns:
                    col = [mask_national_id(v) for v in col]
                values[column] = col
        values["entity_id"] = self.entity_names_of(recs)
        return shown, list(values), values

    def identifiers_of(self, recs: np.ndarray) -> list[dict]:
        """Identifier rows of the records: record_id, rec, kind, key (IDs masked), status, detail."""
        if self.identifiers is None or len(recs) == 0:
            return []
        rows = self.identifier_by_rec.rows_for(recs)
        data = self.identifiers.take(rows).to_pydict()
        rec = data["rec"]
        ids = self.ids_of(np.asarray(rec, dtype=np.int64))
        details = data.get("detail") or [None] * len(rec)
        out = []
        for i in range(len(rec)):
            kind, key = str(data["kind"][i] or ""), data["key"][i]
            if key is None:
                continue
            key = str(key)
            out.append({"record_id": ids[i], "rec": int(rec[i]), "kind": kind,
                        "key": mask_national_id(key) if kind == "national_id" else key,
                        "status": str(data["status"][i] or ""), "detail": str(details[i] or "")})
        return out

    def pairs_among(self, recs: np.ndarray) -> tuple[list[dict], int]:
        """Scored pairs with both records in ``recs``, weakest first (at most `MAX_PAIRS_SHOWN`)."""
        if self.pairs is None or len(recs) < 2:
            return [], 0
        rows = self.pair_by_a.rows_for(recs)
        rows = rows[np.isin(self.pair_b[rows], recs)]
        total = len(rows)
        if total == 0:
            return [], 0
        order = np.lexsort((self.pair_b[rows], self.pair_a[rows], self.pair_prob[rows]))
        rows = rows[order][:MAX_PAIRS_SHOWN]
        data = self.pairs.take(rows).to_pylist()
        names = self.ids_of(np.concatenate([self.pair_a[rows], self.pair_b[rows]]))
        k = len(data)
        for i, row in enumerate(data):
            row["record_id_a"], row["record_id_b"] = names[i], names[k + i]
        return data, total

    def flags_of(self, recs: np.ndarray) -> list[dict]:
        """Flags on the records: record_id, flag, severity, reason, scope."""
        if self.flags is None or len(recs) == 0:
            return []
        return self.flags.take(self.flag_by_rec.rows_for(recs)).to_pylist()

    def split_of(self, recs: np.ndarray) -> dict | None:
        """The split suggestion of the records' entity, if the diagnostics made one."""
        if self.diagnostics is None or not len(recs):
            return None
        codes = np.unique(self.entity_code[recs])
        pos = self.diag_of_entity[codes[codes >= 0]]
        pos = pos[pos >= 0]
        if not len(pos):
            return None
        for row in self.diagnostics.take(np.sort(pos)).to_pylist():
            if row.get("split_kind"):
                groups = [g.split(",") for g in str(row.get("split_groups") or "").split(";") if g]
                return {"entity_id": str(row["entity_id"]), "kind": str(row["split_kind"]),
                        "groups": groups,
                        "cut_links": [c for c in str(row.get("cut_links") or "").split(";") if c],
                        "separated": [s for s in str(row.get("separated_records") or "").split(";") if s]}
        return None

    def context_of(self, recs: np.ndarray) -> list[str]:
        """Short facts about the item: entities, households and identity-sharing groups."""
        codes = np.unique(self.entity_code[recs])
        codes = codes[codes >= 0]
        if not len(codes) or not len(self.entity_names):
            return []
        names = [str(n) for n in self.entity_names.take(pa.array(codes)).to_pylist()]
        lines = [f"{len(names)} entit{'y' if len(names) == 1 else 'ies'}: {', '.join(names[:6])}"
                 + (" …" if len(names) > 6 else "")]
        for label, (ids, details) in (("household", self.household_of), ("group", self.group_of)):
            found: dict[str, list] = {}
            for code in codes.tolist():
                if ids[code]:
                    found.setdefault(ids[code], [0, details[code]])[0] += 1
            for gid in sorted(found):
                n, detail = found[gid]
                lines.append(f"{label} {gid}: {n} of its entities here"
                             + (f" ({detail.replace(';', ', ')})" if detail else ""))
        return lines

    # ---------------------------------------------------------------- evidence of one pair
    def evidence(self, pair: dict, model: dict, view: ClusterView | None = None) -> list[dict]:
        """Field-by-field account of one pair's weight, from the stored levels and weights.

        The numbers are the ones the pipeline scored with (``lvl_<field>``, ``w_<field>``),
        the same that `resolve.scoring.explain_pair` recomputes; values are the compared keys
        (national IDs masked). Rows: field, level, meaning, value_a, value_b, weight; then
        ``prior`` (when the model gives it) and ``total``.
        """
        a, b = int(pair["rec_a"]), int(pair["rec_b"])
        values = self._compared_values(a, b, view)
        rows = []
        for spec in FIELDS:
            if pair.get(spec.column) is None:
                continue
            code = int(pair[spec.column])
            try:
                level = spec.level(code)
                name, label = level.name, level.label
            except KeyError:
                name, label = str(code), ""
            weight = pair.get(spec.weight_column)
            va, vb = values.get(spec.name, ("", ""))
            rows.append({"field": SHORT_LABEL.get(spec.name, spec.label), "level": name, "meaning": label, "value_a": va,
                         "value_b": vb, "weight": float("nan") if weight is None else float(weight)})
        prior, meaning = stored_prior(model, pair.get("keys"))
        if prior is not None:
            rows.append({"field": "prior", "level": "", "meaning": meaning,
                         "value_a": "", "value_b": "", "weight": float(prior)})
        rows.append({"field": "total", "level": "", "meaning": f"match probability {float(pair['prob']):.4f}",
                     "value_a": "", "value_b": "", "weight": float(pair["weight"])})
        return rows

    def _compared_values(self, a: int, b: int, view: ClusterView | None) -> dict[str, tuple[str, str]]:
        out: dict[str, tuple[str, str]] = {}
        if self.people is not None:
            data = self.people.take([a, b]).to_pydict()
            for name, cols in SHOWN.items():
                out[name] = tuple(" ".join(str(data[c][i]) for c in cols
                                           if c in data and data[c][i] is not None and str(data[c][i]).strip())
                                  for i in range(2))
        ids = view.identifiers if view is not None else self.identifiers_of(np.array([a, b]))
        for kind in ("national_id", "phone", "email"):
            out[kind] = tuple("; ".join(r["key"] for r in ids if r["kind"] == kind and r["rec"] == rec)
                              for rec in (a, b))
        return out
