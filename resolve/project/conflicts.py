"""Refuse a decision that contradicts decisions already standing, before it is written.

A must-link chain that joins two records some other decision keeps apart cannot be honoured
by the next run (entities would have to both hold and split them), so the pipeline would stop
with an error. It is far kinder to say so when the reviewer decides, naming the earlier
decision to undo. The check looks only at the neighbourhood of the new decision: it follows
standing accept and split decisions outward from the decision's records (indexed look-ups,
a few rounds), joins what they join, and then looks for a keep-apart pair inside one joined
set. Decisions awaiting approval take part too (they may be approved at any moment);
decisions the new one will supersede do not.
"""

from __future__ import annotations

from resolve.errors import DecisionError
from resolve.project.standing import in_force
from resolve.project.store import ReviewStore

JOINING = ("accept", "split")
SEPARATING = ("reject", "split")


def live_ids(store: ReviewStore, ids: list[int], four_eyes: bool) -> set[int]:
    """Those of ``ids`` that nothing counting supersedes (in force, or awaiting approval)."""
    if not ids:
        return set()
    standing = in_force(store.related_decisions(ids), four_eyes)
    live = standing[standing["decision_id"].isin(ids) & standing["superseded_by"].isna()]
    return set(live["decision_id"].astype(int).tolist())


class _Joined:
    """Union-find over record IDs (small: the neighbourhood of one decision)."""

    def __init__(self):
        self.parent: dict[str, str] = {}

    def find(self, x: str) -> str:
        self.parent.setdefault(x, x)
        while self.parent[x] != x:
            self.parent[x] = self.parent[self.parent[x]]
            x = self.parent[x]
        return x

    def join(self, records: list[str]) -> None:
        for r in records[1:]:
            a, b = self.find(records[0]), self.find(r)
            if a != b:
                self.parent[b] = a


def check_conflicts(store: ReviewStore, four_eyes: bool, joined: list[list[str]],
                    apart: list[list[str]], exclude: set[int]) -> None:
    """Raise `DecisionError` when the new decision contradicts live decisions.

    ``joined``: groups of records the new decision says are one person each; ``apart``: parts
    the new decision keeps apart from each other; ``exclude``: decisions it supersedes.
    """
    records = sorted({r for g in joined + apart for r in g})
    uf = _Joined()
    seen_records = set(records)
    frontier = set(records)
    seen: set[int] = set()
    joiner_of: dict[str, int] = {}
    while frontier:
        new = sorted(set(store.ids_touching(sorted(frontier), JOINING)) - seen)
        if not new:
            break
        seen.update(new)
        live = sorted(live_ids(store, new, four_eyes) - exclude)
        groups: dict[tuple[int, int], list[str]] = {}
        for dec, rid, part in store.member_rows(live):
            groups.setdefault((dec, part), []).append(rid)
        frontier = set()
        for (dec, _), ids in sorted(groups.items()):
            uf.join(sorted(ids))
            for r in ids:
                joiner_of.setdefault(r, dec)
            frontier |= set(ids) - seen_records
        seen_records |= frontier

    for group in joined:
        uf.join(sorted(group))
    for i, part in enumerate(apart):
        for other in apart[i + 1:]:
            roots = {uf.find(r): r for r in part}
            for r in other:
                if uf.find(r) in roots:
                    earlier = joiner_of.get(r) or joiner_of.get(roots[uf.find(r)])
                    raise DecisionError(
                        f"records {roots[uf.find(r)]} and {r} are joined as one person by "
                        f"decision {earlier}; undo that decision first "
                        f"(--action undo --decision {earlier}).")

    touching = store.ids_touching(sorted(seen_records), SEPARATING)
    if not touching:
        return
    live = sorted(live_ids(store, touching, four_eyes) - exclude)
    parts: dict[int, dict[str, tuple[int, str]]] = {}
    for dec, r, p in store.member_rows(live):
        if r not in seen_records:
            continue
        root = uf.find(r)
        known = parts.setdefault(dec, {})
        if root in known and known[root][0] != p:
            raise DecisionError(
                f"decision {dec} keeps records {known[root][1]} and {r} apart, but this "
                f"decision would join them; undo decision {dec} first "
                f"(--action undo --decision {dec}).")
        known.setdefault(root, (p, r))
