"""A raster of floor clearance and the places where regions of floor first join.

The floor is sampled on a grid of square cells (local frame, metres). Obstacle linework
is marked conservatively (every cell a segment passes through), and
``scipy.ndimage.distance_transform_edt`` gives, per cell centre, the distance to the
nearest marked cell centre. The true clearance at a cell centre differs from that value
by at most half a cell diagonal; callers refine numbers with exact geometry.

:func:`join_events` sweeps a falling clearance threshold and records when regions of
floor (given by seed cells) first join: the maximum spanning tree of the regions under
"widest connecting path" (a bottleneck/maximin path problem), and where each join
happens. A join at threshold t means the widest path between the two regions is about
2·t wide at its narrowest point.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from networkx.utils import UnionFind
from scipy import ndimage

__all__ = ["ClearanceField", "clearance_field", "JoinEvent", "join_events", "choose_cell_size"]

_EIGHT = np.ones((3, 3), dtype=bool)
#: Largest number of raster cells before the cell size is coarsened.
MAX_CELLS = 3_000_000


def choose_cell_size(bounds, target: float = 0.05, max_cells: int = MAX_CELLS) -> float:
    """Cell size (metres): ``target`` unless the area needs coarser cells to stay under ``max_cells``."""
    x0, y0, x1, y1 = bounds
    area = max((x1 - x0) * (y1 - y0), 1e-9)
    return float(max(target, np.sqrt(area / max_cells)))


@dataclass
class ClearanceField:
    """``dist[iy, ix]``: clearance (metres) at the centre of cell (ix, iy),
    centre = (x0 + (ix+½)·cell, y0 + (iy+½)·cell)."""

    x0: float
    y0: float
    cell: float
    dist: np.ndarray
    blocked: np.ndarray

    @property
    def shape(self) -> tuple[int, int]:
        return self.dist.shape

    def centres(self):
        ny, nx = self.dist.shape
        xs = self.x0 + (np.arange(nx) + 0.5) * self.cell
        ys = self.y0 + (np.arange(ny) + 0.5) * self.cell
        return xs, ys

    def index_of(self, x, y):
        """(iy, ix) of the cells holding local points (clipped to the grid)."""
        ny, nx = self.dist.shape
        ix = np.clip(((np.asarray(x) - self.x0) / self.cell).astype(int), 0, nx - 1)
        iy = np.clip(((np.asarray(y) - self.y0) / self.cell).astype(int), 0, ny - 1)
        return iy, ix

    def centre_of(self, iy, ix):
        return self.x0 + (ix + 0.5) * self.cell, self.y0 + (iy + 0.5) * self.cell


def _mark_segments(mask: np.ndarray, segs: np.ndarray, x0: float, y0: float, cell: float) -> None:
    if not len(segs):
        return
    a, b = segs[:, 0], segs[:, 1]
    length = np.hypot(*(b - a).T)
    n = np.maximum(1, np.ceil(length / (cell / 4.0)).astype(int))
    total = int(n.sum())
    idx = np.repeat(np.arange(len(segs)), n + 1)
    t = np.concatenate([np.linspace(0, 1, k + 1) for k in n]) if total < 5_000_000 else None
    if t is None:  # very long linework: chunk to bound memory
        for i0 in range(0, len(segs), 10_000):
            _mark_segments(mask, segs[i0:i0 + 10_000], x0, y0, cell)
        return
    pts = a[idx] + t[:, None] * (b[idx] - a[idx])
    ny, nx = mask.shape
    ix = np.floor((pts[:, 0] - x0) / cell).astype(int)
    iy = np.floor((pts[:, 1] - y0) / cell).astype(int)
    ok = (ix >= 0) & (ix < nx) & (iy >= 0) & (iy < ny)
    mask[iy[ok], ix[ok]] = True


def clearance_field(walls, solids, bounds, cell: float) -> ClearanceField:
    """Rasterise obstacles (local frame) over ``bounds`` and compute the clearance per cell (metres)."""
    x0, y0, x1, y1 = bounds
    nx = max(1, int(np.ceil((x1 - x0) / cell)))
    ny = max(1, int(np.ceil((y1 - y0) / cell)))
    mask = np.zeros((ny, nx), dtype=bool)
    geoms = [g for g in (list(walls) + list(shapely.boundary(np.asarray(solids, dtype=object))
                                              if len(solids) else [])) if g is not None and not g.is_empty]
    if geoms:
        coords, idx = shapely.get_coordinates(shapely.get_parts(np.asarray(geoms, dtype=object)), return_index=True)
        same = idx[1:] == idx[:-1]
        segs = np.stack([coords[:-1][same], coords[1:][same]], axis=1)
        _mark_segments(mask, segs, x0, y0, cell)
    # the outside of the grid counts as open floor, not as an obstacle
    dist = ndimage.distance_transform_edt(~mask) * cell if mask.any() else np.full(mask.shape, np.inf)
    return ClearanceField(x0, y0, cell, dist, mask)


@dataclass
class JoinEvent:
    """Two groups of regions first connect at threshold ``level`` (metres of clearance) near cell ``(iy, ix)``."""

    level: float
    a: int
    b: int
    iy: int
    ix: int
    overlap: bool = False     # the two sides were never apart on the raster (e.g. an overhead block)


def _levels(top: float, floor: float, cell: float) -> np.ndarray:
    levels = []
    t = top
    while t > floor:
        levels.append(t)
        t = min(t - cell / 2.0, t * 0.97)
    levels.append(floor)
    return np.asarray(levels)


def join_events(field: ClearanceField, seeds: dict[int, np.ndarray], floor: float) -> list[JoinEvent]:
    """Maximum spanning tree of seeded regions under widest-path connectivity, down to clearance ``floor``.

    ``seeds[r]`` is an (M, 2) array of (iy, ix) cells of region r. Regions whose seeds
    only connect below ``floor`` are never joined (not connected for that clearance).
    """
    dist = field.dist
    regions = [r for r, s in seeds.items() if len(s)]
    if len(regions) < 2:
        return []
    seed_d = {r: dist[seeds[r][:, 0], seeds[r][:, 1]] for r in regions}
    top = max(float(np.max(v)) for v in seed_d.values())
    uf = UnionFind(regions)
    find = uf.__getitem__

    events: list[JoinEvent] = []
    prev_lab = None
    for t in _levels(min(top, float(np.max(dist[np.isfinite(dist)])) if np.isfinite(dist).any() else top),
                     floor, field.cell):
        mask = dist >= t
        lab, _ = ndimage.label(mask, structure=_EIGHT)
        groups: dict[int, list[int]] = {}
        for r in regions:
            s = seeds[r]
            ok = seed_d[r] >= t
            if not ok.any():
                continue
            for L in np.unique(lab[s[ok, 0], s[ok, 1]]):
                groups.setdefault(int(L), []).append(r)
        for L, rs in groups.items():
            roots = sorted({find(r) for r in rs})
            if len(roots) < 2:
                continue
            # where do they join? the new cell closest to both sides
            for other in roots[1:]:
                iy, ix, overlap = _join_cell(lab, prev_lab, L, mask, dist, t, seeds, roots[0], other, find,
                                             regions)
                events.append(JoinEvent(float(t), roots[0], other, iy, ix, overlap))
                uf.union(roots[0], other)
        prev_lab = lab
        if len({find(r) for r in regions}) == 1:
            break
    return events


def _join_cell(lab, prev_lab, L, mask, dist, t, seeds, ra, rb, find, regions):
    """The cell of component L (at this level) nearest to both the ra-side and the rb-side of the previous level."""
    comp = lab == L
    side = {}
    overlap = prev_lab is None
    if not overlap:
        lab_sets = {}
        for root in (ra, rb):
            members = [r for r in regions if find(r) == root]
            labels = set()
            for r in members:
                s = seeds[r]
                v = prev_lab[s[:, 0], s[:, 1]]
                labels.update(int(x) for x in v[v > 0])
            lab_sets[root] = labels
            side[root] = np.isin(prev_lab, list(labels)) if labels else np.zeros_like(comp)
        overlap = bool(lab_sets[ra] & lab_sets[rb]) or not lab_sets[ra] or not lab_sets[rb]
    if overlap:
        # the sides were never apart on the raster (their floor overlaps): use their seed cells
        for root in (ra, rb):
            m = np.zeros_like(comp)
            for r in regions:
                if find(r) == root:
                    m[seeds[r][:, 0], seeds[r][:, 1]] = True
            side[root] = m
    # restrict the distance computation to the bounding box of the component, for speed
    ys, xs = np.nonzero(comp)
    y0, y1, x0, x1 = ys.min(), ys.max() + 1, xs.min(), xs.max() + 1
    new = comp[y0:y1, x0:x1] if overlap else (comp & ~(prev_lab > 0))[y0:y1, x0:x1]
    da = ndimage.distance_transform_edt(~side[ra][y0:y1, x0:x1]) if side[ra].any() else None
    db = ndimage.distance_transform_edt(~side[rb][y0:y1, x0:x1]) if side[rb].any() else None
    if da is None or db is None or not new.any():
        iy, ix = np.unravel_index(np.argmax(np.where(comp, -dist, -np.inf)), dist.shape)
        return int(iy), int(ix), overlap
    total = da + db
    # among the cells on the shortest way between the sides, the one midway between them
    score = np.where(new & (total <= np.min(np.where(new, total, np.inf)) + 1.5), np.abs(da - db), np.inf)
    iy, ix = np.unravel_index(np.argmin(score), score.shape)
    return int(iy + y0), int(ix + x0), overlap
