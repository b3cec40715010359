"""Turn agreement levels into match weights and match probabilities.

Each field's level is looked up in the model's weight table (log2(m/u)); exact-agreement
levels of fields with term-frequency adjustment get log2(ū / f) added, f being the agreed
value's frequency (see `resolve.scoring.tf`). An agreement level never weighs less than 0,
after the adjustment too, and "different" never more than 0 (see `resolve.scoring.model`).
The total weight is the sum of the field weights plus the prior weight, a log2 of the odds
that the pair is a match; the probability is 2^w / (1 + 2^w).
"""

from __future__ import annotations

from typing import Any, Mapping

import numpy as np
import pandas as pd

from resolve.compare import FIELDS, CompareSettings, PreparedRecords
from resolve.compare.records import as_prepared
from resolve.compare.align import pair_arrays
from resolve.errors import InputError
from resolve.scoring.model import MatchModel, weight_to_probability
from resolve.scoring.tf import TF_FIELDS, tf_adjustment, tf_frequencies


def field_weights(
    compared: pd.DataFrame,
    model: MatchModel,
    prepared: PreparedRecords | None,
    *,
    with_tf_u: bool = False,
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Per field: the weight of each pair (float64) and, if asked, the u that gives that
    weight where the term-frequency adjustment or the bound at 0 changed it (NaN elsewhere).

    Fields absent from the model weigh 0. Without ``prepared`` no term-frequency adjustment
    is made.
    """
    weights: dict[str, np.ndarray] = {}
    tf_used: dict[str, np.ndarray] = {}
    a = b = None
    if prepared is not None:
        a, b = pair_arrays(compared, prepared.n)
    for spec in FIELDS:
        if spec.name not in model.fields:
            weights[spec.name] = np.zeros(len(compared))
            continue
        if spec.column not in compared.columns:
            raise InputError(
                f"The pairs lack {spec.column}; run compare_pairs before scoring."
            )
        fm = model.fields[spec.name]
        levels = compared[spec.column].to_numpy(dtype=np.int64)
        raw = fm.weight_table(raw=True)
        table = fm.weight_table()  # bounded: agreement at least 0, "different" at most 0
        if levels.size and (levels.min() < 0 or levels.max() >= table.size):
            raise InputError(
                f"{spec.column} holds a level the model does not know; "
                "compare and score with the same version of resolve."
            )
        w = table[levels]
        changed = (table != raw)[levels] if with_tf_u else None
        if fm.term_frequency and prepared is not None and spec.name in TF_FIELDS:
            for code in fm.exact_codes():  # exact levels are agreement: bounded below by 0
                rows = np.flatnonzero(levels == code)
                if not rows.size:
                    continue
                freq, mean_share = tf_frequencies(prepared, spec.name, a[rows], b[rows])
                adjustment = tf_adjustment(freq, mean_share, model.tf_min_u)
                w[rows] = np.maximum(raw[code] + adjustment, 0.0)
                if changed is not None:
                    changed[rows] |= ~np.isnan(freq)
        if changed is not None:  # the u that gives the weight used: m * 2^-weight
            m_table = np.full(table.size, np.nan)
            for lvl in fm.levels:
                if not lvl.neutral:
                    m_table[lvl.code] = lvl.m
            tf_used[spec.name] = np.where(changed, m_table[levels] * np.exp2(-w), np.nan)
        weights[spec.name] = w
    return weights, tf_used


def score_pairs(
    compared: pd.DataFrame,
    model: MatchModel,
    people: pd.DataFrame | PreparedRecords | None = None,
    identifiers: pd.DataFrame | None = None,
    settings: CompareSettings | Mapping[str, Any] | None = None,
) -> pd.DataFrame:
    """Add match weights and probabilities to compared pairs.

    ``compared`` is the output of `compare_pairs`. ``people`` and ``identifiers`` (or one
    `PreparedRecords`) are needed for the term-frequency adjustment; without them exact
    agreement uses the level's average u. ``settings`` are the comparison settings used
    (they decide which identifier statuses count); ignored with `PreparedRecords`.

    Adds float32 ``w_<field>`` per field, float32 ``weight`` (sum of field weights plus the
    prior weight, log2 odds) and float64 ``prob``. The prior weight is that of the pair's
    key family when ``compared`` has the blocking ``keys`` column, else the overall one.
    """
    prepared = None if people is None else as_prepared(people, identifiers, settings)
    weights, _ = field_weights(compared, model, prepared)
    out = compared.copy()
    if "keys" in compared.columns:
        total = model.prior_weights(compared["keys"].to_numpy())
    else:  # pairs without their blocking keys: every pair starts from the overall prior
        total = np.full(len(compared), model.prior_weight, dtype=np.float64)
    for spec in FIELDS:
        out[spec.weight_column] = weights[spec.name].astype(np.float32)
        total += weights[spec.name]
    out["weight"] = total.astype(np.float32)
    out["prob"] = weight_to_probability(out["weight"].to_numpy(dtype=np.float64))
    return out
