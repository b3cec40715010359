"""Explain one pair's score field by field, for a reviewer.

`explain_pair` runs the same comparison and scoring code as the pipeline on a single pair
and lays out, per field: the level reached and what it means, the values on each side, the
m and u used (the u after term-frequency adjustment where it applied) and the weight; then
the prior and the total with its probability. National IDs are masked to their last four
characters unless asked otherwise.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.candidates.registry import family_of
from resolve.compare import FIELDS, PreparedRecords, compare_pairs
from resolve.compare.records import as_prepared
from resolve.compare.align import text_column
from resolve.errors import InputError
from resolve.scoring.model import MatchModel, weight_to_probability
from resolve.scoring.score import field_weights

#: How each key family reads in a prior's label.
FAMILY_WORDS = {
    "identifier": "identifier keys only",
    "person": "name and birth-date keys only",
    "both": "both identifier and name/birth-date keys",
}

#: People columns shown for each record-level field.
SHOWN = {
    "given_name": ("given_key",),
    "family_name": ("family_key",),
    "suffix": ("suffix",),
    "birth_date": ("birth_date",),
    "address": ("address_key",),
}


def mask_identifier(key: str) -> str:
    """Keep an ID's type and last four characters: ``us_ssn:123456789`` -> ``us_ssn:*****6789``."""
    kind, sep, value = key.rpartition(":")
    hidden = "*" * max(len(value) - 4, 0) + value[-4:]
    return f"{kind}{sep}{hidden}"


def _shown_value(prepared: PreparedRecords, field: str, rec: int, mask_ids: bool) -> str:
    if field in SHOWN:
        parts = []
        for col in SHOWN[field]:
            value = text_column(prepared.people, col).iloc[rec]
            if pd.isna(value) and col == "birth_date":
                year = prepared.people.get("birth_year")
                value = None if year is None or pd.isna(year.iloc[rec]) else str(year.iloc[rec])
            parts.append("" if value is None or pd.isna(value) else str(value))
        return " ".join(p for p in parts if p)
    slots = prepared.identifiers[field]
    keys = [slots.key_of(code) for code in slots.slots[rec] if code >= 0]
    if field == "national_id" and mask_ids:
        keys = [mask_identifier(k) for k in keys]
    return "; ".join(keys)


def explain_pair(
    rec_a: int,
    rec_b: int,
    people: pd.DataFrame | PreparedRecords,
    identifiers: pd.DataFrame | None,
    model: MatchModel,
    *,
    mask_ids: bool = True,
    keys: int | None = None,
) -> pd.DataFrame:
    """Field-by-field account of one pair's match weight.

    Returns one row per compared field (``field``, ``level``, ``level_name``, ``label``,
    ``value_a``, ``value_b``, ``m``, ``u``, ``tf_adjusted``, ``weight``), then a ``prior``
    row and a ``total`` row whose ``probability`` is the pair's match probability. Weights
    are in bits (log2); positive weights point to the same person. ``keys`` is the pair's
    blocking-key mask as stored with the run: the prior is then that of the pair's key
    family (`MatchModel.family_prior`); without it, the overall prior.
    """
    prepared = as_prepared(people, identifiers)
    a, b = sorted((int(rec_a), int(rec_b)))
    if a == b or a < 0 or b >= prepared.n:
        raise InputError(
            f"Cannot explain records {rec_a} and {rec_b}: give two different records of this run."
        )
    pair = pd.DataFrame({"rec_a": np.array([a], np.int32), "rec_b": np.array([b], np.int32)})
    compared = compare_pairs(pair, prepared)
    weights, tf_used = field_weights(compared, model, prepared, with_tf_u=True)
    family = family_of(keys)
    prior, prior_weight = model.family_prior(family), model.family_prior_weight(family)

    rows = []
    for spec in FIELDS:
        code = int(compared[spec.column].iloc[0])
        row = {
            "field": spec.name,
            "level": code,
            "level_name": spec.level(code).name,
            "label": spec.level(code).label,
            "value_a": _shown_value(prepared, spec.name, a, mask_ids),
            "value_b": _shown_value(prepared, spec.name, b, mask_ids),
            "m": np.nan,
            "u": np.nan,
            "tf_adjusted": False,
            "weight": float(weights[spec.name][0]),
            "probability": np.nan,
        }
        if spec.name in model.fields:
            params = model.fields[spec.name].level(code)
            if not params.neutral:
                row["m"], row["u"] = params.m, params.u
                used = tf_used[spec.name][0]
                if not np.isnan(used):
                    row["u"], row["tf_adjusted"] = float(used), True
        rows.append(row)
    total = prior_weight + sum(r["weight"] for r in rows)
    if family is None:
        prior_label = f"share of matches among candidate pairs: {prior:.4g}"
    else:
        prior_label = (f"share of matches among pairs proposed by {FAMILY_WORDS[family]}: "
                       f"{prior:.4g}")
    base = {"level": -1, "level_name": "", "value_a": "", "value_b": ""}
    base.update({"m": np.nan, "u": np.nan, "tf_adjusted": False})
    rows.append(
        base
        | {
            "field": "prior",
            "label": prior_label,
            "weight": prior_weight,
            "probability": prior,
        }
    )
    rows.append(
        base
        | {
            "field": "total",
            "label": "sum of the weights above (log2 odds of a match)",
            "weight": total,
            "probability": float(weight_to_probability(total)),
        }
    )
    return pd.DataFrame(rows)


def stored_prior(model: dict, keys: int | None) -> tuple[float | None, str]:
    """The prior weight a saved model (its JSON as a dict) gave a pair with this blocking-key
    mask, and a sentence saying what it is; (None, "") when the model has no prior.

    For screens that show stored scores without loading a `MatchModel`.
    """
    prior = model.get("prior") or {}
    family = family_of(keys)
    entry = (prior.get("by_key_family") or {}).get(family) if family else None
    if entry is not None:
        return float(entry["weight"]), f"starting weight of pairs proposed by {FAMILY_WORDS[family]}"
    if prior.get("weight") is None:
        return None, ""
    return float(prior["weight"]), "starting weight of every candidate pair"
