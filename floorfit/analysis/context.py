"""The inputs every stage of the site check shares, and the stage outputs they hand on.

A :class:`CheckContext` holds the plan, vehicle, stations and site of one check plus indexes
built once (floor-standing obstacles for width measurements, overhead obstacles for height
blocks). Stage outputs are small frozen records: :class:`SliceStage` (slices and roadmap),
:class:`ClearanceStage` (the floor clearance raster) and :class:`Places` (roadmap regions
merged into places, and the joins between them). Local plan frame, metres, throughout.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import networkx as nx
import numpy as np
import shapely
from shapely.geometry import Point

from floorfit.analysis.envelope import building_envelope
from floorfit.analysis.passages import ObstacleIndex
from floorfit.cspace.slices import SliceSet
from floorfit.plan.model import Plan
from floorfit.plan.site import Site
from floorfit.plan.stations import Station
from floorfit.vehicles.rigid import Vehicle

__all__ = ["CheckContext", "SliceStage", "ClearanceStage", "Places"]


@dataclass
class CheckContext:
    """What one site check is about, with the obstacle indexes its stages share."""

    plan: Plan
    vehicle: Vehicle
    stations: list[Station]
    site: Site
    progress: Callable[[str], None]
    workers: int | None
    heading_step_deg: float | None
    #: station name → (x, y) in the local frame, metres
    st_local: dict[str, tuple[float, float]] = field(default_factory=dict)
    #: floor-standing obstacles (bottom ≤ 0): they measure widths
    index: ObstacleIndex | None = None
    #: obstacles above the floor that the vehicle meets (bottom below its height) and their bottoms, m
    overhead: list[Any] = field(default_factory=list)
    overhead_bottom: np.ndarray = field(default_factory=lambda: np.zeros(0))
    overhead_tree: shapely.STRtree | None = None
    #: notes for the report, in the order the stages add them
    notes: list[str] = field(default_factory=list)
    #: the floor analysed (local frame; None: the whole drawing), see :mod:`floorfit.analysis.envelope`
    envelope: Any = None
    _met_tree: Any = field(default=None, repr=False)

    @classmethod
    def build(cls, plan: Plan, vehicle: Vehicle, stations: list[Station], site: Site,
              progress: Callable[[str], None], workers: int | None, heading_step_deg: float | None) -> CheckContext:
        wb, sb = plan.wall_heights[:, 0], plan.solid_heights[:, 0]
        h = vehicle.height_m if vehicle.height_m is not None else math.inf
        ow, os_ = (wb > 0) & (wb < h), (sb > 0) & (sb < h)
        overhead = list(plan.walls[ow]) + list(plan.solids[os_])
        st_local = {s.name: plan.to_local(s.x, s.y) for s in stations}
        index = ObstacleIndex(plan.walls[wb <= 0], plan.solids[sb <= 0])
        envelope = building_envelope(plan, site, list(index.geoms) + overhead, list(st_local.values()))
        return cls(plan=plan, vehicle=vehicle, stations=list(stations), site=site, progress=progress,
                   workers=workers, heading_step_deg=heading_step_deg, st_local=st_local, index=index,
                   overhead=overhead, overhead_bottom=np.concatenate([wb[ow], sb[os_]]),
                   overhead_tree=shapely.STRtree(overhead) if overhead else None, envelope=envelope)

    @property
    def station_names(self) -> list[str]:
        return [s.name for s in self.stations]

    @property
    def extra_headings(self) -> list[float]:
        """Station headings the slices must include (degrees)."""
        return [s.heading_deg for s in self.stations if s.heading_deg is not None]

    def met_tree(self) -> shapely.STRtree | None:
        """Index of every obstacle the vehicle meets (floor-standing and overhead below its height), or None."""
        if self._met_tree is None:
            geoms = list(self.index.geoms if self.index is not None else []) + list(self.overhead)
            self._met_tree = shapely.STRtree(geoms) if geoms else False
        return self._met_tree or None

    def clear_height_near(self, x: float, y: float, radius: float) -> float | None:
        """Lowest bottom (m) of overhead obstacles the vehicle meets within ``radius`` of (x, y), or None."""
        if self.overhead_tree is None:
            return None
        idx = self.overhead_tree.query(Point(x, y).buffer(radius))
        return float(self.overhead_bottom[idx].min()) if len(idx) else None


@dataclass(frozen=True)
class SliceStage:
    """The configuration space of the check: heading cells, C-obstacles, slices, roadmap."""

    cells: Any
    obstacles: Any
    slices: SliceSet
    roadmap: nx.Graph


@dataclass(frozen=True)
class ClearanceStage:
    """The floor clearance raster: ``bounds`` (local, m), ``cell`` (m), the field, the join floor (m)."""

    bounds: tuple[float, float, float, float]
    cell: float
    field: Any
    floor: float


@dataclass
class Places:
    """Roadmap regions of one slice set, merged into places, and the joins between places.

    ``comps``: nodes per place id; ``comp_of``: node → region id; ``station_regions``: station
    → regions holding it (before merging); ``station_places``: station → places; ``seeds``:
    place → raster cells; ``events``: joins from wide to narrow.
    """

    comps: list[set]
    comp_of: dict
    station_regions: dict[str, list[int]]
    station_places: dict[str, list[int]]
    seeds: dict[int, np.ndarray]
    events: list
