"""Slices updated after a local change equal slices rebuilt from scratch.

The comparison is exact up to overlay rounding: per slice, the free space of
``update_slices`` and of a full ``build_slices`` differ by less than 1e-9 m² (area of the
symmetric difference), and they hold the same number of components.
"""

import sys
from pathlib import Path

import networkx as nx
import numpy as np
import pytest
import shapely
from shapely.geometry import Polygon

import floorfit as ff
from floorfit.cspace import incremental
from floorfit.cspace.headings import make_heading_cells
from floorfit.cspace.incremental import plan_changes, update_slices
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.slicememo import _coordinates, active_memo, sharing
from floorfit.cspace.slices import build_slices
from floorfit.plan.model import Plan

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))
from benchmarks.warehouse import FOOTPRINTS, moved_row, warehouse  # noqa: E402  (the benchmark's site generator)

CELLS = make_heading_cells(30.0)      # 12 headings


def _circle(cx, cy, r, n=16):
    t = np.linspace(0, 2 * np.pi, n, endpoint=False)
    return Polygon(np.c_[cx + r * np.cos(t), cy + r * np.sin(t)])


def as_plan(site, origin=(0.0, 0.0)) -> Plan:
    """Generator geometry as a plan (drawing frame = generator frame; invented data)."""
    walls = [shapely.LineString(r + r[:1]) for r in site.walls]
    solids = [Polygon(r) for r in site.rack_rings()]
    solids += [shapely.box(cx - h, cy - h, cx + h, cy + h) for cx, cy, h in site.flue_columns]
    solids += [_circle(cx, cy, r) for cx, cy, r in site.round_columns]
    solids += [Polygon(m) for m in site.machines]
    return Plan.from_geometries(walls=walls, solids=solids, origin=origin)


def vehicle(name="rect"):
    spec = FOOTPRINTS[name]
    return ff.vehicle_from_outline(spec["outline"], name=name, margin=spec["margin"], mode=spec["mode"])


@pytest.fixture(scope="module")
def sites():
    site = warehouse(40.0, 24.0)
    moved, _ = moved_row(site, 0.5)
    return site, moved


def assert_same_free_space(a, b):
    assert len(a) == len(b)
    for k in range(len(a)):
        fa, fb = a.free(k), b.free(k)
        assert shapely.symmetric_difference(fa, fb).area < 1e-9, k
        assert len(a.components[k]) == len(b.components[k]), k
        # components come in the same (canonical) order, so roadmap nodes (k, i) match too
        assert np.allclose(shapely.bounds(a.components[k]), shapely.bounds(b.components[k]), atol=1e-9), k


@pytest.mark.parametrize("fp, bound", [("rect", "sound"), ("rect", "optimistic"), ("tugcart", "sound")])
def test_moved_rack_row_update_equals_full_rebuild(sites, fp, bound):
    site, moved = sites
    old_plan, new_plan = as_plan(site), as_plan(moved)
    veh = vehicle(fp)
    old = build_slices(old_plan, veh, cells=CELLS, bound=bound)
    updated = update_slices(old, new_plan)
    full = build_slices(new_plan, veh, cells=CELLS, bound=bound)
    assert updated.plan is new_plan and updated.bound == bound
    assert updated.tolerance_m == full.tolerance_m
    assert_same_free_space(updated, full)
    # the move did change the free space (the test is not vacuous)
    assert max(shapely.symmetric_difference(old.free(k), full.free(k)).area for k in range(len(CELLS))) > 0.1


def test_changes_found_are_the_moved_row(sites):
    site, moved = sites
    ch = plan_changes(as_plan(site), as_plan(moved))
    old_row = next(r for r, m in zip(site.rows, moved.rows) if r != m)
    n_row = sum(1 for r in site.rack_rings() if old_row.x - 0.2 <= r[0][0] <= old_row.x + old_row.width + 0.2)
    assert len(ch.removed) == len(ch.added) >= n_row        # its bays, protectors, barriers (and flue columns)
    for x0, _, x1, _ in ch.bounds():
        assert old_row.x - 0.2 <= x0 and x1 <= old_row.x + old_row.width + 0.5 + 0.2


def test_unchanged_plan_keeps_every_slice(sites):
    site, _ = sites
    plan = as_plan(site)
    old = build_slices(plan, vehicle(), cells=CELLS)
    same = update_slices(old, as_plan(site))
    assert plan_changes(plan, as_plan(site)).empty
    for a, b in zip(old.components, same.components):
        assert list(a) == list(b)
    # a window without a change recomputes that window and gives the same free space
    x0, y0, x1, y1 = plan.local_bounds()
    windowed = update_slices(old, plan, ((x0 + x1) / 2 - 2, (y0 + y1) / 2 - 2, (x0 + x1) / 2 + 2, (y0 + y1) / 2 + 2))
    assert_same_free_space(windowed, old)


def test_removed_column_and_added_obstacle(sites):
    site, _ = sites
    plan = as_plan(site)
    veh = vehicle("round16")
    old = build_slices(plan, veh, cells=CELLS)
    solids = list(plan.solids)
    # drop one round column, add a pallet in the dock strip
    col = next(i for i, s in enumerate(solids) if len(s.exterior.coords) == 17)
    del solids[col]
    solids.append(shapely.box(12.0, 1.0, 13.2, 2.0))
    new = Plan(walls=plan.walls, solids=solids, origin=plan.origin)
    ch = plan_changes(plan, new)
    assert len(ch.removed) == 1 and len(ch.added) == 1
    assert_same_free_space(update_slices(old, new), build_slices(new, veh, cells=CELLS))


def test_other_frame_or_new_bounds_rebuild_in_full(sites):
    site, moved = sites
    veh = vehicle()
    old = build_slices(as_plan(site), veh, cells=CELLS)
    # another local frame: the result is in the new plan's frame and equals a full build there
    shifted = as_plan(moved, origin=(3.0, -2.0))
    assert_same_free_space(update_slices(old, shifted), build_slices(shifted, veh, cells=CELLS))
    # an obstacle outside the old bounds moves the slice domain
    p = as_plan(moved)
    x0, y0, x1, y1 = p.local_bounds()
    grown = Plan(walls=p.walls, solids=list(p.solids) + [shapely.box(x1 + 1, y0, x1 + 2, y0 + 1)], origin=p.origin)
    up = update_slices(old, grown)
    assert up.domain.bounds[2] > old.domain.bounds[2]
    assert_same_free_space(up, build_slices(grown, veh, cells=CELLS))


def test_closing_an_aisle_changes_reachability_like_a_full_rebuild():
    # a dead-simple hall: two rooms joined by a 2 m gap; moving a block into the gap cuts them apart
    hall = shapely.LineString([(0, 0), (20, 0), (20, 8), (0, 8), (0, 0)])
    wall = [shapely.box(9.8, 0, 10.2, 3.0), shapely.box(9.8, 5.0, 10.2, 8.0)]
    block_open = shapely.box(14.0, 3.2, 15.0, 4.8)
    block_shut = shapely.box(9.6, 2.9, 10.4, 5.1)
    open_plan = Plan.from_geometries(walls=[hall], solids=wall + [block_open])
    shut_plan = Plan.from_geometries(walls=[hall], solids=wall + [block_shut])
    veh = vehicle()
    old = build_slices(open_plan, veh, cells=CELLS)
    up = update_slices(old, shut_plan)
    full = build_slices(shut_plan, veh, cells=CELLS)
    assert_same_free_space(up, full)

    def joined(slices):
        G = build_roadmap(slices)
        a = slices.locate(4.0, 4.0, 0.0)
        b = slices.locate(16.0, 4.0, 0.0)
        return a is not None and b is not None and nx.has_path(G, a, b)

    assert joined(old) and not joined(up) and not joined(full)



def test_half_turn_twins_stay_shared_and_a_change_everywhere_rebuilds_in_full(sites, monkeypatch):
    site, moved = sites
    veh = ff.rectangle_vehicle(0.9, 0.62, margin=0.05)      # centred: h and h + 180° share a slice
    old = build_slices(as_plan(site), veh, cells=CELLS)
    assert old.twins is not None and (old.twins != np.arange(len(CELLS))).any()
    up = update_slices(old, as_plan(moved))
    assert np.array_equal(up.twins, old.twins)
    for k, t in enumerate(up.twins):
        assert list(map(shapely.to_wkb, up.components[k])) == list(map(shapely.to_wkb, up.components[int(t)]))
    assert_same_free_space(up, build_slices(as_plan(moved), veh, cells=CELLS))
    # every rack, column and machine 1 cm further east: the window around them is 27 % of the slice
    # domain here; above the share allowed the set is built afresh
    monkeypatch.setattr(incremental, "MAX_WINDOW_SHARE", 0.25)
    plan = as_plan(site)
    shifted = Plan(walls=plan.walls, solids=[shapely.affinity.translate(g, 0.01, 0.0) for g in plan.solids],
                   origin=plan.origin)
    full = build_slices(shifted, veh, cells=CELLS)
    again = update_slices(old, shifted)
    assert shapely.bounds(again.domain).tolist() == shapely.bounds(full.domain).tolist()
    for a, b in zip(again.components, full.components):
        assert list(map(shapely.to_wkb, a)) == list(map(shapely.to_wkb, b))       # bit for bit: the same build


def test_memo_returns_the_same_set_derives_a_successor_and_keeps_its_bases_longest():
    hall = shapely.LineString([(0, 0), (20, 0), (20, 8), (0, 8), (0, 0)])
    wall = [shapely.box(9.8, 0, 10.2, 3.0), shapely.box(9.8, 5.0, 10.2, 8.0)]
    before = Plan.from_geometries(walls=[hall], solids=wall)
    after = Plan.from_geometries(walls=[hall], solids=wall + [shapely.box(14.0, 3.2, 15.0, 4.8)])
    other = Plan.from_geometries(walls=[hall], solids=[shapely.box(4.0, 3.0, 5.0, 4.0)])
    veh, coarse = vehicle(), make_heading_cells(45.0)
    with sharing() as memo:
        memo.relate(before, after, update_slices)
        b = build_slices(before, veh, cells=CELLS)
        assert build_slices(before, veh, cells=CELLS) is b and memo.hits == 1
        b45 = build_slices(before, veh, cells=coarse)
        a = build_slices(after, veh, cells=CELLS)            # derived from b near the new block
        assert memo.derived == 1 and a.plan is after
        assert build_slices(after, veh, cells=CELLS) is a and len(memo) == 2    # b has served: dropped
        # room for two sets: a third pushes out the least recently used one that is no base (a, not b45)
        memo.max_coordinates = _coordinates(b45) + _coordinates(a)
        o = build_slices(other, veh, cells=coarse)
        assert build_slices(before, veh, cells=coarse) is b45 and len(memo) == 2
        memo.release(before, veh, coarse, "sound")           # a successor may still need it: kept
        memo.release(other, veh, coarse, "sound")
        assert len(memo) == 1 and build_slices(other, veh, cells=coarse) is not o
    assert active_memo() is None
    assert_same_free_space(a, build_slices(after, veh, cells=CELLS))        # outside: a full build
