"""Fit a match model to one run: u from random record pairs and EM, m and the priors by EM.

- u (how often each level occurs among non-matches) is first counted on a seeded random
  sample of record pairs: two records drawn at random are almost never the same person.
- m (how often each level occurs among matches), the prior λ (share of matches among the
  candidate pairs) and, by default, u are then estimated by EM over the candidate pairs
  (see `resolve.scoring.em`). Candidate non-matches are not like random pairs — blocking
  picked them because they share a surname, an address or a phone (households, mostly) —
  so u is re-estimated among them: it starts from the level shares among the candidates,
  is smoothed towards the random-pair u, and for agreement levels is never taken below it.
  With u held at the random-pair values, household pairs look like duplicates and EM can
  end up calling every candidate a match.
- λ is kept per key family (pairs proposed by identifier keys only, by person keys only, or
  by both; `resolve.candidates.registry.key_family`), each shrunk towards the overall λ by
  `ScoringSettings.prior_pseudo_count` pseudo-pairs: which kinds of key proposed a pair says
  which kind of non-match it could be (household-like or namesake-like), a dependence the
  independent fields cannot express (docs/matching.md, "Prior per key family").
- The decision thresholds come from the model's probabilities and the stated costs of a
  false merge, a missed merge and a review (`resolve.scoring.model.Thresholds`). No ground
  truth is used anywhere.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Mapping

import numpy as np
import pandas as pd

from resolve.candidates.registry import KEY_FAMILIES, key_family
from resolve.compare import FIELD_BY_NAME, FIELDS, CompareSettings, PreparedRecords
from resolve.compare.records import as_prepared
from resolve.compare.align import pair_arrays
from resolve.compare.levels import DIFFERENT, FieldSpec
from resolve.errors import InputError
from resolve.settings_util import coerce_settings
from resolve.scoring.em import lift_to_floor, run_em
from resolve.scoring.model import FieldModel, LevelParams, MatchModel, Thresholds
from resolve.scoring.score import score_pairs
from resolve.scoring.tf import TF_FIELDS


@dataclass(frozen=True)
class ScoringSettings:
    """Choices for `fit_model`; every one has a documented default."""

    #: Random record pairs drawn to count u (all pairs when the extract is smaller).
    random_pairs: int = 1_000_000
    #: Seed of the random pair sample (same seed, same model).
    seed: int = 20_240_917
    max_iterations: int = 500
    #: EM stops when no probability moves by more than this in one iteration.
    tolerance: float = 1e-6
    #: Re-estimate u by EM among the candidate pairs (False: keep the random-pair u).
    update_u: bool = True
    #: Added to every level's count when estimating m and u.
    pseudo_count: float = 0.5
    #: Keep a prior per family of blocking keys (identifier / person / both).
    prior_by_key_family: bool = True
    #: Pseudo-pairs at the overall prior added to each key family's when estimating it.
    prior_pseudo_count: float = 100.0
    #: Fields to model (default: all compared fields).
    fields: tuple[str, ...] = tuple(spec.name for spec in FIELDS)
    #: Fields whose exact agreement gets the term-frequency adjustment.
    term_frequency: tuple[str, ...] = TF_FIELDS
    #: Lowest u a value's frequency may give.
    tf_min_u: float = 1e-5
    false_merge_cost: float = 10.0
    missed_merge_cost: float = 1.0
    review_cost: float = 0.1

    @classmethod
    def coerce(cls, settings: "ScoringSettings | Mapping[str, Any] | None") -> "ScoringSettings":
        """Accept None (defaults), a ScoringSettings, or a mapping of field names to values."""
        out = coerce_settings(cls, settings, "scoring")
        bad = sorted(set(out.fields) - set(FIELD_BY_NAME))
        if bad:
            raise InputError(f"Unknown field(s) {', '.join(bad)} in the scoring settings.")
        return out


def random_pairs(n: int, size: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """``size`` random record pairs (rec_a < rec_b), or every pair when there are fewer."""
    if n < 2:
        raise InputError("At least two records are needed to fit a match model.")
    total = n * (n - 1) // 2
    if total <= size:
        a, b = np.triu_indices(n, k=1)
        return a.astype(np.int64), b.astype(np.int64)
    rng = np.random.default_rng(seed)
    a = rng.integers(0, n, size=size, dtype=np.int64)
    b = rng.integers(0, n - 1, size=size, dtype=np.int64)
    b = b + (b >= a)  # never pair a record with itself
    return np.minimum(a, b), np.maximum(a, b)


def _neutral(spec: FieldSpec) -> np.ndarray:
    mask = np.ones(spec.n_levels, dtype=bool)
    for lvl in spec.levels:
        mask[lvl.code] = lvl.neutral
    return mask


def initial_m(spec: FieldSpec) -> np.ndarray:
    """Starting m: most mass on the top level, little on "different", the rest spread."""
    codes = sorted(lvl.code for lvl in spec.levels if not lvl.neutral)
    m = np.zeros(spec.n_levels)
    top, middle = codes[-1], [c for c in codes if c not in (DIFFERENT, codes[-1])]
    m[DIFFERENT] = 0.05
    if middle:
        m[top] = 0.75
        m[middle] = 0.20 / len(middle)
    else:
        m[top] = 0.95
    return m


def candidate_shares(
    levels: np.ndarray, spec: FieldSpec, pseudo_count: float, floor: np.ndarray
) -> np.ndarray:
    """Share of each level among the candidate pairs: the starting u when EM updates u.

    Most candidate pairs are usually non-matches of the kind blocking lets through, so
    "looks like a typical candidate" is a better start for the non-match class than "looks
    like a random pair", which would make every candidate that shares an address look like
    a duplicate from the first step on.
    """
    counts = np.bincount(levels.astype(np.int64), minlength=spec.n_levels).astype(np.float64)
    neutral = _neutral(spec)
    c = np.where(neutral, 0.0, counts + pseudo_count)
    return lift_to_floor(c / c.sum(), floor)


def estimate_u(
    prepared: PreparedRecords, specs: list[FieldSpec], cfg: ScoringSettings
) -> tuple[list[np.ndarray], int]:
    """u per field level from a seeded random sample of record pairs, and the sample size."""
    a, b = random_pairs(prepared.n, cfg.random_pairs, cfg.seed)
    levels = prepared.compare(a, b)
    u = []
    for spec in specs:
        counts = np.bincount(levels[spec.name], minlength=spec.n_levels).astype(np.float64)
        neutral = _neutral(spec)
        c = np.where(neutral, 0.0, counts + cfg.pseudo_count)
        u.append(c / c.sum())
    return u, int(a.size)


def fit_model(
    compared: pd.DataFrame,
    people: pd.DataFrame | PreparedRecords,
    identifiers: pd.DataFrame | None = None,
    settings: ScoringSettings | Mapping[str, Any] | None = None,
    compare_settings: CompareSettings | Mapping[str, Any] | None = None,
) -> MatchModel:
    """Fit a Fellegi-Sunter model to the compared candidate pairs of one run.

    ``compared`` is the output of `compare_pairs` (its `lvl_` columns are used; ``rec_a`` and
    ``rec_b`` too, for the fit report). ``people``/``identifiers`` (or a `PreparedRecords`)
    are the same run's tables: random record pairs are drawn from them to estimate u.
    Returns a model whose ``fit`` entry reports EM convergence and the expected numbers of
    matches and errors under the model's own probabilities.
    """
    cfg = ScoringSettings.coerce(settings)
    prepared = as_prepared(people, identifiers, compare_settings)
    if len(compared) == 0:
        raise InputError(
            "There are no candidate pairs to fit a match model on; "
            "check the blocking settings, or score with a saved model."
        )
    specs = [FIELD_BY_NAME[name] for name in cfg.fields]
    missing = [spec.column for spec in specs if spec.column not in compared.columns]
    if missing:
        raise InputError(f"The pairs lack {', '.join(missing)}; run compare_pairs first.")
    pair_arrays(compared, prepared.n)  # checks rec_a/rec_b against this run

    u, n_random = estimate_u(prepared, specs, cfg)
    # agreement levels (codes above "different") keep at least their random-pair u
    floors = [np.where(np.arange(len(ur)) > DIFFERENT, ur, 0.0) for ur in u]
    levels = np.column_stack([compared[spec.column].to_numpy(dtype=np.int8) for spec in specs])
    groups, n_groups = None, 1
    if cfg.prior_by_key_family and "keys" in compared.columns:
        groups = key_family(compared["keys"].to_numpy()).astype(np.int64)
        groups = np.where(groups < 0, 0, groups)  # unproposed pairs: counted with identifier
        n_groups = len(KEY_FAMILIES)
    u_start = u
    if cfg.update_u:
        u_start = [
            candidate_shares(levels[:, f], spec, cfg.pseudo_count, floors[f])
            for f, spec in enumerate(specs)
        ]
    em = run_em(
        levels,
        [_neutral(spec) for spec in specs],
        [initial_m(spec) for spec in specs],
        u_start,
        prior_init=0.1,
        update_u=cfg.update_u,
        u_floor=floors,
        u_prior=u,
        max_iterations=cfg.max_iterations,
        tolerance=cfg.tolerance,
        pseudo_count=cfg.pseudo_count,
        groups=groups,
        n_groups=n_groups,
        prior_pseudo_count=cfg.prior_pseudo_count,
    )

    field_models = {}
    for f, spec in enumerate(specs):
        params = [
            LevelParams(lvl.code, lvl.name, lvl.label, neutral=True)
            if lvl.neutral
            else LevelParams(
                lvl.code, lvl.name, lvl.label, float(em.m[f][lvl.code]), float(em.u[f][lvl.code])
            )
            for lvl in spec.levels
        ]
        field_models[spec.name] = FieldModel(spec.name, params, spec.name in cfg.term_frequency)
    thresholds = Thresholds(cfg.false_merge_cost, cfg.missed_merge_cost, cfg.review_cost)
    family_priors = {}
    if groups is not None:
        family_priors = {
            name: float(em.group_priors[i])
            for i, name in enumerate(KEY_FAMILIES) if em.group_sizes[i] > 0
        }
    model = MatchModel(field_models, em.prior, thresholds, cfg.tf_min_u,
                       family_priors=family_priors)
    model.fit = {
        "candidate_pairs": int(len(compared)),
        "random_pairs": n_random,
        "seed": cfg.seed,
        "em": {
            "iterations": em.iterations,
            "final_change": em.final_change,
            "converged": em.converged,
            "tolerance": cfg.tolerance,
            "log_likelihood": round(em.log_likelihood, 4),
            "level_patterns": em.patterns,
            "u_updated_by_em": cfg.update_u,
            "pseudo_count": cfg.pseudo_count,
            "prior_pseudo_count": cfg.prior_pseudo_count if groups is not None else None,
            "pairs_by_key_family": (
                {name: int(em.group_sizes[i]) for i, name in enumerate(KEY_FAMILIES)}
                if groups is not None else None
            ),
        },
        "expected": expected_outcomes(score_pairs(compared, model, prepared), model),
    }
    model.fit["notes"] = fit_notes(model, prepared.n, n_random)
    return model


def fit_notes(model: MatchModel, n_records: int, n_random: int) -> list[str]:
    """Plain sentences about a fit that a user should read before trusting it."""
    notes = []
    em = model.fit["em"]
    if not em["converged"]:
        notes.append(
            f"EM stopped after {em['iterations']} iterations without settling "
            f"(last change {em['final_change']:.2g}); raise max_iterations or check the pairs."
        )
    if model.fit["expected"]["matches"] < 1:
        notes.append(
            "The model expects almost no matches among the candidate pairs; check the "
            "blocking, or score with a model fitted on a fuller extract."
        )
    if n_random >= n_records * (n_records - 1) // 2:
        notes.append(
            "The extract is small, so u was counted over every record pair, duplicates "
            "included: weights are smaller than they should be and more pairs go to review."
        )
    return notes


def expected_outcomes(scored: pd.DataFrame, model: MatchModel) -> dict[str, float | int]:
    """Counts per decision band and the errors the model itself expects in them.

    These are the model's own estimates (sums of its probabilities), not measured error
    rates: they are only as good as the model's assumptions.
    """
    p = scored["prob"].to_numpy(dtype=np.float64)
    accept = p >= model.thresholds.accept_probability
    review = ~accept & (p >= model.thresholds.review_probability)
    below = ~accept & ~review
    return {
        "matches": round(float(p.sum()), 2),
        "accept_pairs": int(accept.sum()),
        "false_merges_in_accept": round(float((1.0 - p[accept]).sum()), 2),
        "review_pairs": int(review.sum()),
        "matches_in_review": round(float(p[review].sum()), 2),
        "matches_below_review": round(float(p[below].sum()), 2),
    }
