"""The tight stage's fast paths give the same answers as the direct computations they replace."""

import math

import numpy as np
import pytest
import shapely
import shapely.ops
from scipy import ndimage
from shapely.geometry import Point, Polygon

import floorfit as ff
from floorfit.analysis import clearance_field as cfield
from floorfit.analysis.clearance_field import _distances_at, _midway_cell
from floorfit.analysis.passages import ObstacleIndex, narrowest_width_near
from floorfit.analysis.tight import GROWN_MAX_STEP_DEG, grown_step_deg
from floorfit.cspace.headings import arc_deg, make_heading_cells
from floorfit.cspace.slices import build_slices
from floorfit.plan.model import Plan


def _scan_indices(cells, h):
    """The heading lookup by measuring every slice (what indices_of did before the binary search)."""
    d = np.abs(arc_deg(cells.headings[None, :], np.asarray(h, dtype=float)[:, None]))
    return np.argmin(d, axis=1)


CELL_SETS = [
    make_heading_cells(1.0, [90.0, 33.3]),
    make_heading_cells(4.0, [0.0, 90.0, 180.0, 270.0, 12.5]),
    make_heading_cells(45.0),
    make_heading_cells(7.0),              # 360 / 7 is not whole: uneven last gap
    make_heading_cells(5.0, [179.95, -179.95]),
    make_heading_cells(0.0, only=[30.0]),
    make_heading_cells(0.0, only=[30.0, -150.0]),
]


@pytest.mark.parametrize("cells", CELL_SETS)
def test_heading_lookup_matches_scan_on_random_and_boundary_headings(cells):
    rng = np.random.default_rng(7)
    hs = cells.headings
    bounds = np.concatenate([hs - cells.below, hs + cells.above])      # cell boundaries (ties)
    near = np.concatenate([np.nextafter(bounds, np.inf), np.nextafter(bounds, -np.inf)])
    h = np.concatenate([rng.uniform(-720, 720, 5000), hs, hs + 360.0, hs - 720.0, bounds, bounds + 360.0,
                        near, [-180.0, 180.0, 0.0, -0.0, 179.99999999999997, -180.00000000000003, 540.0,
                               1e5, -1e5, 3e7, 1e300, math.inf, -math.inf, math.nan]])
    with np.errstate(invalid="ignore"):      # the infinite headings: as before, no heading is nearer
        assert np.array_equal(cells.indices_of(h), _scan_indices(cells, h))
    assert all(cells.indices_of(h[:50])[i] == cells.index_of(float(h[i])) for i in range(50))


def _room_with_racks() -> Plan:
    outer = shapely.box(0, 0, 10, 6)
    racks = [shapely.box(2, 1, 2.4, 4.5), shapely.box(5, 1.5, 5.3, 6), shapely.box(7.5, 0, 8, 3.2)]
    return Plan.from_geometries(walls=[outer], solids=racks)


def test_are_free_matches_a_query_per_pose():
    plan = _room_with_racks()
    slices = build_slices(plan, ff.rectangle_vehicle(0.9, 0.6), heading_step_deg=15.0)
    rng = np.random.default_rng(3)
    poses = np.c_[rng.uniform(-0.5, 10.5, 600), rng.uniform(-0.5, 6.5, 600), rng.uniform(-400, 400, 600)]
    expect = [len(slices.tree(slices.cells.index_of(h)).query(Point(x, y), predicate="intersects")) > 0
              for x, y, h in poses]
    free = slices.are_free(poses)
    assert free.tolist() == expect
    assert 0 < free.sum() < len(poses)
    assert slices.are_free(np.zeros((0, 3))).shape == (0,)


def _random_masks(rng, shape, p):
    return rng.random(shape) < p


@pytest.mark.parametrize("p_side", [0.0005, 0.01, 0.2, 0.9])
def test_distances_at_equal_the_distance_transform(p_side):
    rng = np.random.default_rng(11)
    for _ in range(5):
        side = _random_masks(rng, (120, 170), p_side)
        side[rng.integers(0, 120), rng.integers(0, 170)] = True
        edt = ndimage.distance_transform_edt(~side)
        for frac in (0.01, 0.05, 0.5):     # few cells: k-d tree; many: the transform itself
            cells = np.nonzero(_random_masks(rng, side.shape, frac))
            assert np.array_equal(_distances_at(side, cells), edt[cells])


def test_distances_at_a_side_filling_the_window_is_zero():
    side = np.ones((40, 50), dtype=bool)
    cells = (np.array([0, 5, 39]), np.array([0, 7, 49]))
    assert _distances_at(side, cells).tolist() == [0.0, 0.0, 0.0]


def _midway_by_transform(side_a, side_b, new):
    """The join cell as it was found before: distance transforms of the whole window."""
    da = ndimage.distance_transform_edt(~side_a)
    db = ndimage.distance_transform_edt(~side_b)
    total = da + db
    score = np.where(new & (total <= np.min(np.where(new, total, np.inf)) + 1.5), np.abs(da - db), np.inf)
    return tuple(int(v) for v in np.unravel_index(np.argmin(score), score.shape))


def test_midway_cell_matches_the_whole_window_transform():
    rng = np.random.default_rng(5)
    for trial in range(40):
        shape = (60 + trial, 90)
        a = np.zeros(shape, dtype=bool)
        b = np.zeros(shape, dtype=bool)
        a[:, : 20 + trial % 7] = True                  # two floor regions with a band between them
        b[:, 60 - trial % 5:] = True
        a &= rng.random(shape) < 0.97
        b &= rng.random(shape) < 0.97
        new = ~(a | b) & (rng.random(shape) < (0.05 if trial % 2 else 0.6))
        if trial % 4 == 3:                             # sides given as a few seed cells inside the new cells
            a = np.zeros(shape, dtype=bool)
            b = np.zeros(shape, dtype=bool)
            a[3, 4] = b[shape[0] - 5, 80] = True
            new = new | a | b
        assert _midway_cell(a, b, new) == _midway_by_transform(a, b, new)


def _width_at_loop(index, x, y, reach=50.0):
    """ObstacleIndex.width_at as it was: every candidate obstacle clipped, one at a time."""
    d1, q1 = index.nearest(x, y)
    if not math.isfinite(d1) or d1 == 0:
        return d1 * 2 if math.isfinite(d1) else math.inf, q1, q1
    u = (q1 - np.array([x, y])) / d1
    n = np.array([-u[1], u[0]])
    c = np.array([x, y])
    far = Polygon([c + n * reach, c + n * reach - u * reach, c - n * reach - u * reach, c - n * reach])
    best, q2, pt = math.inf, c, Point(x, y)
    for i in index.tree.query(far, predicate="intersects"):
        clipped = index.geoms[i].intersection(far)
        if clipped.is_empty:
            continue
        d = clipped.distance(pt)
        if d < best:
            best = d
            qq = shapely.ops.nearest_points(clipped, pt)[0]
            q2 = np.array([qq.x, qq.y])
    return d1 + best, q1, q2


def _narrowest_loop(index, x, y, radius, n=7):
    best = (math.inf, x, y, None, None)
    for dx in np.linspace(-radius, radius, n):
        for dy in np.linspace(-radius, radius, n):
            if dx * dx + dy * dy > radius * radius + 1e-12:
                continue
            px, py = x + dx, y + dy
            d1, _ = index.nearest(px, py)
            w, q1, q2 = _width_at_loop(index, px, py)
            if d1 < 0.45 * w:
                continue
            if w < best[0]:
                best = (w, px, py, q1, q2)
    if best[3] is None:
        w, q1, q2 = _width_at_loop(index, x, y)
        best = (w, x, y, q1, q2)
    return best


def _same(a, b):
    return all((u is None and v is None) or (u is not None and v is not None and
                                             np.array_equal(np.asarray(u, float), np.asarray(v, float)))
               for u, v in zip(a, b))


def test_widths_match_clipping_every_obstacle():
    plan = _room_with_racks()
    index = ObstacleIndex(plan.walls, plan.solids)
    rng = np.random.default_rng(2)
    points = [(2.2 + 1.3, 2.5), (6.4, 4.0), (7.75, 4.6), (1.0, 1.0)] + \
        [tuple(p) for p in rng.uniform((0.1, 0.1), (9.9, 5.9), (60, 2))]
    for x, y in points:
        assert _same(index.width_at(x, y), _width_at_loop(index, x, y))
        for r in (0.15, 0.3):
            assert _same(narrowest_width_near(index, x, y, radius=r), _narrowest_loop(index, x, y, r))
    # midway between two racks (x = 2.4 and x = 5.0): the clear width between them
    assert index.width_at(3.7, 3.0)[0] == pytest.approx(2.6, abs=1e-9)


def test_nearest_many_matches_nearest():
    plan = _room_with_racks()
    index = ObstacleIndex(plan.walls, plan.solids)
    xs, ys = np.linspace(0.2, 9.8, 37), np.linspace(5.8, 0.3, 37)
    d, q = index.nearest_many(xs, ys)
    for i in range(len(xs)):
        di, qi = index.nearest(xs[i], ys[i])
        assert d[i] == di and np.array_equal(q[i], qi)
    empty = ObstacleIndex([], [])
    d, q = empty.nearest_many([1.0], [2.0])
    assert d.tolist() == [math.inf] and q.tolist() == [[1.0, 2.0]]


def test_grown_step_is_coarser_but_capped():
    assert grown_step_deg(1.0) == 4.0
    assert grown_step_deg(0.5) == 2.0
    assert grown_step_deg(2.5) == GROWN_MAX_STEP_DEG
    assert grown_step_deg(10.0) == 10.0          # a coarse check keeps its own step


def _join_events_every_level(field, seeds, floor):
    """join_events as it was: every level labelled in turn (the reference for the level search)."""
    from networkx.utils import UnionFind

    dist = field.dist
    regions = [r for r, s in seeds.items() if len(s)]
    if len(regions) < 2:
        return []
    seed_d = {r: dist[seeds[r][:, 0], seeds[r][:, 1]] for r in regions}
    top = max(float(np.max(v)) for v in seed_d.values())
    uf = UnionFind(regions)
    find = uf.__getitem__
    events = []
    prev_lab = None
    for t in cfield._levels(min(top, float(np.max(dist[np.isfinite(dist)]))), floor, field.cell):
        mask = dist >= t
        lab, _ = ndimage.label(mask, structure=np.ones((3, 3), dtype=bool))
        groups = {}
        for r in regions:
            ok = seed_d[r] >= t
            for L in np.unique(lab[seeds[r][ok, 0], seeds[r][ok, 1]]):
                groups.setdefault(int(L), []).append(r)
        for L, rs in groups.items():
            roots = sorted({find(r) for r in rs})
            for other in roots[1:]:
                iy, ix, overlap = cfield._join_cell(lab, prev_lab, L, mask, dist, t, seeds, roots[0], other, find,
                                                    regions)
                events.append(cfield.JoinEvent(float(t), roots[0], other, iy, ix, overlap))
                uf.union(roots[0], other)
        prev_lab = lab
        if len({find(r) for r in regions}) == 1:
            break
    return events


@pytest.mark.parametrize("seed", range(6))
def test_join_level_search_matches_labelling_every_level(seed):
    rng = np.random.default_rng(seed)
    boxes = [shapely.box(x, y, x + w, y + h) for x, y, w, h in
             zip(rng.uniform(0, 18, 25), rng.uniform(0, 9, 25), rng.uniform(0.2, 3, 25), rng.uniform(0.2, 3, 25))]
    field = cfield.clearance_field([shapely.box(0, 0, 20, 10).exterior], boxes, (-0.5, -0.5, 20.5, 10.5), 0.1)
    free = np.argwhere(field.dist > 0.3)
    seeds = {r: free[rng.choice(len(free), size=int(rng.integers(1, 4)))] for r in range(int(rng.integers(2, 12)))}
    for floor in (0.15, 0.4):
        got = cfield.join_events(field, seeds, floor)
        assert [vars(e) for e in got] == [vars(e) for e in _join_events_every_level(field, seeds, floor)]
    assert cfield.join_events(field, {0: seeds[0]}, 0.15) == []
