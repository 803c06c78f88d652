"""Coarse routes settled by their own bounds: unreachable on the coarse optimistic slices, or found
after refining the heading step only near the pinch points.

Oracles: the paths are re-checked by dense sampling against the exact obstacles
(floorfit.testing.assert_path_clear); the answers are compared with those of the default step
everywhere (an explicit heading step skips the coarse try), which is what the route answered before.
"""

import numpy as np
import pytest
import shapely
from shapely.geometry import box

import floorfit as ff
from floorfit.cspace.headings import make_heading_cells, refine_cells
from floorfit.cspace.slices import build_slices, choose_headings, default_step
from floorfit.motion.pinches import pinch_headings
from floorfit.motion.route_query import coarse_cells, find_route
from floorfit.plan.model import Plan
from floorfit.testing import assert_path_clear

OMNI = ff.rectangle_vehicle(0.6, 0.8, mode="omni", name="omni base")


def _rooms(door_m: float | None) -> Plan:
    """Two 6 × 5 m rooms side by side; the 0.2 m wall between them has a door ``door_m`` wide
    centred at y = 2.5 (None: no door)."""
    solids = [box(-0.2, -0.2, 12.2, 0), box(-0.2, 5, 12.2, 5.2), box(-0.2, 0, 0, 5), box(12, 0, 12.2, 5)]
    if door_m is None:
        solids.append(box(6, 0, 6.2, 5))
    else:
        solids += [box(6, 0, 6.2, 2.5 - door_m / 2), box(6, 2.5 + door_m / 2, 6.2, 5)]
    return Plan.from_geometries(walls=[], solids=solids, origin=(0.0, 0.0))


def test_refined_cells_keep_every_coarse_heading_and_add_the_grid_near_the_pinches():
    coarse = make_heading_cells(8.0, [33.0])
    fine = refine_cells(coarse, 2.0, [90.0, -179.0], 16.0)
    assert set(np.round(coarse.headings, 9)) <= set(np.round(fine.headings, 9))
    added = np.setdiff1d(np.round(fine.headings, 9), np.round(coarse.headings, 9))
    # on the 2° grid from -180°, within 16° of 90° or of -179° (across the ±180° seam)
    assert len(added) and np.allclose((added + 180.0) / 2.0, np.round((added + 180.0) / 2.0))
    near = np.minimum(np.abs(added - 90.0), np.minimum(np.abs(added + 179.0), np.abs(added - 181.0)))
    assert np.all(near <= 16.0 + 1e-9)
    # cells tile the circle: each ends where the next begins, and every heading's cell holds it
    ends = fine.headings + fine.above
    begins = np.roll(fine.headings - fine.below, -1)
    assert np.allclose((ends - begins + 180.0) % 360.0 - 180.0, 0.0, atol=1e-9)
    for h in np.linspace(-179.9, 179.9, 997):
        k = fine.index_of(h)
        d = (h - fine.headings[k] + 180.0) % 360.0 - 180.0
        assert -fine.below[k] - 1e-9 <= d <= fine.above[k] + 1e-9


def test_slices_of_a_refined_set_reuse_the_coarse_ones_exactly():
    plan = _rooms(0.64)
    coarse = build_slices(plan, OMNI, cells=coarse_cells(plan, OMNI))
    cells = refine_cells(coarse.cells, default_step(plan, OMNI), [0.0], 16.0)
    kept = build_slices(plan, OMNI, cells=cells, reuse=coarse)
    fresh = build_slices(plan, OMNI, cells=cells)
    assert kept.kept > 0 and fresh.kept == 0 and kept.kept < len(cells)
    for a, b in zip(kept.components, fresh.components):
        assert list(shapely.to_wkb(a)) == list(shapely.to_wkb(b))


def test_a_door_the_coarse_step_cannot_prove_is_passed_after_refining_near_it():
    # 0.64 m door, 0.6 m wide base: the coarse sound slices (8°) hold the base grown by 67 mm and
    # close the door; the default step's (2°) pass it; so do the slices refined near heading 0
    plan = _rooms(0.64)
    start, goal = (2.0, 2.5, 0.0), (10.0, 2.5, 0.0)
    coarse = build_slices(plan, OMNI, cells=coarse_cells(plan, OMNI, (0.0, 0.0)))
    assert find_route(plan, OMNI, start, goal, slices=coarse, check_optimistic=False).status == "unreachable"
    got = find_route(plan, OMNI, start, goal)
    step = default_step(plan, OMNI)
    everywhere = find_route(plan, OMNI, start, goal, heading_step_deg=step)
    assert got.status == everywhere.status == "reachable"
    assert any("refined to" in n and "pinch points" in n for n in got.notes)
    assert got.settings["headings"] < len(choose_headings(plan, OMNI, extra_headings=(0.0, 0.0)))
    assert_path_clear(plan, OMNI, got.path)
    # the stated tolerance is the largest over the slices used: the coarse one
    assert got.tolerance_m == pytest.approx(coarse.tolerance_m)


def test_pinch_headings_are_where_the_optimistic_route_leaves_the_sound_free_space():
    plan = _rooms(0.64)
    coarse = build_slices(plan, OMNI, cells=coarse_cells(plan, OMNI, (0.0, 0.0)))
    straight = np.array([[2.0, 2.5, 0.0], [10.0, 2.5, 0.0]])
    h = pinch_headings(coarse, straight)
    assert len(h) and np.all(np.abs(h) < 1e-9)          # at heading 0, in the doorway only
    assert not len(pinch_headings(coarse, np.array([[2.0, 2.5, 0.0], [4.0, 2.5, 0.0]])))


def test_rooms_without_a_door_are_unreachable_on_the_coarse_bounds_alone():
    plan = _rooms(None)
    start, goal = (2.0, 2.5, 0.0), (10.0, 2.5, 0.0)
    got = find_route(plan, OMNI, start, goal)
    everywhere = find_route(plan, OMNI, start, goal, heading_step_deg=default_step(plan, OMNI))
    assert got.status == everywhere.status == "unreachable"
    assert any("not even the vehicle shrunk" in n for n in got.notes)
    assert got.settings["heading_step_deg"] > everywhere.settings["heading_step_deg"]


def test_route_command_says_which_slices_were_kept_from_the_coarse_ones(tmp_path, capsys):
    import re

    import ezdxf
    from test_reachability_reference import moretti_length

    from floorfit.cli import main

    # a drawn L-shaped corridor (1.5 m then 2.0 m wide) and an omni base 0.1 m shorter than the
    # longest 0.6 m wide rectangle that turns it (Moretti's closed form, as in test_reachability_reference)
    a, b, arm = 1.5, 2.0, 6.0
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 6
    doc.modelspace().add_lwpolyline([(-arm, 0), (b, 0), (b, a + arm), (0, a + arm), (0, a), (-arm, a)], close=True,
                                    dxfattribs={"layer": "A-WALL"})
    doc.saveas(tmp_path / "corner.dxf")
    length = moretti_length(a, b, 0.6) - 0.1
    (tmp_path / "couch.toml").write_text(f'name = "couch"\n[footprint]\nwidth = 0.6\nlength = {length:.4f}\n'
                                         f'[motion]\nmode = "omni"\n')
    code = main(["route", str(tmp_path / "corner.dxf"), "--vehicle", str(tmp_path / "couch.toml"),
                 "--start=-4,0.75,0", "--goal=1,5.5,90", "--no-cache", "--quiet"])
    out = capsys.readouterr().out
    assert code == 0 and "couch: reachable" in out and "refined to" in out
    built, kept = map(int, re.search(r"slices: (\d+) built, (\d+) kept from the coarse slices", out).groups())
    headings = int(re.search(r"heading step [\d.]+°, (\d+) slices", out).group(1))
    assert built > 0 and kept > 0 and built + kept <= headings
