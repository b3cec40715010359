"""Clusters: entities (one person), households, identity-sharing groups and the review queue.

Every function here takes and returns tables; see docs/clusters.md for the rules and
docs/architecture.md for the table contracts. Everything produced is a lead for a reviewer.
"""

from resolve.clusters.diagnostics import community_split, entity_diagnostics
from resolve.clusters.entities import build_entities, stable_entity_ids
from resolve.clusters.groups import build_groups
from resolve.clusters.households import build_households
from resolve.clusters.queue import build_queue

__all__ = [
    "build_entities",
    "build_groups",
    "build_households",
    "build_queue",
    "community_split",
    "entity_diagnostics",
    "stable_entity_ids",
]
