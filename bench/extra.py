"""Extra figures for `make bench` that need a finished project (decisions, review screens)."""

from __future__ import annotations

from pathlib import Path


def extra_benchmarks(cache: Path, seed: int) -> dict:
    """Figures measured on the largest cached project; empty until those features exist."""
    return {}
