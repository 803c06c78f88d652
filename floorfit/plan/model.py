"""The obstacle model of one floor plan, in metres, ready for configuration-space work.

Frames
------
The *drawing frame* is the DXF's own coordinate system converted to metres (drawing
coordinates times the drawing unit). Everything a user sees (poses, findings, JSON,
overlay) is in the drawing frame. Internally a :class:`Plan` keeps its geometry in a
*local frame*: the drawing frame shifted by ``origin`` so that coordinates stay small
(drawings near 1e8 mm keep their precision). ``to_local`` / ``to_drawing`` convert.

Obstacles
---------
``walls`` are linework: zero-thickness boundaries (LineStrings) the vehicle may not
cross or touch. ``solids`` are filled obstacles (Polygons): columns, racks, machines.
Curved entities have been flattened; ``curve_tolerance_m`` bounds how far the flattened
linework can lie from the true curve, and the engine grows the vehicle by that much so
that a "fits" answer stays sound.

Heights (bottom, top above the floor, metres) are kept per obstacle for height-aware
checks; the default ``(0, inf)`` blocks every vehicle. An obstacle counts for a vehicle
of height h only where the ranges overlap: bottom < h (and top > 0). The layer each
obstacle came from is kept so that a site file can give layers height ranges.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import shapely

from floorfit.plan.directions import dominant_directions_deg

__all__ = ["Plan", "Label", "Doorway", "ImportIssue", "LayerInfo", "FULL_HEIGHT"]

#: Height range of an obstacle that blocks any vehicle: floor to infinity (metres).
FULL_HEIGHT = (0.0, float("inf"))


@dataclass(frozen=True)
class Label:
    """A text from the drawing (room name, number, door mark). Position in the local frame, metres."""

    text: str
    x: float
    y: float
    layer: str = ""
    handle: str | None = None


@dataclass(frozen=True)
class Doorway:
    """An opening the vehicle may pass through, with the door open.

    ``x, y``: centre of the opening, local frame, metres. ``width_m``: the drawn width
    of the opening (leaf or gap), metres. ``source``: how it was recognised
    (``"swing"`` arc + leaf, ``"block"`` door block, ``"opening-line"``, ``"gap"``).
    """

    x: float
    y: float
    width_m: float
    layer: str = ""
    source: str = ""
    handle: str | None = None
    label: str | None = None


@dataclass(frozen=True)
class ImportIssue:
    """Something the importer did or skipped that the user should know about."""

    kind: str          # e.g. "skipped", "flattened", "repaired", "units", "unknown-layer"
    message: str
    handle: str | None = None
    layer: str | None = None

    def to_dict(self) -> dict:
        return {"kind": self.kind, "message": self.message, "handle": self.handle, "layer": self.layer}


@dataclass(frozen=True)
class LayerInfo:
    """One drawing layer, its entity count and the role the importer gave it."""

    name: str
    role: str          # "solid", "wall", "door", "opening", "label", "ignore", ...
    entities: int
    reason: str = ""   # why this role: "AIA name A-WALL", "site file pattern 'RACK*'", "fallback"

    def to_dict(self) -> dict:
        return {"name": self.name, "role": self.role, "entities": self.entities, "reason": self.reason}


def _as_geometry_array(items, kind: str) -> np.ndarray:
    arr = np.asarray(list(items) if not isinstance(items, np.ndarray) else items, dtype=object)
    if arr.ndim != 1:
        arr = arr.reshape(-1)
    if len(arr) and not np.all(shapely.is_geometry(arr)):
        raise TypeError(f"{kind} must be shapely geometries")
    return arr


@dataclass
class Plan:
    """Obstacles of one floor plan in the local frame (metres) plus what the importer learnt."""

    walls: np.ndarray
    solids: np.ndarray
    origin: tuple[float, float] = (0.0, 0.0)
    source: str = "<memory>"
    units: str = "m"
    metres_per_unit: float = 1.0
    unit_reason: str = "given"
    curve_tolerance_m: float = 0.0
    wall_heights: np.ndarray | None = None
    solid_heights: np.ndarray | None = None
    wall_layers: np.ndarray | None = None
    solid_layers: np.ndarray | None = None
    doors: list[Doorway] = field(default_factory=list)
    labels: list[Label] = field(default_factory=list)
    layers: list[LayerInfo] = field(default_factory=list)
    issues: list[ImportIssue] = field(default_factory=list)
    dxf_version: str | None = None
    # building models (IFC): the GlobalId of the element each wall / solid came from, and what
    # is needed to go back into the model (format, storey, floor z, project GlobalId)
    wall_ids: np.ndarray | None = None
    solid_ids: np.ndarray | None = None
    model: dict | None = None
    # DXF drawings: the handle of the model-space entity each wall / solid came from and its entity
    # type ("LINE", "LWPOLYLINE", "HATCH", "LINE in INSERT" for a block member named by its INSERT);
    # "" where none is known
    wall_handles: np.ndarray | None = None
    solid_handles: np.ndarray | None = None
    wall_types: np.ndarray | None = None
    solid_types: np.ndarray | None = None
    # DXF drawings: the principal directions of the wall linework as drawn, degrees in [0, 90)
    # (before double wall lines became filled wall bands); None: taken from ``walls``
    wall_directions_deg: tuple[float, ...] | None = None

    def principal_wall_directions_deg(self) -> list[float]:
        """Principal directions of the walls, degrees in [0, 90): as drawn where the importer
        recorded them (:attr:`wall_directions_deg`), else of the wall linework."""
        if self.wall_directions_deg is not None:
            return list(self.wall_directions_deg)
        return dominant_directions_deg(self.walls) if len(self.walls) else []

    def __post_init__(self) -> None:
        self.walls = _as_geometry_array(self.walls, "walls")
        self.solids = _as_geometry_array(self.solids, "solids")
        if self.wall_heights is None:
            self.wall_heights = np.tile(np.array(FULL_HEIGHT), (len(self.walls), 1))
        if self.solid_heights is None:
            self.solid_heights = np.tile(np.array(FULL_HEIGHT), (len(self.solids), 1))
        self.wall_heights = np.asarray(self.wall_heights, dtype=float).reshape(-1, 2)
        self.solid_heights = np.asarray(self.solid_heights, dtype=float).reshape(-1, 2)
        if self.wall_layers is None:
            self.wall_layers = np.full(len(self.walls), "", dtype=object)
        if self.solid_layers is None:
            self.solid_layers = np.full(len(self.solids), "", dtype=object)
        self.wall_layers = np.asarray(self.wall_layers, dtype=object).reshape(-1)
        self.solid_layers = np.asarray(self.solid_layers, dtype=object).reshape(-1)
        if len(self.wall_heights) != len(self.walls) or len(self.solid_heights) != len(self.solids) \
                or len(self.wall_layers) != len(self.walls) or len(self.solid_layers) != len(self.solids):
            raise ValueError("heights and layers must have one entry per obstacle")
        for name, n in (("wall_handles", len(self.walls)), ("solid_handles", len(self.solids)),
                        ("wall_types", len(self.walls)), ("solid_types", len(self.solids))):
            value = getattr(self, name)
            if value is not None:
                value = np.asarray(value, dtype=object).reshape(-1)
                if len(value) != n:
                    raise ValueError(f"{name} must have one entry per obstacle")
                setattr(self, name, value)

    # -- construction -------------------------------------------------------------
    @classmethod
    def from_geometries(cls, walls=(), solids=(), *, origin=(0.0, 0.0), **kw) -> Plan:
        """A plan from shapely geometries given in the *drawing* frame (metres).

        Lines and polygon rings in ``walls`` become linework; polygons in ``solids``
        become filled obstacles. ``origin`` is subtracted to form the local frame.
        """
        ox, oy = origin
        shift = lambda g: shapely.transform(g, lambda c: c - np.array([ox, oy]))  # noqa: E731
        wall_list = []
        for g in walls:
            if isinstance(g, shapely.Polygon):
                wall_list.extend([shift(g.exterior), *[shift(r) for r in g.interiors]])
            else:
                wall_list.append(shift(g))
        return cls(walls=wall_list, solids=[shift(g) for g in solids], origin=(ox, oy), **kw)

    # -- frames ---------------------------------------------------------------------
    def to_local(self, x: float, y: float) -> tuple[float, float]:
        """Drawing frame (m) → local frame (m)."""
        return x - self.origin[0], y - self.origin[1]

    def to_drawing(self, x: float, y: float) -> tuple[float, float]:
        """Local frame (m) → drawing frame (m)."""
        return x + self.origin[0], y + self.origin[1]

    def geometry_to_drawing(self, geom):
        """A shapely geometry in the local frame moved to the drawing frame (metres)."""
        o = np.array(self.origin)
        return shapely.transform(geom, lambda c: c + o)

    # -- summaries ------------------------------------------------------------------
    @property
    def obstacle_count(self) -> int:
        return len(self.walls) + len(self.solids)

    def local_bounds(self) -> tuple[float, float, float, float]:
        """Bounding box of all obstacles in the local frame, metres."""
        geoms = np.concatenate([self.walls, self.solids])
        if len(geoms) == 0:
            return (0.0, 0.0, 0.0, 0.0)
        b = shapely.bounds(geoms)
        return (float(np.nanmin(b[:, 0])), float(np.nanmin(b[:, 1])),
                float(np.nanmax(b[:, 2])), float(np.nanmax(b[:, 3])))

    @property
    def extent_m(self) -> list[float]:
        """[xmin, ymin, xmax, ymax] of the obstacles in the drawing frame, metres (from geometry)."""
        x0, y0, x1, y1 = self.local_bounds()
        ox, oy = self.origin
        return [x0 + ox, y0 + oy, x1 + ox, y1 + oy]

    def with_heights(self, wall_heights, solid_heights) -> Plan:
        """A copy of this plan with other obstacle height ranges ((N, 2) bottom, top, metres)."""
        from dataclasses import replace
        return replace(self, wall_heights=np.asarray(wall_heights, dtype=float),
                       solid_heights=np.asarray(solid_heights, dtype=float))

    def overhead_mask(self) -> tuple[np.ndarray, np.ndarray]:
        """Which walls / solids start above the floor (bottom > 0): overhead obstacles."""
        return self.wall_heights[:, 0] > 0, self.solid_heights[:, 0] > 0

    def edge_count(self) -> int:
        """Number of straight obstacle edges (linework segments plus polygon ring edges)."""
        n = 0
        if len(self.walls):
            n += int(np.sum(shapely.get_num_coordinates(self.walls) - 1))
        if len(self.solids):
            rings = shapely.get_rings(self.solids)          # exteriors and holes
            n += int(np.sum(shapely.get_num_coordinates(rings) - 1))
        return n
