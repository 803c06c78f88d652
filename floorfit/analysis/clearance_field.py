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
from scipy.spatial import cKDTree

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

    The levels where a join happens are found by galloping and bisection over the falling
    thresholds (:func:`_next_join_level`) rather than by labelling every level: whether some
    regions join only grows as the threshold falls, so the same levels are found.
    """
    dist = field.dist
    regions = [r for r, s in seeds.items() if len(s)]
    if len(regions) < 2:
        return []
    seed_d = {r: dist[seeds[r][:, 0], seeds[r][:, 1]] for r in regions}
    top = max(float(np.max(v)) for v in seed_d.values())
    uf = UnionFind(regions)
    find = uf.__getitem__
    levels = _levels(min(top, float(np.max(dist[np.isfinite(dist)])) if np.isfinite(dist).any() else top),
                     floor, field.cell)

    def groups_at(k):
        return _level_groups(dist, levels[k], regions, seeds, seed_d)

    events: list[JoinEvent] = []
    done, done_lab = -1, None           # the last level with joins, and its labels
    while (found := _next_join_level(groups_at, len(levels), done, done_lab, find)) is not None:
        done, (lab, groups), prev_lab = found
        t = levels[done]
        mask = dist >= t
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
        done_lab = lab
        if len({find(r) for r in regions}) == 1:
            break
    return events


def _level_groups(dist, t, regions, seeds, seed_d):
    """Labels of the floor at clearance ``t`` or more, and the regions whose seeds (those at ``t`` or
    more) each label holds: ``(lab, {label: [region, ...]})``."""
    lab, _ = ndimage.label(dist >= t, structure=_EIGHT)
    groups: dict[int, list[int]] = {}
    for r in regions:
        s = seeds[r]
        ok = seed_d[r] >= t
        if not ok.any():
            continue
        for L in np.unique(lab[s[ok, 0], s[ok, 1]]):
            groups.setdefault(int(L), []).append(r)
    return lab, groups


def _joins(groups, find) -> bool:
    """True when some label holds regions that are not yet joined."""
    return any(len({find(r) for r in rs}) > 1 for rs in groups.values())


def _next_join_level(groups_at, n: int, lo: int, lo_lab, find):
    """The first level after ``lo`` (of ``n``) where regions join: ``(k, groups_at(k), labels at k - 1)``
    (None for the labels when k is the first level), or None when none is left.

    ``lo_lab``: the labels at level ``lo`` (none joins there any more). Levels are probed at
    lo + 1, + 2, + 4, ... until one joins, then bisected.
    """
    step = 1
    while True:
        k = min(lo + step, n - 1)
        if k <= lo:
            return None
        at = groups_at(k)
        if _joins(at[1], find):
            hi, hi_at = k, at
            break
        lo, lo_lab = k, at[0]
        step *= 2
    while hi - lo > 1:
        mid = (lo + hi) // 2
        at = groups_at(mid)
        if _joins(at[1], find):
            hi, hi_at = mid, at
        else:
            lo, lo_lab = mid, at[0]
    return hi, hi_at, (lo_lab if lo >= 0 else None)


def _join_cell(lab, prev_lab, L, mask, dist, t, seeds, ra, rb, find, regions):
    """The cell of component L (at this level) nearest to both the ra-side and the rb-side of the previous level."""
    comp = lab == L
    # the distances are measured in the bounding box of the component only, for speed
    ys, xs = np.flatnonzero(comp.any(axis=1)), np.flatnonzero(comp.any(axis=0))
    win = (slice(ys[0], ys[-1] + 1), slice(xs[0], xs[-1] + 1))
    lab_sets = None if prev_lab is None else {root: _side_labels(prev_lab, seeds, regions, find, root)
                                              for root in (ra, rb)}
    overlap = lab_sets is None or bool(lab_sets[ra] & lab_sets[rb]) or not lab_sets[ra] or not lab_sets[rb]
    if overlap:
        # the sides were never apart on the raster (their floor overlaps): use their seed cells
        masks = [_seed_mask(comp.shape, seeds, regions, find, root) for root in (ra, rb)]
        present = all(m.any() for m in masks)
        sides = [m[win] for m in masks]
        new = comp[win]
    else:
        # the previous level's components holding each side's seeds (present: their labels are there)
        present = True
        sides = [np.isin(prev_lab[win], list(lab_sets[root])) for root in (ra, rb)]
        new = comp[win] & ~(prev_lab[win] > 0)
    if not (present and new.any()):
        iy, ix = np.unravel_index(np.argmax(np.where(comp, -dist, -np.inf)), dist.shape)
        return int(iy), int(ix), overlap
    iy, ix = _midway_cell(sides[0], sides[1], new)
    return int(iy + ys[0]), int(ix + xs[0]), overlap


def _side_labels(prev_lab, seeds, regions, find, root) -> set:
    """Labels of the previous level's components that hold seed cells of the regions joined under ``root``."""
    labels = set()
    for r in regions:
        if find(r) == root:
            s = seeds[r]
            v = prev_lab[s[:, 0], s[:, 1]]
            labels.update(int(x) for x in v[v > 0])
    return labels


def _seed_mask(shape, seeds, regions, find, root) -> np.ndarray:
    """Mask of the seed cells of the regions joined under ``root``."""
    m = np.zeros(shape, dtype=bool)
    for r in regions:
        if find(r) == root:
            m[seeds[r][:, 0], seeds[r][:, 1]] = True
    return m


def _midway_cell(side_a: np.ndarray, side_b: np.ndarray, new: np.ndarray) -> tuple[int, int]:
    """(iy, ix) in the window of the ``new`` cell on the shortest way between the two sides (masks
    of the same window), midway between them; distances in cells to the nearest side cell of the window.

    Among the new cells whose two distances add up to within 1.5 cells of the least sum, the one
    whose distances differ least; ties go to the first in row-major order.
    """
    cells = np.nonzero(new)
    da = _distances_at(side_a, cells)
    db = _distances_at(side_b, cells)
    total = da + db
    score = np.where(total <= np.min(total) + 1.5, np.abs(da - db), np.inf)
    j = int(np.argmin(score))
    return int(cells[0][j]), int(cells[1][j])


#: :func:`_distances_at` measures with a k-d tree of the side's edge cells when the cells asked
#: for are fewer than this fraction of the window, and with a distance transform of the window otherwise.
TREE_MAX_FRACTION = 0.125


def _distances_at(side: np.ndarray, cells: tuple[np.ndarray, np.ndarray]) -> np.ndarray:
    """Euclidean distance (cells) from each of ``cells`` ((iy, ix) arrays) to the nearest ``True``
    cell of ``side``: ``ndimage.distance_transform_edt(~side)`` at those cells (an exact transform).

    For a few cells, the same values from a k-d tree of the side's edge cells (those with a
    4-neighbour in the window outside the side: the nearest side cell of a cell outside the side is
    always one); both are the square root of the same whole squared distance. A side with no cell
    in the window is measured by the transform, whatever it gives.
    """
    if len(cells[0]) >= TREE_MAX_FRACTION * side.size or not side.any():
        return ndimage.distance_transform_edt(~side)[cells]
    d = np.zeros(len(cells[0]))
    edge = _edge_cells(side)
    out = ~side[cells]          # cells in the side are at distance 0
    if len(edge) and out.any():
        d[out] = cKDTree(edge).query(np.c_[cells[0][out], cells[1][out]])[0]
    return d


def _edge_cells(side: np.ndarray) -> np.ndarray:
    """(iy, ix) rows of the ``True`` cells of ``side`` with a 4-neighbour in the array that is ``False``
    (found in the side's bounding box grown by one cell)."""
    ys, xs = np.flatnonzero(side.any(axis=1)), np.flatnonzero(side.any(axis=0))
    y0, x0 = max(ys[0] - 1, 0), max(xs[0] - 1, 0)
    box = side[y0:ys[-1] + 2, x0:xs[-1] + 2]
    inner = box.copy()
    inner[1:, :] &= box[:-1, :]
    inner[:-1, :] &= box[1:, :]
    inner[:, 1:] &= box[:, :-1]
    inner[:, :-1] &= box[:, 1:]
    return np.argwhere(box & ~inner) + (y0, x0)
