"""DXF import on synthetic drawings with known answers: entities, transforms, units, versions.

Expected values come from the definitions in the AutoCAD DXF Reference (INSERT base point,
scale and rotation; OCS arbitrary-axis algorithm; bulge = tan(θ/4)) and closed-form
geometry (areas of discs, ellipses, half discs), written out in ``dxf_fixtures.py``.
"""

from __future__ import annotations

import math

import dxf_fixtures as F
import numpy as np
import pytest
import shapely

from floorfit.plan.dxf import load_plan
from floorfit.plan.dxf.importer import DEFAULT_CURVE_TOLERANCE_M

TOL = DEFAULT_CURVE_TOLERANCE_M
ALL = [(v, u) for v in F.VERSIONS for u in F.UNITS]
MODERN = [(v, u) for v in ("R2000", "R2018") for u in F.UNITS]


def _drawing_geoms(plan, kind="walls"):
    """Geometries of a plan moved back to the drawing frame (metres)."""
    return [plan.geometry_to_drawing(g) for g in getattr(plan, kind)]


def _all_coords(geoms) -> np.ndarray:
    return np.vstack([np.asarray(g.exterior.coords if g.geom_type == "Polygon" else g.coords) for g in geoms])


def _has_segment(geoms, a, b, tol=1e-6) -> bool:
    a, b = np.asarray(a, float), np.asarray(b, float)
    for g in geoms:
        c = np.asarray(g.coords)
        if len(c) == 2 and ((np.allclose(c[0], a, atol=tol) and np.allclose(c[1], b, atol=tol))
                            or (np.allclose(c[0], b, atol=tol) and np.allclose(c[1], a, atol=tol))):
            return True
    return False


@pytest.mark.parametrize("version,unit", ALL)
def test_basic_entities_units_and_label(tmp_path, version, unit):
    path = F.write_basic(tmp_path / "basic.dxf", version, unit)
    plan = load_plan(path, units=unit)
    assert plan.units == unit
    assert plan.metres_per_unit == pytest.approx(F.UNITS[unit][1])
    walls = _drawing_geoms(plan)
    assert len(walls) == 3                        # the flooring line is ignored
    assert _has_segment(walls, (0, 0), (10, 0))
    assert _has_segment(walls, (10, 0), (10, 8))
    assert plan.extent_m == pytest.approx([0, 0, 10, 8], abs=1e-9)
    solids = _drawing_geoms(plan, "solids")
    assert len(solids) == 2
    disc = max(solids, key=lambda g: g.area if abs(g.centroid.x - 5) < 0.01 else 0)
    # inscribed polygon of the r = 0.3 disc: area between π r² - perimeter·tol and π r²
    assert math.pi * 0.09 - 2 * math.pi * 0.3 * TOL <= disc.area <= math.pi * 0.09
    assert np.allclose(np.hypot(*(_all_coords([disc]) - [5, 4]).T), 0.3, atol=1e-9)
    square = min(solids, key=lambda g: g.area)
    assert square.area == pytest.approx(0.16, rel=1e-9)
    (label,) = plan.labels
    assert label.text == "KITCHEN"                # %%u underline code removed
    assert plan.to_drawing(label.x, label.y) == pytest.approx((3, 3), abs=1e-9)


@pytest.mark.parametrize("version,unit", ALL)
def test_nested_insert_with_base_point_scale_rotation_and_mirror(tmp_path, version, unit):
    path = F.write_nested_transforms(tmp_path / "nested.dxf", version, unit)
    plan = load_plan(path, units=unit)
    walls = _drawing_geoms(plan)
    # LEAF line on layer 0 -> takes the INSERT's layer A-WALL (a wall); endpoints by hand
    assert _has_segment(walls, F.nested_expected((0.5, 0.0)), F.nested_expected((1.5, 0.0)))
    assert _has_segment(walls, F.nested_expected((0.5, 0.0)), F.nested_expected((0.5, 0.25)))
    # the same block inserted on an ignored layer: only its explicit A-WALL line remains
    far = [g for g in walls if g.bounds[0] > 50]
    assert len(far) == 1
    assert len(walls) == 4
    # MID's arc: centre (0.2, 0.1) = MID's base point -> lands on the insertion point (10, 5);
    # radius 1 x |scale| 1.5; ends are the images of (1.2, 0.1) and (0.2, 1.1)
    arc = max(walls, key=lambda g: len(g.coords))
    pts = np.asarray(arc.coords)
    assert np.allclose(np.hypot(pts[:, 0] - 10, pts[:, 1] - 5), 1.5, atol=1e-9)
    ends = {tuple(np.round(pts[0], 9)), tuple(np.round(pts[-1], 9))}
    expected = {tuple(np.round(F.transform_point(p, **F.NESTED_OUTER), 9)) for p in [(1.2, 0.1), (0.2, 1.1)]}
    assert ends == expected
    # the chord error of the flattened arc stays within the curve tolerance
    mids = (pts[1:] + pts[:-1]) / 2
    assert np.all(1.5 - np.hypot(mids[:, 0] - 10, mids[:, 1] - 5) <= plan.curve_tolerance_m + 1e-12)


@pytest.mark.parametrize("version,unit", ALL)
def test_negative_extrusion_mirrors_arc_circle_and_polyline(tmp_path, version, unit):
    # OCS arbitrary axis algorithm (DXF Reference, "Arbitrary Axis Algorithm"): for the
    # extrusion (0, 0, -1) the OCS x axis is (-1, 0, 0) and the y axis (0, 1, 0).
    path = F.write_ocs(tmp_path / "ocs.dxf", version, unit)
    plan = load_plan(path, units=unit)
    walls = _drawing_geoms(plan)
    assert _has_segment(walls, (-1, 1), (-2, 1))
    arc = next(g for g in walls if len(g.coords) > 2)
    pts = np.asarray(arc.coords)
    assert np.allclose(np.hypot(pts[:, 0] + 5, pts[:, 1] - 1), 2.0, atol=1e-9)
    assert {tuple(np.round(pts[0], 9)), tuple(np.round(pts[-1], 9))} == {(-7.0, 1.0), (-5.0, 3.0)}
    assert np.all(pts[:, 0] <= -5 + 1e-9)         # bulges towards -x, not mirrored to +x
    assert np.all(pts[:, 1] >= 1 - 1e-9)
    (disc,) = _drawing_geoms(plan, "solids")
    assert disc.centroid.x == pytest.approx(-3, abs=1e-6)
    assert disc.centroid.y == pytest.approx(0, abs=1e-6)


@pytest.mark.parametrize("version,unit", ALL)
def test_bulge_polyline_is_a_half_disc(tmp_path, version, unit):
    # bulge 1 = tan(180°/4): a half circle, counter-clockwise (DXF Reference, LWPOLYLINE 42)
    path = F.write_bulge(tmp_path / "bulge.dxf", version, unit)
    plan = load_plan(path, units=unit)
    (poly,) = _drawing_geoms(plan, "solids")
    exact = 4 + math.pi / 2
    assert exact - math.pi * TOL <= poly.area <= exact
    assert poly.bounds == pytest.approx((0, -1, 2, 2), abs=1e-9)
    c = _all_coords([poly])
    arc_pts = c[c[:, 1] < -1e-9]
    assert len(arc_pts) >= 8                                # flattened by tolerance, not 1 chord
    assert np.allclose(np.hypot(arc_pts[:, 0] - 1, arc_pts[:, 1]), 1.0, atol=1e-9)


@pytest.mark.parametrize("version,unit", ALL)
def test_constant_width_polyline_is_a_filled_band(tmp_path, version, unit):
    path = F.write_const_width(tmp_path / "width.dxf", version, unit)
    plan = load_plan(path, units=unit)
    assert len(plan.walls) == 0
    (band,) = _drawing_geoms(plan, "solids")
    assert band.area == pytest.approx(5.0, rel=1e-9)
    assert band.bounds == pytest.approx((0, -0.25, 10, 0.25), abs=1e-9)


@pytest.mark.parametrize("version,unit", MODERN)
def test_hatch_edge_path_polyline_path_island_and_floor_finish(tmp_path, version, unit):
    path = F.write_hatches(tmp_path / "hatch.dxf", version, unit)
    plan = load_plan(path, units=unit)
    solids = sorted(_drawing_geoms(plan, "solids"), key=lambda g: g.bounds[0])
    assert len(solids) == 2                              # the parquet floor finish is not an obstacle
    edge, island = solids
    exact = 8 + math.pi / 2
    assert exact - math.pi * TOL <= edge.area <= exact
    assert edge.bounds == pytest.approx((0, 0, 5, 2), abs=1e-9)
    assert island.area == pytest.approx(3.0, rel=1e-9)   # even-odd: the island is a hole
    assert len(island.interiors) == 1
    assert any(i.kind == "hatch" for i in plan.issues)


@pytest.mark.parametrize("version,unit", MODERN)
def test_spline_and_ellipses_flattened_within_tolerance(tmp_path, version, unit):
    path = F.write_spline_ellipse(tmp_path / "curves.dxf", version, unit)
    plan = load_plan(path, units=unit)
    walls = _drawing_geoms(plan)
    spline = next(g for g in walls if g.bounds[2] < 3)
    pts = np.asarray(spline.coords)
    # quadratic Bézier with control points (0,0), (1,2), (2,0): y = 2x - x²
    assert np.allclose(pts[:, 1], 2 * pts[:, 0] - pts[:, 0] ** 2, atol=1e-9)
    assert pts[0] == pytest.approx([0, 0]) and pts[-1] == pytest.approx([2, 0])
    xs = np.linspace(0, 2, 2001)
    truth = shapely.points(xs, 2 * xs - xs ** 2)
    assert float(np.max(shapely.distance(truth, spline))) <= TOL
    half = next(g for g in walls if g.bounds[0] > 9)
    hp = np.asarray(half.coords)
    assert np.allclose(((hp[:, 0] - 10) / 0.5) ** 2 + (hp[:, 1] / 2) ** 2, 1.0, atol=1e-9)
    assert np.all(hp[:, 0] <= 10 + 1e-9)
    (ellipse,) = _drawing_geoms(plan, "solids")
    exact = math.pi * 3 * 1.5
    perimeter = 2 * math.pi * math.sqrt((3 ** 2 + 1.5 ** 2) / 2)          # upper bound of the perimeter
    assert exact - perimeter * TOL <= ellipse.area <= exact


@pytest.mark.parametrize("version,unit", ALL)
def test_minsert_arrays_with_rotation(tmp_path, version, unit):
    path = F.write_minsert(tmp_path / "minsert.dxf", version, unit)
    plan = load_plan(path, units=unit)
    solids = _drawing_geoms(plan, "solids")
    assert len(solids) == 16
    assert all(g.area == pytest.approx(0.5, rel=1e-9) for g in solids)
    corners = {tuple(np.round(g.bounds[:2], 9)) for g in solids}
    for r in range(3):
        for c in range(4):
            assert (1 + 3 * c, 1 + 2 * r) in corners
    # rotation 90°: grid offset (3c, 2r) -> (-2r, 3c); the 1 x 0.5 rectangle -> x in [-0.5, 0]
    for r in range(2):
        for c in range(2):
            assert (round(30 - 2 * r - 0.5, 9), round(3 * c, 9)) in corners


@pytest.mark.parametrize("version,unit", ALL)
def test_labels_text_mtext_attrib_and_control_characters(tmp_path, version, unit):
    path = F.write_texts(tmp_path / "texts.dxf", version, unit)
    plan = load_plan(path, units=unit)
    by_text = {lb.text: plan.to_drawing(lb.x, lb.y) for lb in plan.labels}
    assert by_text["KITCHEN"] == pytest.approx((1, 1), abs=1e-9)
    assert by_text["BadName"] == pytest.approx((2, 2), abs=1e-9)     # BEL and RLO removed
    assert by_text["HALL"] == pytest.approx((4, 4), abs=1e-9)        # alignment point, not insert
    assert by_text["A101"] == pytest.approx((7.5, 7.2), abs=1e-9)    # ATTRIB on the INSERT
    if version != "R12":
        assert by_text["Office 1 Second"] == pytest.approx((5, 5), abs=1e-9)
    assert all(lb.handle for lb in plan.labels)


@pytest.mark.parametrize("version,unit", ALL)
def test_doors_in_every_form(tmp_path, version, unit):
    path = F.write_doors(tmp_path / "doors.dxf", version, unit)
    plan = load_plan(path, units=unit)
    found = sorted((plan.to_drawing(d.x, d.y), d.width_m, d.source, d.label) for d in plan.doors)
    expected = [((5.45, 0.0), 0.9, "swing", "D1"), ((20.4, 0.0), 0.8, "block", None),
                ((29.6, 0.0), 0.8, "block", None), ((40.0, 0.4), 0.8, "block", None),
                ((50.5, 0.0), 1.0, "swing", None), ((60.6, 0.0), 1.2, "opening-line", None)]
    assert len(found) == len(expected)
    for (xy, width, source, label), (exy, ewidth, esource, elabel) in zip(found, expected):
        assert xy == pytest.approx(exy, abs=1e-9)
        assert width == pytest.approx(ewidth, rel=1e-9)
        assert source == esource
        assert label == elabel
    # door open: no swing arc, leaf or opening line is an obstacle; the walls remain
    walls = _drawing_geoms(plan)
    assert len(walls) == 7 and all(len(g.coords) == 2 for g in walls)
    assert all(abs(g.bounds[1]) < 1e-9 and abs(g.bounds[3]) < 1e-9 for g in walls)


@pytest.mark.parametrize("unit", F.UNITS)
def test_keep_door_leaves_keeps_leaves_not_arcs(tmp_path, unit):
    path = F.write_doors(tmp_path / "doors.dxf", "R2000", unit)
    plan = load_plan(path, units=unit, keep_door_leaves=True)
    walls = _drawing_geoms(plan)
    assert _has_segment(walls, (5, 0), (5, 0.9))          # door-layer leaf at its drawn position
    assert _has_segment(walls, (50, 0), (50, 1))          # leaf found by shape
    assert _has_segment(walls, (20, 0), (20, 0.8))        # leaf inside the door block
    assert all(len(g.coords) == 2 for g in walls)         # arcs are never obstacles
    assert len(plan.doors) == 6


@pytest.mark.parametrize("unit", F.UNITS)
def test_header_unit_is_used_without_override(tmp_path, unit):
    path = F.write_doors(tmp_path / "doors.dxf", "R2000", unit)
    plan = load_plan(path)
    assert plan.units == unit and f"$INSUNITS = {F.UNITS[unit][0]}" in plan.unit_reason
    assert not any(i.kind == "units" for i in plan.issues)


def test_r12_without_header_unit_picks_plausible_unit_from_doors(tmp_path):
    path = F.write_doors(tmp_path / "doors.dxf", "R12", "in")
    plan = load_plan(path)
    assert plan.units == "in"
    assert plan.unit_reason.startswith("no $INSUNITS in the header; chose in:")
    assert sorted(round(d.width_m, 6) for d in plan.doors)[:3] == [0.8, 0.8, 0.8]


def test_wrong_header_unit_warns_with_the_likely_unit_and_uses_the_header(tmp_path):
    path = F.write_doors(tmp_path / "doors.dxf", "R2000", "mm")
    plan = load_plan(path, units=None)
    assert plan.units == "mm"
    lying = tmp_path / "lying.dxf"
    import ezdxf
    doc = ezdxf.readfile(path)
    doc.units = F.UNITS["in"][0]                  # header says inches, geometry is mm
    doc.saveas(lying)
    plan = load_plan(lying)
    assert plan.units == "in"
    (warning,) = [i for i in plan.issues if i.kind == "units"]
    assert "header says in" in warning.message and "likely unit: mm" in warning.message


@pytest.mark.parametrize("unit", F.UNITS)
def test_window_crops_in_drawing_units_and_layer_filter(tmp_path, unit):
    path = F.write_doors(tmp_path / "doors.dxf", "R2000", unit)
    s = 1 / F.UNITS[unit][1]
    plan = load_plan(path, units=unit, window=(15 * s, -1 * s, 35 * s, 1 * s))
    walls = _drawing_geoms(plan)
    assert plan.extent_m == pytest.approx([15, 0, 35, 0], abs=1e-9)
    assert {round(d.width_m, 6) for d in plan.doors} == {0.8}
    assert len(plan.doors) == 2
    assert all(15 - 1e-9 <= g.bounds[0] and g.bounds[2] <= 35 + 1e-9 for g in walls)
    only_walls = load_plan(path, units=unit, layers=["a-wall"])
    assert {d.source for d in only_walls.doors} == {"block"}     # door blocks sit on A-WALL
    assert only_walls.layers and all(i.layer != "Tueren" for i in only_walls.issues)


def test_local_origin_keeps_precision_far_from_zero(tmp_path):
    import ezdxf
    doc = ezdxf.new("R2000")
    doc.units = F.UNITS["mm"][0]
    x0, y0 = -1.39e8, 2.58e8                       # georeferenced millimetres (reference AU plans)
    doc.modelspace().add_line((x0, y0), (x0 + 1234.5, y0), dxfattribs={"layer": "A-WALL"})
    doc.modelspace().add_line((x0, y0), (x0, y0 + 1000.25), dxfattribs={"layer": "A-WALL"})
    doc.saveas(tmp_path / "far.dxf")
    plan = load_plan(tmp_path / "far.dxf")
    assert plan.origin == (-139000.0, 258000.0)
    assert plan.local_bounds() == pytest.approx((0.0, 0.0, 1.2345, 1.00025), abs=1e-9)


def test_binary_dxf_reads_like_ascii(tmp_path):
    import ezdxf
    ascii_path = F.write_doors(tmp_path / "doors.dxf", "R2018", "mm")
    doc = ezdxf.readfile(ascii_path)
    doc.saveas(tmp_path / "doors_bin.dxf", fmt="bin")
    assert (tmp_path / "doors_bin.dxf").read_bytes().startswith(b"AutoCAD Binary DXF")
    a, b = load_plan(ascii_path), load_plan(tmp_path / "doors_bin.dxf")
    assert [(d.x, d.y, d.width_m, d.source) for d in a.doors] == [(d.x, d.y, d.width_m, d.source) for d in b.doors]
    assert all(ga.equals_exact(gb, 1e-12) for ga, gb in zip(a.walls, b.walls)) and len(a.walls) == len(b.walls)
