"""Run the whole pipeline in order and save the results as a run of a project.

`run_pipeline` is what `resolve run` calls: ingest -> normalise -> candidates -> compare ->
score -> link -> cluster -> signals -> queue, each stage a library function, with wall time
recorded per stage. Reviewer decisions already in the project become must-link and
cannot-link constraints, and entity IDs are carried over from the previous run by the
overlap rule (docs/projects.md). The function returns a `RunSummary`; it never prints.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import time
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np
import pandas as pd

from resolve.ingest import IngestSettings, Mapping, read_inputs
from resolve.normalise.records import NormaliseSettings, normalise_records
from resolve.project.runs import Project, file_sha256, write_private_text


@dataclass
class RunSettings:
    """Everything that changes a run's results; hashed into the manifest."""

    default_country: str = "US"
    today: str | None = None               # ISO date; None = the day of the run
    auto_threshold: float | None = None     # None = take the fitted model's own
    review_threshold: float | None = None
    model_path: str | None = None           # reuse a saved model instead of fitting one
    rules_path: str | None = None           # signal rule overrides (TOML)
    encoding: str | None = None
    delimiter: str | None = None
    seed: int = 20240601

    def digest(self) -> str:
        return hashlib.sha256(json.dumps(asdict(self), sort_keys=True).encode()).hexdigest()[:16]


@dataclass
class RunSummary:
    run_id: str
    project: Path
    input_rows: int
    accepted: int
    quarantined: int
    candidate_pairs: int
    links: dict[str, int]
    entities: int
    multi_record_entities: int
    households: int
    groups: int
    flags: int
    flagged_records: int
    queue: int
    timings: dict[str, float]
    notes: list[str] = field(default_factory=list)
    model: dict = field(default_factory=dict)


class _Clock:
    def __init__(self, progress: Callable[[str], None] | None):
        self.timings: dict[str, float] = {}
        self.progress = progress
        self._t = time.perf_counter()
        self._stage: str | None = None

    def stage(self, name: str) -> None:
        now = time.perf_counter()
        if self._stage is not None:
            self.timings[self._stage] = round(now - self._t, 3)
        self._stage, self._t = name, now
        if self.progress and name != "done":
            self.progress(name)


def _today(settings: RunSettings) -> dt.date:
    return dt.date.fromisoformat(settings.today) if settings.today else dt.date.today()


def run_pipeline(inputs: list[str | Path], project_dir: str | Path,
                 mapping: Mapping | str | Path | None = None,
                 settings: RunSettings | None = None,
                 progress: Callable[[str], None] | None = None) -> RunSummary:
    """Run every stage over ``inputs`` and save the results as a new run of the project."""
    from resolve.candidates import find_candidates
    from resolve.clusters import (build_entities, build_groups, build_households, build_queue,
                                  entity_diagnostics, stable_entity_ids)
    from resolve.links import type_links
    from resolve.compare import compare_pairs, prepare_records
    from resolve.scoring import MatchModel, ScoringSettings, fit_model, score_pairs
    from resolve.signals import compute_signals, load_rules

    settings = settings or RunSettings()
    clock = _Clock(progress)
    project = Project.create(project_dir)
    if mapping is None and project.mapping_path.exists():
        mapping = project.mapping_path
    clock.stage("ingest")
    ingest = read_inputs(list(inputs), mapping,
                         IngestSettings(encoding=settings.encoding, delimiter=settings.delimiter))
    if mapping is None:
        write_private_text(project.mapping_path, ingest.mapping.to_toml())
    country = ingest.mapping.defaults.get("country", settings.default_country)
    today = _today(settings)

    clock.stage("normalise")
    norm = normalise_records(ingest.records, NormaliseSettings(default_country=country, today=today))
    people, identifiers = norm.people, norm.identifiers

    clock.stage("candidates")
    cand = find_candidates(people, identifiers)

    clock.stage("compare")
    prepared = prepare_records(people, identifiers)
    compared = compare_pairs(cand.pairs, prepared)

    clock.stage("score")
    if settings.model_path:
        model = MatchModel.load(settings.model_path)
    else:
        model = fit_model(compared, prepared, settings=ScoringSettings.coerce({"seed": settings.seed}))
    scored = score_pairs(compared, model, prepared)
    del compared
    from resolve.project.thresholds import load_thresholds

    saved = load_thresholds(project.path) or {}
    thresholds = {
        "auto": settings.auto_threshold if settings.auto_threshold is not None
        else saved.get("auto", model.thresholds.accept_probability),
        "review": settings.review_threshold if settings.review_threshold is not None
        else saved.get("review", model.thresholds.review_probability),
    }

    clock.stage("link")
    links = type_links(scored, people, identifiers, thresholds, cand.hubs)

    clock.stage("cluster")
    must, cannot = _constraints(project)
    entities = build_entities(people, links, must, cannot)
    previous = project.previous_run()
    if previous is not None and previous.has("entities"):
        entities = stable_entity_ids(entities, previous.table("entities"))
    diagnostics = entity_diagnostics(entities, links)
    households = build_households(entities, links, identifiers, people, cand.hubs)
    groups, overlaps = build_groups(entities, links, identifiers, cand.hubs)

    clock.stage("signals")
    rules = load_rules(settings.rules_path) if settings.rules_path else None
    flags = compute_signals(people, identifiers, entities, links, groups, rules=rules, today=today)
    queue = build_queue(entities, diagnostics, households, groups, links, flags)

    clock.stage("save")
    manifest = {
        "created": dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds"),
        "inputs": [{"path": str(Path(p).resolve()), "sha256": file_sha256(p)} for p in inputs],
        "files": ingest.files.to_dict(orient="records"),
        "input_rows": ingest.input_rows,
        "accepted": len(ingest.records),
        "quarantined": len(ingest.quarantine),
        "settings": asdict(settings),
        "settings_hash": settings.digest(),
        "thresholds": thresholds,
        "mapping": ingest.mapping.columns,
        "candidates": cand.totals,
    }
    tables = {
        "records": ingest.records, "quarantine": ingest.quarantine, "people": people,
        "identifiers": identifiers, "pairs": links, "hubs": cand.hubs,
        "blocking_report": cand.report, "entities": entities, "diagnostics": diagnostics,
        "households": households, "groups": groups, "overlaps": overlaps, "flags": flags,
        "queue": queue,
    }
    manifest["timings"] = dict(clock.timings)
    run = project.save_run(tables, manifest, documents={"model.json": model.to_dict()})
    from resolve.project import register_run

    register_run(project)
    clock.stage("done")
    link_counts = {str(k): int(v) for k, v in links["link_type"].value_counts().items()}
    sizes = entities["entity_id"].value_counts()
    return RunSummary(
        run_id=run.run_id, project=project.path, input_rows=ingest.input_rows,
        accepted=len(ingest.records), quarantined=len(ingest.quarantine),
        candidate_pairs=len(cand.pairs), links=link_counts, entities=int(len(sizes)),
        multi_record_entities=int((sizes > 1).sum()),
        households=int(households["household_id"].nunique()) if len(households) else 0,
        groups=int(groups["group_id"].nunique()) if len(groups) else 0,
        flags=len(flags), flagged_records=int(flags["record_id"].nunique()) if len(flags) else 0,
        queue=len(queue), timings=clock.timings, notes=ingest.notes,
        model={"thresholds": thresholds, "fit": getattr(model, "fit", None) or {}},
    )


def _constraints(project: Project):
    """Must-link and cannot-link pairs from the project's review decisions, if any."""
    try:
        from resolve.project.store import ReviewStore
    except ImportError:
        return None, None
    if not ReviewStore.exists(project.path):
        return None, None
    with ReviewStore.open(project.path) as store:
        return store.constraints()
