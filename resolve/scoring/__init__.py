"""Fellegi-Sunter scoring: match weights, EM-fitted m and u, term-frequency adjustment.

Typical use on one run::

    compared = compare_pairs(pairs, people, identifiers)
    model = fit_model(compared, people, identifiers)      # or MatchModel.load(path)
    scored = score_pairs(compared, model, people, identifiers)
    model.save("model.json")                              # readable and editable
    explain_pair(12, 40, people, identifiers, model)      # one pair, field by field

See docs/matching.md for the method, the level tables and a pair worked through by hand.
"""

from resolve.scoring.em import EMResult, run_em
from resolve.scoring.explain import explain_pair, mask_identifier
from resolve.scoring.fit import ScoringSettings, fit_model, random_pairs
from resolve.scoring.model import (
    FieldModel,
    LevelParams,
    MatchModel,
    Thresholds,
    match_weight,
    model_from_probabilities,
    probability_to_weight,
    weight_to_probability,
)
from resolve.scoring.score import score_pairs

__all__ = [
    "EMResult",
    "FieldModel",
    "LevelParams",
    "MatchModel",
    "ScoringSettings",
    "Thresholds",
    "explain_pair",
    "fit_model",
    "mask_identifier",
    "match_weight",
    "model_from_probabilities",
    "probability_to_weight",
    "random_pairs",
    "run_em",
    "score_pairs",
    "weight_to_probability",
]
