"""Candidate pairs (blocking): the record pairs worth comparing, and why each was proposed.

Comparing every record with every other is n(n-1)/2 comparisons, half a trillion for a
million records. Blocking proposes only pairs that share something: an identifier value
(phone, email, national ID, address), a national ID one edit away, or a combination of name
sound, name root, birth date and postcode. Each pair carries a bit mask of the blocking keys
that produced it (`BLOCKING_KEYS`). Placeholder values never pair records and values shared by
too many records (hubs) are left out and reported, so one call-centre number cannot chain
thousands of strangers together. See docs/matching.md (blocking section).

Public API:
    find_candidates(people, identifiers, settings=None) -> CandidateResult
    BlockingSettings, CapRule, CandidateResult
    BLOCKING_KEYS, KEY_SPECS, decode_keys, key_mask, has_key
    pairs_completeness(pairs, truth_person) -> dict
"""

from resolve.candidates.find import CandidateResult, find_candidates
from resolve.candidates.quality import pairs_completeness
from resolve.candidates.registry import (BLOCKING_KEYS, KEY_FAMILIES, KEY_SPECS, BlockingKey,
                                         decode_keys, has_key, key_family, key_mask)
from resolve.candidates.settings import BlockingSettings, CapRule

__all__ = [
    "BLOCKING_KEYS", "KEY_FAMILIES", "KEY_SPECS", "BlockingKey", "BlockingSettings", "CandidateResult",
    "CapRule", "decode_keys", "find_candidates", "has_key", "key_family", "key_mask", "pairs_completeness",
]
