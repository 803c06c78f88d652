"""Cross-check of the DXF importer against an independent reader: GDAL's DXF driver (pyogrio).

GDAL reads LINE, LWPOLYLINE, CIRCLE, ARC and TEXT itself and inlines INSERT / MINSERT
blocks with its own transform code (its default DXF_INLINE_BLOCKS behaviour), so agreeing
with it checks positions, block transforms and OCS handling with code we did not write.
GDAL flattens arcs with its own step, so curves are compared by their circle (centre,
radius, end points), not vertex by vertex.
"""

from __future__ import annotations

import dxf_fixtures as F
import numpy as np
import pytest
import shapely

from floorfit.plan.dxf import load_plan

pyogrio = pytest.importorskip("pyogrio")

CASES = [(v, u) for v in ("R2000", "R2018") for u in F.UNITS]


def _gdal(path):
    """[(geometry in drawing units, 2-D), {field: value}] for every feature GDAL reads."""
    meta, _, wkb, fields = pyogrio.raw.read(path)
    names = list(meta["fields"])
    geoms = shapely.force_2d(shapely.from_wkb(wkb))
    return [(g, {n: fields[k][i] for k, n in enumerate(names)}) for i, g in enumerate(geoms)]


def _mine(plan, kind="walls"):
    """A plan's geometries back in drawing units (drawing frame)."""
    mpu = plan.metres_per_unit
    return [shapely.transform(plan.geometry_to_drawing(g), lambda c: c / mpu) for g in getattr(plan, kind)]


def _circle_fit(points: np.ndarray) -> tuple[np.ndarray, float]:
    """Least-squares circle (Kåsa fit): centre and radius."""
    x, y = points[:, 0], points[:, 1]
    a = np.column_stack([2 * x, 2 * y, np.ones(len(x))])
    sol, *_ = np.linalg.lstsq(a, x ** 2 + y ** 2, rcond=None)
    centre = sol[:2]
    return centre, float(np.sqrt(sol[2] + centre @ centre))


@pytest.mark.parametrize("version,unit", CASES)
def test_lines_polylines_circles_and_texts_agree_with_gdal(tmp_path, version, unit):
    path = F.write_basic(tmp_path / "basic.dxf", version, unit)
    plan = load_plan(path, units=unit)
    walls, solids = _mine(plan), _mine(plan, "solids")
    scale = 1 / F.UNITS[unit][1]
    tol = 1e-9 * scale
    gdal = _gdal(path)
    checked = 0
    for geom, fields in gdal:
        sub = fields["SubClasses"]
        if fields["Layer"] == "A-WALL" and sub.endswith(("AcDbLine", "AcDbPolyline")):
            assert any(g.equals_exact(geom, tol) for g in walls), f"GDAL {sub} {geom} not among the walls"
            checked += 1
        elif fields["Layer"] == "A-COLS" and sub.endswith("AcDbCircle"):
            centre, radius = _circle_fit(shapely.get_coordinates(geom))
            disc = next(g for g in solids if g.contains(shapely.Point(centre)))
            mine_centre, mine_radius = _circle_fit(shapely.get_coordinates(disc.exterior))
            assert mine_centre == pytest.approx(centre, abs=tol)
            assert mine_radius == pytest.approx(radius, rel=1e-9)
            checked += 1
        elif fields["Layer"] == "A-COLS" and sub.endswith("AcDbPolyline"):
            assert any(shapely.equals(shapely.Polygon(geom.coords), g) for g in solids)
            checked += 1
        elif geom.geom_type == "Point":
            (label,) = plan.labels
            assert label.text == fields["Text"]
            assert label.handle == fields["EntityHandle"]
            assert np.array(plan.to_drawing(label.x, label.y)) / plan.metres_per_unit == pytest.approx(
                np.asarray(geom.coords[0]), abs=tol)
            checked += 1
        elif fields["Layer"] == "A-FLOR-PATT":
            assert not any(g.equals_exact(geom, tol) for g in walls)   # ignored layer
            checked += 1
    assert checked == 7


@pytest.mark.parametrize("version,unit", CASES)
def test_nested_block_transforms_agree_with_gdal(tmp_path, version, unit):
    path = F.write_nested_transforms(tmp_path / "nested.dxf", version, unit)
    plan = load_plan(path, units=unit)
    scale = 1 / F.UNITS[unit][1]
    mine = [g for g in _mine(plan) if g.bounds[0] < 50 * scale]
    (gdal_geom, fields), = [(g, f) for g, f in _gdal(path) if f["Layer"] == "A-WALL"]
    parts = list(shapely.get_parts(shapely.get_parts(gdal_geom)))      # collection of multi-lines
    gdal_lines = [p for p in parts if len(p.coords) == 2]
    gdal_arc = max(parts, key=lambda p: len(p.coords))
    assert len(gdal_lines) == 2
    for line in gdal_lines:                       # both LEAF lines, through two INSERT levels
        assert any(g.equals_exact(line, 1e-9 * scale) for g in mine)
    my_arc = max(mine, key=lambda g: len(g.coords))
    g_centre, g_radius = _circle_fit(shapely.get_coordinates(gdal_arc))
    m_centre, m_radius = _circle_fit(shapely.get_coordinates(my_arc))
    assert m_centre == pytest.approx(g_centre, abs=1e-6 * scale)
    assert m_radius == pytest.approx(g_radius, rel=1e-6)
    g_ends = {tuple(np.round(np.asarray(gdal_arc.coords)[i] / scale, 6)) for i in (0, -1)}
    m_ends = {tuple(np.round(np.asarray(my_arc.coords)[i] / scale, 6)) for i in (0, -1)}
    assert g_ends == m_ends


@pytest.mark.parametrize("version,unit", CASES)
def test_ocs_mirrored_entities_agree_with_gdal(tmp_path, version, unit):
    path = F.write_ocs(tmp_path / "ocs.dxf", version, unit)
    plan = load_plan(path, units=unit)
    scale = 1 / F.UNITS[unit][1]
    walls, (disc,) = _mine(plan), _mine(plan, "solids")
    for geom, fields in _gdal(path):
        if fields["SubClasses"].endswith("AcDbArc"):
            mine = next(g for g in walls if len(g.coords) > 2)
            ends = lambda g: {tuple(np.round(np.asarray(g.coords)[i] / scale, 6)) for i in (0, -1)}  # noqa: E731
            assert ends(mine) == ends(geom)
            assert _circle_fit(shapely.get_coordinates(mine))[0] == pytest.approx(
                _circle_fit(shapely.get_coordinates(geom))[0], abs=1e-6 * scale)
        elif fields["SubClasses"].endswith("AcDbCircle"):
            assert _circle_fit(shapely.get_coordinates(disc.exterior))[0] == pytest.approx(
                _circle_fit(shapely.get_coordinates(geom))[0], abs=1e-6 * scale)
        else:
            assert any(g.equals_exact(geom, 1e-9 * scale) for g in walls)


@pytest.mark.parametrize("version,unit", CASES)
def test_minsert_grid_agrees_with_gdal(tmp_path, version, unit):
    path = F.write_minsert(tmp_path / "minsert.dxf", version, unit)
    plan = load_plan(path, units=unit)
    scale = 1 / F.UNITS[unit][1]
    gdal = [shapely.Polygon(g.coords) for g, f in _gdal(path) if f["Layer"] == "A-EQPM"]
    mine = _mine(plan, "solids")
    assert len(gdal) == len(mine) == 16
    for poly in gdal:
        assert sum(1 for g in mine if g.symmetric_difference(poly).area <= 1e-12 * scale ** 2) == 1
