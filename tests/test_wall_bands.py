"""Wall bands: double wall lines become filled bands only where that leaves the answer unchanged.

Synthetic drawings are written with ezdxf into tmp_path (metres); expected areas and counts
are computed by hand from the coordinates drawn. The real-plan test reads plan #1 of
../shared/plans-real in place and is skipped when it is absent.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import shapely

import floorfit.plan.dxf.wallbands as wallbands
from floorfit.plan.dxf.importer import import_drawing
from floorfit.plan.dxf.report import format_report, report_from_result
from tests.dxf_fixtures import new_drawing

PLANS = Path(__file__).parents[2] / "shared" / "plans-real"
PAVILION = PLANS / "yorikvanhavre__barcelona-pavillion__plan.dxf"


def _capped_wall(m, x0, x1, y0=0.0, thick=0.2, caps=(True, True), layer="A-WALL"):
    """A wall from x0 to x1 (metres) drawn as its two faces (LINEs) and, where asked, its end caps."""
    m.add_line((x0, y0), (x1, y0), dxfattribs={"layer": layer})
    m.add_line((x0, y0 + thick), (x1, y0 + thick), dxfattribs={"layer": layer})
    if caps[0]:
        m.add_line((x0, y0), (x0, y0 + thick), dxfattribs={"layer": layer})
    if caps[1]:
        m.add_line((x1, y0), (x1, y0 + thick), dxfattribs={"layer": layer})


def _import(tmp_path, draw, name="plan.dxf"):
    d = new_drawing("R2000", "m")
    draw(d.msp)
    path = d.save(tmp_path / name)
    return import_drawing(path)


def test_closed_double_line_wall_becomes_one_band(tmp_path):
    # a 4 m wall, 0.2 m thick: two faces and two caps enclose 4 × 0.2 = 0.8 m²
    result = _import(tmp_path, lambda m: _capped_wall(m, 0.0, 4.0))
    plan = result.plan
    assert len(plan.walls) == 0                      # all four lines replaced
    assert len(plan.solids) == 1
    assert plan.solids[0].area == pytest.approx(0.8, rel=1e-12)
    assert len(plan.solids[0].exterior.coords) == 5   # one rectangle
    assert plan.solid_layers[0] == "A-WALL"
    assert result.notes["wall-bands"] == 1
    assert result.notes["wall-band-lines"] == 4
    assert result.notes["wall-band-segments"] == 4
    assert result.notes["wall-band-edges"] == 4


def test_open_ended_double_line_stays_lines(tmp_path):
    # no caps: the strip between the faces is open at both ends (a vehicle could enter it)
    result = _import(tmp_path, lambda m: _capped_wall(m, 0.0, 4.0, thick=0.5, caps=(False, False)))
    assert len(result.plan.walls) == 2
    assert len(result.plan.solids) == 0
    assert result.notes["wall-bands"] == 0
    # one cap only: still open at the other end
    result = _import(tmp_path, lambda m: _capped_wall(m, 0.0, 4.0, thick=0.5, caps=(True, False)), "one.dxf")
    assert len(result.plan.walls) == 3
    assert result.notes["wall-bands"] == 0


def test_door_gap_between_two_bands_stays_open(tmp_path):
    # two capped walls 0.2 m thick, x 0..3 and 3.9..7: a 0.9 m doorway between them
    def draw(m):
        _capped_wall(m, 0.0, 3.0)
        _capped_wall(m, 3.9, 7.0)

    plan = _import(tmp_path, draw).plan
    assert len(plan.walls) == 0
    assert len(plan.solids) == 2
    assert sorted(round(s.area, 9) for s in plan.solids) == [0.6, 0.62]
    # the doorway (x 3..3.9 across the wall) touches no band inside
    doorway = shapely.box(3.0 + 1e-9, 0.0, 3.9 - 1e-9, 0.2)
    assert not np.any(shapely.intersects(plan.solids, doorway))


def test_wall_thicker_than_bound_stays_lines(tmp_path):
    # 0.8 m between the faces: wider than WALL_BAND_MAX_WIDTH_M (0.6 m), left as drawn
    result = _import(tmp_path, lambda m: _capped_wall(m, 0.0, 4.0, thick=0.8))
    assert len(result.plan.walls) == 4
    assert result.notes["wall-bands"] == 0


def test_t_junction_forms_one_band_of_two_pieces(tmp_path):
    # a 6 m wall (0.2 m) and a partition (0.2 m, x 2.9..3.1) from its top face up to y = 3,
    # capped there: two rectangles, 6·0.2 + 0.2·2.8 = 1.76 m², touching, so one band
    def draw(m):
        _capped_wall(m, 0.0, 6.0)
        m.add_line((2.9, 0.2), (2.9, 3.0), dxfattribs={"layer": "A-WALL"})
        m.add_line((3.1, 0.2), (3.1, 3.0), dxfattribs={"layer": "A-WALL"})
        m.add_line((2.9, 3.0), (3.1, 3.0), dxfattribs={"layer": "A-WALL"})

    result = _import(tmp_path, draw)
    plan = result.plan
    assert len(plan.walls) == 0
    assert result.notes["wall-bands"] == 1
    assert len(plan.solids) == 2                       # the T is not convex: one hull per face
    assert float(np.sum(shapely.area(plan.solids))) == pytest.approx(1.76, rel=1e-12)
    assert [len(s.exterior.coords) for s in plan.solids] == [5, 5]   # T-junction vertices gone


def test_room_ring_stays_lines(tmp_path):
    # a room drawn as two closed outlines 0.25 m apart (6 × 4 outside): the ring between them
    # is thin but not convex, so it stays linework, and the room itself is never filled
    def draw(m):
        m.add_lwpolyline([(0, 0), (6, 0), (6, 4), (0, 4)], close=True, dxfattribs={"layer": "A-WALL"})
        m.add_lwpolyline([(0.25, 0.25), (5.75, 0.25), (5.75, 3.75), (0.25, 3.75)], close=True,
                         dxfattribs={"layer": "A-WALL"})

    result = _import(tmp_path, draw)
    assert result.notes["wall-bands"] == 0
    assert len(result.plan.walls) == 2
    assert len(result.plan.solids) == 0


def test_other_layers_never_close_a_band(tmp_path):
    # faces on A-WALL, caps on a furniture layer (role furniture, still obstacles): no face is
    # bounded by wall lines alone
    def draw(m):
        _capped_wall(m, 0.0, 4.0, caps=(False, False))
        m.add_line((0, 0), (0, 0.2), dxfattribs={"layer": "A-FURN"})
        m.add_line((4, 0), (4, 0.2), dxfattribs={"layer": "A-FURN"})

    result = _import(tmp_path, draw)
    assert result.notes["wall-bands"] == 0
    assert len(result.plan.walls) == 4


def test_inspect_states_bands_and_edges(tmp_path):
    def draw(m):
        _capped_wall(m, 0.0, 3.0)
        _capped_wall(m, 3.9, 7.0)
        m.add_line((0, 2), (7, 2), dxfattribs={"layer": "A-WALL"})

    report = report_from_result(_import(tmp_path, draw))
    c = report["counts"]
    assert c["edges"] == 9                 # as drawn: 2 × 4 wall lines + the single line
    assert c["wall_bands"] == 2
    assert c["wall_band_lines"] == 8
    assert c["edges_after_cleanup"] == 9   # 2 rectangles (8 edges) + the single line
    text = format_report(report)
    assert "9 edges (9 after clean-up; 2 wall bands from 8 lines)" in text


@pytest.mark.skipif(not PAVILION.is_file(), reason=f"real drawing not found at {PAVILION}")
def test_real_plan_free_space_unchanged(monkeypatch):
    """Plan #1: fewer wall lines, fewer obstacle pieces and smaller C-obstacles, and at every
    heading slice the same free space outside the bands (up to the 1e-12 m rounding of the
    integer clipping)."""
    from floorfit.cspace.slices import build_slices, choose_headings, obstacles_for
    from floorfit.vehicles.rigid import rectangle_vehicle

    monkeypatch.setattr(wallbands, "WALL_BAND_MAX_WIDTH_M", 0.0)
    lines = import_drawing(PAVILION).plan
    monkeypatch.undo()
    banded = import_drawing(PAVILION).plan
    assert len(banded.walls) < len(lines.walls)
    robot = rectangle_vehicle(0.8, 0.6, mode="differential")
    prepared = obstacles_for(lines, robot), obstacles_for(banded, robot)
    assert prepared[1].piece_count < prepared[0].piece_count
    # vertices of all C-obstacle pieces at one heading: piece vertices plus the 4 of the robot
    sizes = [sum(len(g) * (g.vertices.shape[1] + 4) for g in o.convex_groups) for o in prepared]
    assert sizes[1] < sizes[0]
    cells = choose_headings(lines, robot, heading_step_deg=30.0)
    before = build_slices(lines, robot, cells=cells, workers=1)
    after = build_slices(banded, robot, cells=cells, workers=1)
    bands = shapely.union_all(banded.solids[len(lines.solids):])
    for k in range(len(cells)):
        a, b = shapely.union_all(before.components[k]), shapely.union_all(after.components[k])
        inside = [c for c in before.components[k] if bands.covers(c)]
        assert len(after.components[k]) == len(before.components[k]) - len(inside)
        assert shapely.difference(b, a).area < 1e-9
        assert shapely.difference(shapely.difference(a, b), bands).area < 1e-9


def test_engine_sums_a_solid_with_jittered_collinear_vertices():
    """A comb-shaped solid (a wall band of plan #6 before hulls were used, local frame, metres):
    its C-obstacle for a 0.8 × 0.6 m rectangle at heading 0 must cover the exact sum, the union
    of the sums of its constrained Delaunay triangles (hulls of pairwise vertex sums)."""
    from floorfit.cspace.minkowski import cobstacle_pieces, footprint_parts_at, prepare_obstacles

    comb = shapely.Polygon([
        (10.867528769903, 1.964860722408676), (10.867528769903, 2.1664607224089196),
        (15.907528769903, 2.1664607224088868), (15.907528769903, 1.86406072240874),
        (14.647528769903, 1.86406072240874), (14.647528769903, 1.9648607224087122),
        (13.387528769903, 1.9648607224087125), (13.387528769903, 1.86406072240874),
        (12.127528769903, 1.86406072240874), (12.127528769903, 1.9648607224086758)])
    rect = shapely.Polygon([(0.4, -0.3), (0.4, 0.3), (-0.4, 0.3), (-0.4, -0.3)])
    part = footprint_parts_at([rect], 0.0, 0.0)
    engine = shapely.union_all(cobstacle_pieces(prepare_obstacles(np.zeros(0, dtype=object),
                                                                  np.array([comb], dtype=object)), part))
    neg = -np.asarray(part[0])
    tris = shapely.get_parts(shapely.constrained_delaunay_triangles(comb))
    exact = shapely.union_all([shapely.MultiPoint((np.asarray(t.exterior.coords)[:, None] + neg[None]).reshape(-1, 2))
                               .convex_hull for t in tris])
    assert shapely.difference(exact, engine).area < 1e-9
