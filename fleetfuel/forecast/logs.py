"""Where the forecast reads routes' own logs: :class:`RouteLogs`.

The forecast needs logged samples for two things only, both per route: the steepest sustained
grade (:func:`fleetfuel.forecast.grade.sustained_grades`) and, for routes simulated on their own
logs (``--full``, or routes shorter than their cycles), the energy of each competing spec over the
route's shifts (:func:`fleetfuel.forecast.energy.energy_from_logs`). :class:`RouteLogs` asks for
both route by route, so a source may answer from a frame in memory (:class:`FrameLogs`, the
library default) or from the work folder, partition by partition on any engine
(:class:`fleetfuel.engine.routes.WorkFolderLogs`). A route's grade is the largest of its trips'
and its energy the sum of its shifts' runs, each depending on its own rows only, so both give the
same numbers.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Protocol

import pandas as pd

from fleetfuel import schema
from fleetfuel.forecast.energy import RouteEnergy, ShiftTrace, energy_from_logs, shift_traces
from fleetfuel.forecast.grade import sustained_grades
from fleetfuel.simulate import SimConfig, VehicleSpec


@dataclass(frozen=True, slots=True)
class LogCell:
    """One route x spec cell to simulate on the route's own logs, at ``payload_kg``. [kg]"""

    route: str
    spec: VehicleSpec
    payload_kg: float


class RouteLogs(Protocol):
    """A source of the routes' logged samples, asked route by route."""

    def steepest_grades(self, routes: Sequence[str], window_m: float) -> pd.Series:
        """Route -> steepest sustained grade [1] (NaN without elevation), for ``routes``."""
        ...

    def log_energies(self, cells: Sequence[LogCell], sim_cfg: SimConfig) -> list[RouteEnergy]:
        """:func:`~fleetfuel.forecast.energy.energy_from_logs` of every cell, in the cells' order."""
        ...


class FrameLogs:
    """:class:`RouteLogs` over a segmented clean frame with routes, held in memory."""

    def __init__(self, samples: pd.DataFrame) -> None:
        self.samples = samples
        self._traces: dict[str, list[ShiftTrace]] = {}

    def steepest_grades(self, routes: Sequence[str], window_m: float) -> pd.Series:
        return sustained_grades(self.samples, window_m).reindex(pd.Index(list(routes), name=schema.ROUTE))

    def log_energies(self, cells: Sequence[LogCell], sim_cfg: SimConfig) -> list[RouteEnergy]:
        out = []
        for cell in cells:
            if cell.route not in self._traces:
                self._traces[cell.route] = shift_traces(self.samples, cell.route)
            out.append(energy_from_logs(self._traces[cell.route], cell.spec, cell.payload_kg, sim_cfg))
        return out
