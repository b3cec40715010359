"""The worked example of docs/clusters.md as tables, for the docs, the tests and a notebook.

Ten invented customer records (names drawn with Faker, seed 7; phone numbers in the NANP
555-01xx range reserved for fiction; mail domains reserved for examples): one person entered
twice plus a near-duplicate, a household sharing an address and a landline, a national ID
carried by a stranger, three identities sharing a mobile and a mailbox, and two strangers
whose only common value is a call-centre number listed as a hub. The scored pairs carry the
per-field levels `resolve.compare` would write (by level name) and a probability.
"""

from __future__ import annotations

import pandas as pd

from resolve.compare.levels import field_spec

PEOPLE = [  # record_id, given_key, family_key, birth_date, address_key
    ("C001", "mario", "hernandez", "1980-03-14", "12 oak st|20001"),
    ("C002", "mario", "hernandez", "1980-03-14", "12 oak st|20001"),
    ("C003", "debra", "hernandez", "1982-07-02", "12 oak st|20001"),
    ("C004", "amanda", "diaz", "1975-01-20", "4 elm rd|20002"),
    ("C005", "brian", "romero", "1990-05-05", "9 pine ave|20003"),
    ("C006", "benjamin", "hamilton", "1991-06-06", "77 birch ln|20004"),
    ("C007", "chad", "davis", "1992-07-07", "5 cedar ct|20005"),
    ("C008", "roger", "serrano", "1960-01-01", "31 maple dr|20006"),
    ("C009", "mario", "hernandes", "1980-03-14", None),
    ("C010", "david", "walker", "1970-02-02", "8 ash way|20007"),
]

IDENTIFIERS = [  # rec, kind, key, status, detail
    (0, "phone", "+12025550101", "valid", "mobile"),
    (0, "phone", "+12025550188", "valid", "fixed_line"),
    (0, "email", "mario.h@example.com", "valid", None),
    (0, "national_id", "ssn:536904399", "valid", "ssn"),
    (1, "phone", "+12025550101", "valid", "mobile"),
    (1, "national_id", "ssn:536904399", "valid", "ssn"),
    (2, "phone", "+12025550188", "valid", "fixed_line"),
    (3, "national_id", "ssn:536904399", "valid", "ssn"),
    (4, "phone", "+12025550150", "valid", "mobile"),
    (4, "email", "lucky7@example.org", "valid", None),
    (5, "phone", "+12025550150", "valid", "mobile"),
    (5, "email", "lucky7@example.org", "valid", None),
    (6, "phone", "+12025550150", "valid", "mobile"),
    (7, "phone", "+18005550100", "valid", "toll_free"),
    (7, "email", "none@example.com", "placeholder", None),
    (9, "phone", "+18005550100", "valid", "toll_free"),
    (9, "email", "none@example.com", "placeholder", None),
]

# rec_a, rec_b, prob, then level names for given, family, birth, national_id, phone, email, address
PAIRS = [
    (0, 1, 0.9995, "exact", "exact", "exact", "exact", "shared_mobile", "missing", "exact"),
    (0, 2, 0.0100, "different", "exact", "different", "missing", "shared_fixed", "missing", "exact"),
    (1, 2, 0.0100, "different", "exact", "different", "missing", "different", "missing", "exact"),
    (0, 3, 0.0200, "different", "different", "different", "exact", "missing", "missing", "different"),
    (1, 3, 0.0200, "different", "different", "different", "exact", "missing", "missing", "different"),
    (4, 5, 0.0300, "different", "different", "different", "missing", "shared_mobile", "shared", "different"),
    (4, 6, 0.0200, "different", "different", "different", "missing", "shared_mobile", "missing", "different"),
    (5, 6, 0.0200, "different", "different", "different", "missing", "shared_mobile", "missing", "different"),
    (0, 8, 0.8000, "exact", "close", "exact", "missing", "missing", "missing", "missing"),
    (1, 8, 0.7500, "exact", "close", "exact", "missing", "missing", "missing", "missing"),
    (7, 9, 0.0010, "different", "different", "different", "missing", "shared_fixed", "missing", "different"),
    (3, 7, 0.0010, "different", "different", "different", "missing", "missing", "missing", "different"),
]
LEVEL_FIELDS = ("given_name", "family_name", "birth_date", "national_id", "phone", "email", "address")

HUBS = [("phone", "+18005550100")]
THRESHOLDS = {"auto": 0.99, "review": 0.5}


def worked_example() -> dict[str, pd.DataFrame]:
    """Return ``people``, ``identifiers``, ``pairs`` (with ``lvl_`` columns) and ``hubs``."""
    people = pd.DataFrame(
        PEOPLE, columns=["record_id", "given_key", "family_key", "birth_date", "address_key"]
    ).astype("string")
    people["given_root"] = people["given_key"]
    people["family_core"] = people["family_key"]
    people["country"] = pd.array(["US"] * len(people), dtype="string")
    people["created_at"] = pd.array([pd.NA] * len(people), dtype="string")
    people.index.name = "rec"

    ids = pd.DataFrame(IDENTIFIERS, columns=["rec", "kind", "key", "status", "detail"])
    address = people["address_key"].dropna()
    ids = pd.concat(
        [
            ids,
            pd.DataFrame(
                {"rec": address.index, "kind": "address", "key": address.to_numpy(), "status": "valid", "detail": None}
            ),
        ],
        ignore_index=True,
    )
    ids = ids.sort_values(["rec", "kind"], kind="stable").reset_index(drop=True)
    ids = ids.astype({"rec": "int32", "kind": "string", "key": "string", "status": "string", "detail": "string"})

    rows = []
    for rec_a, rec_b, prob, *names in PAIRS:
        row = {"rec_a": rec_a, "rec_b": rec_b}
        for field, name in zip(LEVEL_FIELDS, names):
            row[f"lvl_{field}"] = field_spec(field).code_of(name)
        row["lvl_suffix"] = 0
        row["prob"] = prob
        rows.append(row)
    pairs = pd.DataFrame(rows).astype({"rec_a": "int32", "rec_b": "int32"})
    for column in pairs.columns:
        if column.startswith("lvl_"):
            pairs[column] = pairs[column].astype("int8")
    hubs = pd.DataFrame(HUBS, columns=["kind", "key"]).astype("string")
    return {"people": people, "identifiers": ids, "pairs": pairs, "hubs": hubs}
