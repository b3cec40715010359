"""Settings for blocking, and the rule that turns block sizes into a hub cap.

A value carried by too many records (a call-centre phone, a shared office address, a popular
name with a default birth date) would put forward every pair among them: k records give
k(k-1)/2 pairs and chain strangers together. Each blocking key therefore has a cap: a block
(the records sharing one key value) larger than the cap produces no pairs and is reported.

The default cap is chosen from the data, per blocking key:

    cap = min(ceiling, max(floor, size at the `quantile` of the blocks with two or more records))

When there are fewer than 1 / (1 - quantile) such blocks (fewer than 1,000 for the default
0.999), the quantile would simply be the largest block, often the hub itself, so the cap is
the floor.

The floor keeps ordinary households (a landline shared by a family of six) well inside the
cap; the quantile lets a data set whose shared values are naturally larger raise it; the
ceiling stops a data set with many hub values from lifting the cap up to the hubs themselves.
A fixed cap per key (or per identifier kind) in `BlockingSettings.caps` replaces the rule.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from resolve.errors import ResolveError
from resolve.normalise import INVALID, MISSING, PLACEHOLDER, VALID
from resolve.candidates.registry import IDENTIFIER_KINDS, KEY_SPECS


@dataclass(frozen=True)
class CapRule:
    """How a blocking key's cap is read from its block sizes (see the module docstring)."""

    floor: int = 20
    quantile: float = 0.999
    ceiling: int = 200

    def cap_for(self, sizes: np.ndarray) -> int:
        """The cap for one blocking key given the sizes of its blocks with two or more records."""
        sizes = np.asarray(sizes)
        sizes = sizes[sizes >= 2]
        if sizes.size * (1.0 - self.quantile) < 1.0:
            # too few blocks for the quantile to be anything but the largest one (often the
            # hub itself): keep the floor
            return int(self.floor)
        high = int(np.quantile(sizes, self.quantile, method="higher"))
        return int(min(self.ceiling, max(self.floor, high)))


@dataclass(frozen=True)
class BlockingSettings:
    """What `find_candidates` runs and how it caps blocks.

    - ``keys``: the blocking keys to run (names from `BLOCKING_KEYS`); None runs all.
    - ``caps``: fixed caps by blocking key name (``shared_phone``) or identifier kind
      (``phone``, which means ``shared_phone``); a block with more distinct records than its
      cap produces no pairs.
    - ``identifier_cap`` / ``person_cap``: the data-driven rule for keys without a fixed cap.
      ``national_id_one_edit`` follows ``identifier_cap``.
    - ``identifier_statuses``: identifier statuses whose key may block. A value the normaliser
      marked ``invalid`` but still keyed (a national ID with one mistyped digit) is often a
      duplicate's, so ``invalid`` is included by default. Placeholders never block.
    """

    keys: tuple[str, ...] | None = None
    caps: Mapping[str, int] = field(default_factory=dict)
    identifier_cap: CapRule = CapRule(floor=20, quantile=0.999, ceiling=200)
    person_cap: CapRule = CapRule(floor=50, quantile=0.999, ceiling=500)
    identifier_statuses: tuple[str, ...] = (VALID, INVALID)

    def __post_init__(self) -> None:
        names = list(KEY_SPECS)
        for name in self.keys or ():
            if name not in KEY_SPECS:
                raise ResolveError(
                    f"Unknown blocking key '{name}'; use one of: {', '.join(names)}.")
        for name, cap in self.caps.items():
            if name not in KEY_SPECS and name not in IDENTIFIER_KINDS:
                raise ResolveError(
                    f"Cap given for unknown blocking key '{name}'; use a key name "
                    f"({', '.join(names)}) or an identifier kind ({', '.join(IDENTIFIER_KINDS)}).")
            if int(cap) < 2 or int(cap) != cap:
                raise ResolveError(f"The cap for '{name}' must be a whole number of at least 2.")
        for rule in (self.identifier_cap, self.person_cap):
            if not (rule.floor >= 2 and rule.ceiling >= rule.floor and 0 < rule.quantile < 1):
                raise ResolveError(
                    "A cap rule needs floor >= 2, ceiling >= floor and 0 < quantile < 1.")
        bad = set(self.identifier_statuses) - {VALID, INVALID}
        if bad:
            raise ResolveError(
                f"Identifier status {sorted(bad)[0]!r} cannot block; "
                f"only '{VALID}' and '{INVALID}' values may "
                f"({PLACEHOLDER} and {MISSING} never do).")

    def selected(self) -> tuple[str, ...]:
        """Names of the blocking keys to run, in registry order."""
        wanted = set(self.keys) if self.keys is not None else set(KEY_SPECS)
        return tuple(name for name in KEY_SPECS if name in wanted)

    def cap(self, name: str, sizes: np.ndarray) -> int:
        """The cap of blocking key ``name`` given its block sizes (fixed cap or the rule)."""
        spec = KEY_SPECS[name]
        if name in self.caps:
            return int(self.caps[name])
        if spec.source == "identifier" and spec.kind in self.caps:
            return int(self.caps[spec.kind])
        rule = self.person_cap if spec.source == "person" else self.identifier_cap
        return rule.cap_for(sizes)
