"""Compose the stages into the jobs the CLI offers. Reads like the job; holds no physics.

Each job builds its stage configs, runs the stages in order and returns a frozen result.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from fleetfuel import clean, ingest
from fleetfuel.config import RunConfig
from fleetfuel.ingest.base import FileFailure
from fleetfuel.report import quality


@dataclass(frozen=True, slots=True)
class InspectResult:
    """Ingest and clean of a set of paths: the clean samples and the per-file row account."""

    samples: pd.DataFrame
    account: pd.DataFrame
    failures: tuple[FileFailure, ...]

    @property
    def usable_files(self) -> int:
        """Files that were read and kept at least one row."""
        return quality.usable_files(self.account)


def inspect_paths(
    paths: Sequence[str | Path], cfg: RunConfig | None = None, *, profile: str | None = None
) -> InspectResult:
    """Read, clean and account for every file under ``paths`` (files, folders, globs).

    Never raises for a bad input file: it appears in ``failures`` and in the account with its
    one-line error.
    """
    cfg = cfg or RunConfig()
    if profile is not None:
        cfg = dataclasses.replace(cfg, ingest=dataclasses.replace(cfg.ingest, profile=profile))
    batch = ingest.read_logs(paths, cfg.ingest)
    cleaned = clean.clean_batch(batch, cfg.clean)
    return InspectResult(samples=cleaned.samples, account=cleaned.account, failures=batch.failures)
