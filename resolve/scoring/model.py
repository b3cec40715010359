"""The match model: m and u probabilities per field level, the prior, and the thresholds.

A `MatchModel` is everything needed to turn agreement levels into match weights. It saves
as plain JSON that a person can read and edit (field -> levels -> m, u, label), so a model
fitted on one extract can be reviewed, adjusted and reused on the next without refitting.

Weights follow Fellegi & Sunter (1969, JASA 64:1183-1210): a level's match weight is
log2(m / u), where m is the probability of the level among true matches and u among
non-matches. Neutral levels (missing values) weigh 0. The prior weight is log2(λ / (1 - λ)),
λ being the share of matches among the candidate pairs. The model keeps one λ per family of
blocking keys that proposed a pair (`resolve.candidates.registry.KEY_FAMILIES`: identifier
keys only, person keys only, or both): a pair that shares a phone *and* a name-and-birth-date
key is far more often a duplicate than one that only shares a phone, and the fields alone
cannot say so because, among candidate pairs, they are not independent (see docs/matching.md,
"Prior per key family"). A pair blocking did not propose uses the overall λ.

Agreement never counts against a match and disagreement never counts for one: the weight
of an agreement level (any level above "different"), after any term-frequency adjustment, is
at least 0 — the weight of the field being blank — and the weight of "different" is at most
0. Among candidate pairs the fields are not independent (households share a surname, an
address, a landline and a mailbox together), and EM can then price an agreement below 0 or
a disagreement above it; scored as it stands, blanking a shared address would raise a
pair's score.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from resolve.candidates.registry import KEY_FAMILIES, key_family
from resolve.compare.levels import DIFFERENT, FIELD_BY_NAME, FIELDS, FieldSpec
from resolve.errors import InputError

FORMAT = "resolve.match-model"
VERSION = 3
#: Model files this version reads (version 2 has one prior for every pair).
READS_VERSIONS = (2, 3)


def match_weight(m: float, u: float) -> float:
    """Fellegi-Sunter weight of observing a level: log2(m / u), in bits."""
    return math.log2(m / u)


def bounded_weight(weight: float, code: int) -> float:
    """A level's weight as scored: at least 0 for agreement (codes above "different"), at
    most 0 for "different". Neutral levels weigh 0 anyway."""
    if code > DIFFERENT:
        return max(weight, 0.0)
    if code == DIFFERENT:
        return min(weight, 0.0)
    return weight


def weight_to_probability(weight: np.ndarray | float) -> np.ndarray | float:
    """Match probability from a total weight (log2 odds): 2^w / (1 + 2^w), overflow-safe."""
    w = np.asarray(weight, dtype=np.float64)
    return 0.5 * (1.0 + np.tanh(w * (math.log(2.0) / 2.0)))


def probability_to_weight(p: float) -> float:
    """Total weight (log2 odds) for a match probability strictly between 0 and 1."""
    return math.log2(p / (1.0 - p))


@dataclass
class LevelParams:
    """m and u of one agreement level (neutral levels have neither: weight 0)."""

    code: int
    name: str
    label: str
    m: float | None = None
    u: float | None = None
    neutral: bool = False

    @property
    def raw_weight(self) -> float:
        """log2(m / u) as estimated; 0 for a neutral level."""
        if self.neutral or self.m is None or self.u is None:
            return 0.0
        return match_weight(self.m, self.u)

    @property
    def weight(self) -> float:
        """The weight scoring uses: log2(m / u), bounded by 0 (see `bounded_weight`)."""
        return bounded_weight(self.raw_weight, self.code)


@dataclass
class FieldModel:
    """The levels of one compared field and whether term-frequency adjustment applies."""

    name: str
    levels: list[LevelParams]
    term_frequency: bool = False

    @property
    def spec(self) -> FieldSpec:
        """The catalogue entry of this field."""
        return FIELD_BY_NAME[self.name]

    def level(self, code: int) -> LevelParams:
        """The parameters of the level with this code."""
        for lvl in self.levels:
            if lvl.code == code:
                return lvl
        raise KeyError(code)

    def weight_table(self, *, raw: bool = False) -> np.ndarray:
        """Weight per level code (index = code), float64: as scored (agreement at least 0),
        or with ``raw`` the plain log2(m / u) (what the term-frequency adjustment starts from).
        """
        table = np.zeros(self.spec.n_levels, dtype=np.float64)
        for lvl in self.levels:
            table[lvl.code] = lvl.raw_weight if raw else lvl.weight
        return table

    def exact_codes(self) -> list[int]:
        """Codes of the exact-agreement levels (where term-frequency adjustment can apply)."""
        return [lvl.code for lvl in self.spec.levels if lvl.exact]


@dataclass
class Thresholds:
    """Decision thresholds derived from the costs of the three possible outcomes.

    With a false merge costing ``false_merge`` units, a missed merge ``missed_merge`` and a
    reviewer's look ``review``, the cheapest action for a pair with match probability p is:
    accept when (1 - p) * false_merge <= min(review, p * missed_merge); send to review when
    review is cheaper than both automatic actions; otherwise leave the pair unlinked.
    """

    false_merge: float = 10.0
    missed_merge: float = 1.0
    review: float = 0.1

    def __post_init__(self) -> None:
        if min(self.false_merge, self.missed_merge, self.review) <= 0:
            raise InputError("Decision costs must be positive numbers; fix the model file.")

    @property
    def accept_probability(self) -> float:
        """Lowest match probability that is merged without review."""
        fm, mm, rv = self.false_merge, self.missed_merge, self.review
        if rv < fm * mm / (fm + mm):
            return 1.0 - rv / fm
        return fm / (fm + mm)

    @property
    def review_probability(self) -> float:
        """Lowest match probability worth a reviewer's time."""
        fm, mm, rv = self.false_merge, self.missed_merge, self.review
        if rv < fm * mm / (fm + mm):
            return rv / mm
        return fm / (fm + mm)

    @property
    def accept_weight(self) -> float:
        """`accept_probability` as a total weight (log2 odds)."""
        return probability_to_weight(self.accept_probability)

    @property
    def review_weight(self) -> float:
        """`review_probability` as a total weight (log2 odds)."""
        return probability_to_weight(self.review_probability)

    def to_dict(self) -> dict[str, Any]:
        """Costs (what is read back) and the derived thresholds (shown for reading)."""
        return {
            "costs": {
                "false_merge": self.false_merge,
                "missed_merge": self.missed_merge,
                "review": self.review,
            },
            "accept_probability": round(self.accept_probability, 6),
            "review_probability": round(self.review_probability, 6),
            "accept_weight": round(self.accept_weight, 4),
            "review_weight": round(self.review_weight, 4),
        }


@dataclass
class MatchModel:
    """Fellegi-Sunter match model: per-field level probabilities, prior and thresholds."""

    fields: dict[str, FieldModel]
    prior: float
    thresholds: Thresholds = field(default_factory=Thresholds)
    tf_min_u: float = 1e-5
    fit: dict[str, Any] = field(default_factory=dict)
    #: λ per key family name (`KEY_FAMILIES`); a family absent here uses ``prior``.
    family_priors: dict[str, float] = field(default_factory=dict)

    @property
    def prior_weight(self) -> float:
        """log2(λ / (1 - λ)) of the overall λ: the start of a pair blocking did not propose."""
        return math.log2(self.prior / (1.0 - self.prior))

    def family_prior(self, family: str | None) -> float:
        """λ of a key family (the overall λ for None or a family the model lacks)."""
        return self.family_priors.get(family, self.prior) if family else self.prior

    def family_prior_weight(self, family: str | None) -> float:
        """log2(λ / (1 - λ)) of a key family's λ (`family_prior`)."""
        p = self.family_prior(family)
        return math.log2(p / (1.0 - p))

    def prior_weights(self, keys) -> np.ndarray:
        """Starting weight of each pair, float64, from its blocking ``keys`` masks (a mask
        of 0, no key, starts from the overall λ)."""
        codes = key_family(keys)
        table = np.array([self.family_prior_weight(f) for f in KEY_FAMILIES] + [self.prior_weight])
        return table[np.where(codes < 0, len(KEY_FAMILIES), codes)]

    def field_names(self) -> list[str]:
        """The modelled fields in catalogue order."""
        return [spec.name for spec in FIELDS if spec.name in self.fields]

    # ----- JSON ---------------------------------------------------------------------------
    def to_dict(self) -> dict[str, Any]:
        """Plain data for JSON: readable, with the computed weight beside each m and u."""
        fields_out: dict[str, Any] = {}
        for name in self.field_names():
            fm = self.fields[name]
            levels = []
            for lvl in fm.levels:
                entry: dict[str, Any] = {"level": lvl.code, "name": lvl.name, "label": lvl.label}
                if lvl.neutral:
                    entry["neutral"] = True
                else:
                    entry["m"] = _round(lvl.m)
                    entry["u"] = _round(lvl.u)
                    entry["weight"] = round(lvl.weight, 4)
                    if lvl.weight != lvl.raw_weight:
                        entry["weight_before_bound"] = round(lvl.raw_weight, 4)
                levels.append(entry)
            fields_out[name] = {"term_frequency": fm.term_frequency, "levels": levels}
        return {
            "format": FORMAT,
            "version": VERSION,
            "note": (
                "Scoring reads m and u of each level (weight = log2(m/u), never below 0 for "
                "an agreement level nor above 0 for 'different'); 'weight' is shown for "
                "reading and is recomputed on load. Edit m, u, prior or costs, then score."
            ),
            "prior": {
                "lambda": _round(self.prior),
                "weight": round(self.prior_weight, 4),
                "by_key_family": {
                    name: {"lambda": _round(p), "weight": round(math.log2(p / (1.0 - p)), 4)}
                    for name, p in self.family_priors.items()
                },
            },
            "thresholds": self.thresholds.to_dict(),
            "term_frequency": {"min_u": self.tf_min_u},
            "fields": fields_out,
            "fit": self.fit,
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> "MatchModel":
        """Rebuild a model from `to_dict` output (possibly edited by hand), with checks."""
        if data.get("format") != FORMAT:
            raise InputError("This file is not a resolve match model; pass a file saved by it.")
        if data.get("version") not in READS_VERSIONS:
            raise InputError(
                f"Match model version {data.get('version')} is not supported; refit the model."
            )
        try:
            fields_in = data["fields"]
            prior = float(data["prior"]["lambda"])
            costs = data.get("thresholds", {}).get("costs", {})
            thresholds = Thresholds(**{k: float(v) for k, v in costs.items()})
            tf_min_u = float(data.get("term_frequency", {}).get("min_u", 1e-5))
            fields = {
                name: _field_from_dict(name, spec) for name, spec in fields_in.items()
            }
            by_family = data["prior"].get("by_key_family") or {}
            family_priors = {str(k): float(v["lambda"]) for k, v in by_family.items()}
        except (KeyError, TypeError, ValueError) as exc:
            raise InputError(
                f"The match model file is incomplete or malformed ({exc}); refit or fix it."
            ) from None
        if not 0.0 < prior < 1.0:
            raise InputError("The model prior (lambda) must be between 0 and 1; fix the file.")
        unknown = sorted(set(family_priors) - set(KEY_FAMILIES))
        if unknown:
            raise InputError(
                f"The model names an unknown key family {unknown[0]!r}; use only "
                f"{', '.join(KEY_FAMILIES)}."
            )
        if not all(0.0 < p < 1.0 for p in family_priors.values()):
            raise InputError("Every key family's lambda must be between 0 and 1; fix the file.")
        if not 0.0 < tf_min_u < 1.0:
            raise InputError("term_frequency.min_u must be between 0 and 1; fix the file.")
        return cls(fields, prior, thresholds, tf_min_u, dict(data.get("fit", {})), family_priors)

    def save(self, path: str | Path) -> None:
        """Write the model as indented JSON (stable key order, so files diff cleanly)."""
        Path(path).write_text(json.dumps(self.to_dict(), indent=2) + "\n", encoding="utf-8")

    @classmethod
    def load(cls, path: str | Path) -> "MatchModel":
        """Read a model saved by `save` (and perhaps edited by hand)."""
        try:
            data = json.loads(Path(path).read_text(encoding="utf-8"))
        except FileNotFoundError:
            raise InputError(f"No match model at {path}; check the path.") from None
        except json.JSONDecodeError as exc:
            raise InputError(
                f"The match model {path} is not valid JSON (line {exc.lineno}); fix the file."
            ) from None
        return cls.from_dict(data)


def _round(x: float | None) -> float | None:
    """Probabilities to 8 significant digits: readable, and exact enough to score."""
    return None if x is None else float(f"{x:.8g}")


def _field_from_dict(name: str, data: dict[str, Any]) -> FieldModel:
    if name not in FIELD_BY_NAME:
        known = ", ".join(FIELD_BY_NAME)
        raise InputError(f"The model names an unknown field {name!r}; use only {known}.")
    spec = FIELD_BY_NAME[name]
    by_code = {int(entry["level"]): entry for entry in data["levels"]}
    levels = []
    for lvl in spec.levels:
        entry = by_code.get(lvl.code)
        if entry is None:
            raise InputError(f"The model lacks level {lvl.code} of {name}; refit the model.")
        if entry.get("name", lvl.name) != lvl.name:
            raise InputError(
                f"Level {lvl.code} of {name} is {lvl.name!r} in this version, not "
                f"{entry['name']!r}; refit the model."
            )
        if lvl.neutral:
            levels.append(LevelParams(lvl.code, lvl.name, lvl.label, neutral=True))
            continue
        m, u = float(entry["m"]), float(entry["u"])
        if not (0.0 < m <= 1.0 and 0.0 < u <= 1.0):
            raise InputError(
                f"m and u of {name} level {lvl.code} must be in (0, 1]; fix the model file."
            )
        levels.append(LevelParams(lvl.code, lvl.name, entry.get("label", lvl.label), m, u))
    return FieldModel(name, levels, bool(data.get("term_frequency", False)))


def model_from_probabilities(
    m: dict[str, dict[int, float]],
    u: dict[str, dict[int, float]],
    prior: float,
    *,
    term_frequency: tuple[str, ...] = (),
    thresholds: Thresholds | None = None,
    tf_min_u: float = 1e-5,
    fit: dict[str, Any] | None = None,
    family_priors: dict[str, float] | None = None,
) -> MatchModel:
    """Build a model from m and u per field and level code (neutral levels may be omitted)."""
    fields: dict[str, FieldModel] = {}
    for name in m:
        spec = FIELD_BY_NAME[name]
        levels = []
        for lvl in spec.levels:
            if lvl.neutral:
                levels.append(LevelParams(lvl.code, lvl.name, lvl.label, neutral=True))
            else:
                levels.append(
                    LevelParams(
                        lvl.code,
                        lvl.name,
                        lvl.label,
                        float(m[name][lvl.code]),
                        float(u[name][lvl.code]),
                    )
                )
        fields[name] = FieldModel(name, levels, name in term_frequency)
    return MatchModel(fields, prior, thresholds or Thresholds(), tf_min_u, fit or {},
                      dict(family_priors or {}))
