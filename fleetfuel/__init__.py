"""fleetfuel: forecast fuel and energy of candidate vehicle specs on a fleet's real routes.

The pipeline, one subpackage per stage, each importing only from earlier ones:
ingest -> clean -> segment -> cycles -> simulate -> forecast -> report; ``engine`` runs them.
"""

from __future__ import annotations

__version__ = "0.1.0"
