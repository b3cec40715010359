"""Assemble the normalised record tables from the individual normalisers.

`normalise_records` is the stage function. It turns the ingest `RecordTable` into
- ``people``: one row per record (index ``rec``) with canonical name, birth-date and address
  columns, and
- ``identifiers``: the long identifier table (one row per record and identifier column with a
  value), which is what blocking, comparison, groups and signals work from.

Multi-column roles (two phone columns, say) are stacked into one long column first so each
normaliser runs once per run over all distinct values, not once per column.

The normalisers do not depend on one another (only on the record's country), so they run as
jobs on a few threads: most of their work is Arrow compute kernels and numpy, which release
the interpreter lock, so two jobs use two cores. The identifier table is one more job that
starts as soon as the four normalisers it needs are done, while the others still run. Each
job's result is put in its place by name, so the tables do not depend on which job finishes
first. The identifier table is built from Arrow arrays (no per-row Python objects, and no
string categoricals found by hashing millions of values).
"""

from __future__ import annotations

import datetime as dt
import os
import threading
import time
from concurrent.futures import ThreadPoolExecutor
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Callable

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.normalise import MISSING, PLACEHOLDER, STATUSES
from resolve.normalise.country import normalise_countries
from resolve.normalise.textkeys import STRING, to_arrow, to_series

SERVICE_NUMBER_TYPES = ("toll_free", "premium_rate", "shared_cost", "uan", "voicemail")
IDENTIFIER_COLUMNS = ["rec", "kind", "slot", "raw", "value", "key", "status", "reason", "detail"]
_TEXT_COLUMNS = ("slot", "raw", "value", "key", "reason", "detail")
_STATUS_TEXT = pa.array(STATUSES, STRING)
# Statuses whose values never serve as keys for finding shared identifiers.
_UNUSABLE_CODES = [STATUSES.index(PLACEHOLDER), STATUSES.index(MISSING)]
MAX_WORKERS = 4


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


@dataclass
class _Stacked:
    """The numbered columns of one role stacked into rows that hold a value."""

    rec: np.ndarray          # int32 record position
    slot: pa.Array           # source column name
    raw: pd.Series           # raw value (RangeIndex)
    context: pd.Series       # the record's country for the row (RangeIndex)


def _stack(records: pd.DataFrame, role: str, context: pd.Series) -> _Stacked | None:
    """Stack the numbered columns of a role into (rec, slot, raw, context) rows with values."""
    slots = _slots(records, role)
    if not slots:
        return None
    n = len(records)
    raw = pa.concat_arrays([to_arrow(records[s]) for s in slots])
    keep = pc.is_valid(raw)
    rec = np.tile(np.arange(n, dtype=np.int32), len(slots))
    slot = pc.take(pa.array(slots, STRING),
                   pa.array(np.repeat(np.arange(len(slots), dtype=np.int32), n)))
    ctx = pa.concat_arrays([to_arrow(context)] * len(slots))
    return _Stacked(rec[keep.to_numpy(zero_copy_only=False)], pc.filter(slot, keep),
                    to_series(pc.filter(raw, keep)), to_series(pc.filter(ctx, keep)))


def _arr(series: pd.Series):
    """The column's own array (Arrow-backed strings stay Arrow: no round trip via objects)."""
    return series.array


def _text(values) -> pa.Array:
    """A column of a normaliser's result as one Arrow large_string array."""
    if isinstance(values, pa.Array):
        return values if values.type == STRING else values.cast(STRING)
    return to_arrow(values)


def _part(kind: str, rows: _Stacked, result: pd.DataFrame, key, detail) -> dict:
    """One kind's rows of the identifier table, as Arrow arrays (and the int32 ``rec``)."""
    return {
        "kind": kind, "rec": rows.rec, "slot": rows.slot, "raw": _text(rows.raw),
        "value": _text(result["value"]), "key": _text(key), "status": _text(result["status"]),
        "reason": _text(result["reason"]), "detail": _text(detail),
    }


def _finish(part: dict) -> dict:
    """Code the statuses (position in STATUSES, -1 for any other value) and drop the keys
    of unusable values; done inside each job so that it runs in parallel."""
    codes = pc.fill_null(pc.index_in(part["status"], value_set=_STATUS_TEXT), -1)
    part["status_code"] = codes.to_numpy(zero_copy_only=False).astype(np.int8)
    unusable = np.isin(part["status_code"], _UNUSABLE_CODES)
    part["key"] = _null_where(part["key"], pa.array(unusable))
    return part


class _Stopwatch:
    """Wall time per named step into ``timings`` (when given); safe to use from threads."""

    def __init__(self, timings: dict[str, float] | None):
        self.timings = timings

    @contextmanager
    def __call__(self, name: str):
        start = time.perf_counter()
        try:
            yield
        finally:
            if self.timings is not None:
                self.timings[name] = round(time.perf_counter() - start, 3)


def _run_jobs(jobs: dict[str, Callable], workers: int, clock: _Stopwatch,
              needs: dict[str, tuple[str, ...]] | None = None) -> dict:
    """Run the jobs on ``workers`` threads and return their results by name.

    A job named in ``needs`` starts once the jobs it needs are done and is called with the
    results so far; the others are called with no argument. Among the jobs ready to
    start, the one listed first goes first, so the list order is the priority (and, on
    one thread, the running order). The first error stops new jobs and is raised.
    """
    needs = needs or {}
    unknown = {d for deps in needs.values() for d in deps} - set(jobs)
    if unknown:
        raise ValueError(f"jobs {sorted(unknown)} are needed but not given")
    done: dict = {}

    def run(name: str):
        with clock(name):
            return jobs[name](done) if name in needs else jobs[name]()

    if workers <= 1:
        for name in jobs:
            done[name] = run(name)
        return done
    waiting = list(jobs)
    failed: list[BaseException] = []
    changed = threading.Condition()

    def next_job() -> str | None:
        with changed:
            while not failed and waiting:
                for name in waiting:
                    if all(d in done for d in needs.get(name, ())):
                        waiting.remove(name)
                        return name
                changed.wait()
            return None

    def worker() -> None:
        while (name := next_job()) is not None:
            try:
                result = run(name)
            except BaseException as exc:  # handed to the caller below
                with changed:
                    failed.append(exc)
                    changed.notify_all()
                return
            with changed:
                done[name] = result
                changed.notify_all()

    threads = [threading.Thread(target=worker, name=f"normalise-{i}")
               for i in range(min(workers, len(jobs)))]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    if failed:
        raise failed[0]
    return done


def default_workers() -> int:
    """Threads for the normaliser jobs: the cores this process may use, at most MAX_WORKERS."""
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - platforms without affinity masks
        cores = os.cpu_count() or 1
    return max(1, min(MAX_WORKERS, cores))


def normalise_records(records: pd.DataFrame, settings: NormaliseSettings | None = None, *,
                      timings: dict[str, float] | None = None,
                      workers: int | None = None) -> NormalisedRecords:
    """Run every normaliser over the accepted records; see the module docstring.

    ``timings``, when given, receives the wall time of each step in seconds (the jobs
    overlap when they run on several threads). ``workers`` is the number of threads for
    the normaliser jobs (default: the usable cores, at most ``MAX_WORKERS``; 1 runs them
    one after another). The result does not depend on either.
    """
    settings = settings or NormaliseSettings()
    clock = _Stopwatch(timings)
    n = len(records)
    index = pd.RangeIndex(n, name="rec")
    with clock("countries"):
        country = normalise_countries(_col(records, "country"), settings.default_country,
                                      index=pd.RangeIndex(n))
        id_country = normalise_countries(_col(records, "national_id_country"), "",
                                         index=pd.RangeIndex(n))
        # An ID whose issuing country is not given was issued in the record's country.
        id_text = to_arrow(id_country)
        id_country = to_series(pc.if_else(pc.equal(id_text, ""), to_arrow(country), id_text))
    workers = workers or default_workers()
    jobs = _jobs(records, settings, country, id_country)

    def identifiers(done: dict) -> pd.DataFrame:
        parts = [done[name] for name in ("phones", "emails", "national_ids")]
        parts.append(_address_part(records, done["addresses"]))
        return _identifiers([p for p in parts if p is not None], workers)

    # The identifier table needs four of the jobs, not the others: it is built while the
    # last ones still run, ahead of those not yet started.
    order = ["phones", "addresses", "emails", "names", "national_ids", "identifiers",
             "birth_dates", "created_at"]
    jobs["identifiers"] = identifiers
    done = _run_jobs({name: jobs[name] for name in order}, workers, clock,
                     needs={"identifiers": ("phones", "emails", "national_ids", "addresses")})
    with clock("people"):
        people = _people(records, index, country, done)
    identifiers = done["identifiers"]
    return NormalisedRecords(people, identifiers)


def _jobs(records: pd.DataFrame, settings: NormaliseSettings, country: pd.Series,
          id_country: pd.Series) -> dict[str, Callable]:
    """The normaliser jobs (each takes no argument and returns its normaliser's result)."""
    from resolve.normalise.address import normalise_addresses
    from resolve.normalise.dates import normalise_dates, parse_timestamps
    from resolve.normalise.names import normalise_names

    n = len(records)

    def birth_dates():
        raw = (_col(records, "birth_date") if "birth_date" in records.columns
               else pd.Series(pd.array([None] * n, dtype="string")))
        return normalise_dates(raw, country, today=settings.today)

    def created_at():
        if "created_at" in records.columns:
            return parse_timestamps(_col(records, "created_at")).to_numpy()
        return pd.Series(pd.NaT, index=pd.RangeIndex(n, name="rec"), dtype="datetime64[ns]")

    return {
        "addresses": lambda: normalise_addresses(_col(records, "street"), _col(records, "city"),
                                                 _col(records, "postcode"), country),
        "phones": lambda: _phones(records, country),
        "emails": lambda: _emails(records, country, settings),
        "names": lambda: normalise_names(_col(records, "given_name"),
                                         _col(records, "family_name"),
                                         _col(records, "full_name")),
        "national_ids": lambda: _national_ids(records, id_country),
        "birth_dates": birth_dates,
        "created_at": created_at,
    }


def _phones(records: pd.DataFrame, country: pd.Series) -> dict | None:
    from resolve.normalise.phone import normalise_phones

    rows = _stack(records, "phone", country)
    if rows is None:
        return None
    res = normalise_phones(rows.raw, rows.context)
    part = _part("phone", rows, res, res["value"], res["number_type"])
    # Service numbers (toll-free, premium, shared-cost...) belong to businesses such as
    # call centres, not to a customer: keep them visible but never link on them.
    service = pc.and_(
        pc.fill_null(pc.is_in(part["detail"], value_set=pa.array(SERVICE_NUMBER_TYPES, STRING)),
                     False),
        pc.fill_null(pc.equal(part["status"], "valid"), False))
    if pc.any(service).as_py():
        part["status"] = pc.if_else(service, pa.scalar("placeholder", STRING), part["status"])
        part["reason"] = pc.if_else(service, pa.scalar("service_number", STRING), part["reason"])
    return _finish(part)


def _emails(records: pd.DataFrame, country: pd.Series, settings: NormaliseSettings):
    from resolve.normalise.email import normalise_emails

    rows = _stack(records, "email", country)
    if rows is None:
        return None
    res = normalise_emails(rows.raw, settings.email_providers)
    return _finish(_part("email", rows, res, res["mailbox_key"], res["domain"]))


def _national_ids(records: pd.DataFrame, id_country: pd.Series):
    from resolve.normalise.national_id import normalise_national_ids

    rows = _stack(records, "national_id", id_country)
    if rows is None:
        return None
    res = normalise_national_ids(rows.raw, rows.context)
    id_type = _text(res["id_type"].astype("string"))
    key = pc.binary_join_element_wise(id_type, _text(res["value"].astype("string")),
                                      pa.scalar(":", STRING))  # null when either is null
    return _finish(_part("national_id", rows, res, key, id_type))


def _people(records: pd.DataFrame, index: pd.RangeIndex, country: pd.Series,
            done: dict) -> pd.DataFrame:
    """One row per record: the record's own columns, then names, birth date and address."""
    names, dates, addresses = done["names"], done["birth_dates"], done["addresses"]
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
    people["created_at"] = done["created_at"]
    return people


def _address_part(records: pd.DataFrame, addresses: pd.DataFrame) -> dict | None:
    """Identifier rows for the records whose address has a key."""
    n = len(addresses)
    if "address_key" not in addresses.columns:
        return None
    key = _text(addresses["address_key"])
    has = pc.is_valid(key)
    has_np = has.to_numpy(zero_copy_only=False)
    if not has_np.any():
        return None
    count = int(has_np.sum())
    raw = (pc.filter(_text(_col(records, "street")), has) if "street" in records.columns
           else pa.nulls(count, STRING))
    return _finish({
        "kind": "address", "rec": np.arange(n, dtype=np.int32)[has_np],
        "slot": pa.repeat(pa.scalar("street", STRING), count), "raw": raw,
        "value": pc.filter(key, has), "key": pc.filter(key, has),
        "status": pc.filter(_text(addresses["status"]), has),
        "reason": pc.filter(_text(addresses["reason"]), has),
        "detail": pa.nulls(count, STRING),
    })


def _null_where(arr: pa.Array, mask: pa.Array) -> pa.Array:
    """``arr`` with nulls where ``mask`` is true, sharing its text buffers (no string copy)."""
    if not pc.any(mask).as_py():
        return arr
    valid = pc.and_(pc.is_valid(arr), pc.invert(mask))
    if valid.offset % 8 or arr.offset:
        return pc.if_else(mask, pa.scalar(None, arr.type), arr)
    bits = valid.buffers()[1]
    return pa.Array.from_buffers(arr.type, len(arr), [bits, *arr.buffers()[1:]])


def _status_categories(codes: np.ndarray, parts: list[dict]) -> tuple[list[str], np.ndarray]:
    """Sorted statuses present and each row's code among them, from codes into STATUSES."""
    if (codes < 0).any() and any(p["status"].null_count < len(p["status"])
                                 for p in parts if (p["status_code"] < 0).any()):
        # A status outside STATUSES: categories from the values themselves.
        status = pa.concat_arrays([p["status"] for p in parts])
        statuses = sorted(v for v in pc.unique(status).to_pylist() if v is not None)
        found = pc.index_in(status, value_set=pa.array(statuses, STRING))
        return statuses, pc.fill_null(found, -1).to_numpy(zero_copy_only=False).astype(np.int8)
    present = np.bincount(codes[codes >= 0], minlength=len(STATUSES)) > 0
    statuses = sorted(name for name, here in zip(STATUSES, present) if here)
    remap = np.full(len(STATUSES) + 1, -1, dtype=np.int8)  # the last entry takes code -1
    for position, name in enumerate(statuses):
        remap[STATUSES.index(name)] = position
    return statuses, remap[codes]


def _identifiers(parts: list[dict], workers: int = 1) -> pd.DataFrame:
    """The long identifier table from the kinds' parts, in the order given.

    ``kind`` and ``status`` are categoricals whose categories are the values present, in
    sorted order (what ``astype("category")`` gives); the key of a placeholder or missing
    value is <NA>. The text columns are concatenated on ``workers`` threads (copying
    millions of strings into fresh memory is most of the cost here); the parts give up
    each column as it is copied.
    """
    if not parts:
        empty = pd.DataFrame({c: [] for c in IDENTIFIER_COLUMNS})
        return empty.astype({"rec": "int32", "kind": "category", "slot": "string",
                             "raw": "string", "value": "string", "key": "string",
                             "status": "category", "reason": "string", "detail": "string"})

    def joined(column: str) -> pa.Array:
        out = pa.concat_arrays([p[column] for p in parts])
        for p in parts:  # let the parts' copy go at once: a lower peak of memory
            p[column] = None
        return out

    if workers > 1:
        with ThreadPoolExecutor(max_workers=workers, thread_name_prefix="identifiers") as pool:
            columns = dict(zip(_TEXT_COLUMNS, pool.map(joined, _TEXT_COLUMNS)))
    else:
        columns = {c: joined(c) for c in _TEXT_COLUMNS}
    kinds = sorted({p["kind"] for p in parts if len(p["rec"])})
    kind_codes = np.concatenate(
        [np.full(len(p["rec"]), kinds.index(p["kind"]) if len(p["rec"]) else 0, dtype=np.int8)
         for p in parts])
    statuses, status_codes = _status_categories(
        np.concatenate([p["status_code"] for p in parts]), parts)
    frame = {
        "rec": np.concatenate([p["rec"] for p in parts]).astype(np.int32, copy=False),
        "kind": pd.Categorical.from_codes(
            kind_codes, dtype=pd.CategoricalDtype(pd.Index(kinds, dtype="str"))),
    }
    for c in ("slot", "raw", "value", "key"):
        frame[c] = to_series(columns[c])
    frame["status"] = pd.Categorical.from_codes(
        status_codes,
        dtype=pd.CategoricalDtype(pd.Index(statuses, dtype="string")))
    frame["reason"] = to_series(columns["reason"])
    frame["detail"] = to_series(columns["detail"])
    return pd.DataFrame(frame)
