"""overlay.dxf: read back by an independent reader (GDAL's DXF driver through pyogrio).

The plan is in millimetres with its local origin far from 0,0, so a marker lands on the
finding only if both the frame shift and the unit conversion are right.
"""

from __future__ import annotations

import io
import warnings

import ezdxf
import numpy as np
import pytest
import shapely
from report_fixtures import demo_vehicle
from shapely.geometry import LineString, box

from floorfit.analysis.findings import CheckResult, Finding, Station
from floorfit.errors import InputError
from floorfit.plan.model import Plan
from floorfit.report import write_report
from floorfit.report.overlay import LAYERS, insunits_for, overlay_dxf

pyogrio_raw = pytest.importorskip("pyogrio.raw")

ORIGIN = (1250.0, -340.0)          # drawing frame, metres: 1 250 000 mm, -340 000 mm
MM = 0.001                         # metres per drawing unit
TOL = 1e-6 / MM                    # 1e-6 × scale (drawing units per metre)


def _result() -> CheckResult:
    ox, oy = ORIGIN
    plan = Plan.from_geometries([box(ox, oy, ox + 10, oy + 6).exterior], [], origin=ORIGIN,
                                source="site-mm.dxf", units="mm", metres_per_unit=MM)
    findings = [
        Finding("no-turn", ox + 6.0, oy + 3.6, "Bay: cannot turn.", id="N1",
                geometry=box(5.0, 3.0, 7.0, 4.2)),                       # local frame
        Finding("blocked", ox + 3.5, oy + 2.75, "Door too narrow.", id="B1",
                geometry=LineString([(3.5, 2.6), (3.5, 3.4)])),
        Finding("tight", ox + 1.2, oy + 0.9, "0.3 m each side.", id="T1"),
    ]
    fits = box(0.5, 0.5, 9.5, 5.5).difference(box(3.0, 2.0, 4.0, 3.0))
    return CheckResult(
        plan=plan, vehicle=demo_vehicle(), settings={"tolerance_m": 0.01},
        stations=[Station("Pick 1", ox + 1.0, oy + 1.0, 90.0), Station("Drop", ox + 8.0, oy + 5.0)],
        reachable={"Pick 1": {"Drop": False}, "Drop": {"Pick 1": False}}, findings=findings,
        turnability={"fits": fits})


@pytest.fixture(scope="module")
def overlay(tmp_path_factory):
    folder = tmp_path_factory.mktemp("overlay")
    path = write_report(_result(), folder / "out", formats=("dxf",), quiet=True)["dxf"]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")     # GDAL notes the missing CRS
        meta, _fids, wkb, fields = pyogrio_raw.read(path)
    names = list(meta["fields"])
    layer = np.asarray(fields[names.index("Layer")], dtype=object)
    text = np.asarray(fields[names.index("Text")], dtype=object)
    return path, layer, text, shapely.from_wkb(wkb)


def _mm(x_m: float, y_m: float) -> tuple[float, float]:
    """Drawing frame metres → drawing millimetres, by hand (the oracle for the overlay)."""
    return x_m / MM, y_m / MM


def test_markers_sit_on_the_findings_in_drawing_units(overlay):
    _, layer, text, geom = overlay
    expected = {"FF-FIND-BLKD": ("1", _mm(1253.5, -337.25)),   # report order: blocked first
                "FF-FIND-NTRN": ("2", _mm(1256.0, -336.4)),
                "FF-FIND-TGHT": ("3", _mm(1251.2, -339.1))}
    for name, (number, (x, y)) in expected.items():
        on_layer = layer == name
        labels = [(t, g) for t, g in zip(text[on_layer], geom[on_layer], strict=True) if t is not None]
        circles = [g for t, g in zip(text[on_layer], geom[on_layer], strict=True) if t is None]
        assert [t for t, _ in labels] == [number]
        point = labels[0][1]
        assert point.x == pytest.approx(x, abs=TOL) and point.y == pytest.approx(y, abs=TOL)
        assert len(circles) == 1                        # GDAL reads the CIRCLE as a polyline
        x0, y0, x1, y1 = circles[0].bounds
        assert (x0 + x1) / 2 == pytest.approx(x, abs=TOL)
        assert (y0 + y1) / 2 == pytest.approx(y, abs=TOL)


def test_finding_geometry_is_in_drawing_units(overlay):
    _, layer, _, geom = overlay
    (area,) = geom[layer == "FF-AREA-NTRN"]
    xy = shapely.get_coordinates(area)
    # local box (5, 3)–(7, 4.2) m + origin (1250, -340) m, in mm
    assert xy[:, 0].min() == pytest.approx(1255000, abs=TOL)
    assert xy[:, 0].max() == pytest.approx(1257000, abs=TOL)
    assert xy[:, 1].min() == pytest.approx(-337000, abs=TOL)
    assert xy[:, 1].max() == pytest.approx(-335800, abs=TOL)
    assert np.allclose(xy[0], xy[-1])                    # closed
    (cut,) = geom[layer == "FF-CUTS-BLKD"]
    assert np.allclose(shapely.get_coordinates(cut), [[1253500, -337400], [1253500, -336600]],
                       atol=TOL)


def test_stations_and_free_space(overlay):
    _, layer, text, geom = overlay
    names = {t: g for t, g in zip(text[layer == "FF-STAN-IDEN"], geom[layer == "FF-STAN-IDEN"],
                                  strict=True)}
    assert set(names) == {"Pick 1", "Drop"}
    symbols = geom[layer == "FF-STAN-SYMB"]
    # circle + two cross lines per station, plus a heading line for "Pick 1"
    assert len(symbols) == 7
    heading = [g for g in symbols if g.geom_type == "LineString" and len(g.coords) == 2
               and np.allclose(g.coords[0][:2], _mm(1251.0, -339.0), atol=TOL)
               and g.coords[1][1] > g.coords[0][1] + 1]
    assert len(heading) == 1 and heading[0].coords[1][0] == pytest.approx(1251000, abs=TOL)
    rings = geom[layer == "FF-FREE-OTLN"]
    assert len(rings) == 2                              # outer boundary and the hole
    bounds = shapely.total_bounds(rings)
    assert np.allclose(bounds, [1250500, -339500, 1259500, -334500], atol=TOL)


def test_only_floorfit_layers(overlay):
    path, layer, _, _ = overlay
    assert set(layer) <= set(LAYERS) | {"FF-FIND-BLKD", "FF-FIND-NTRN", "FF-FIND-TGHT",
                                        "FF-AREA-NTRN", "FF-CUTS-BLKD", "FF-CUTS-NTRN",
                                        "FF-AREA-BLKD"}
    doc = ezdxf.readfile(path)
    assert doc.dxfversion == "AC1027"                    # R2013
    assert doc.header["$INSUNITS"] == 4                  # millimetres (DXF reference, $INSUNITS)
    assert doc.layers.get("FF-FIND-BLKD").description.startswith("floorfit:")


@pytest.mark.parametrize("mpu, units, code", [
    (0.0254, "in", 1), (0.3048, "ft", 2), (1.0, "m", 6), (0.01, "cm", 5), (0.001, "mm", 4),
    (0.5, "mm", 4),        # no unit has this length: the unit name decides
    (0.5, "furlong", 0),   # neither matches: unitless
])
def test_insunits(mpu, units, code):
    # DXF $INSUNITS codes (AutoCAD DXF reference): 1 in, 2 ft, 4 mm, 5 cm, 6 m, 0 unitless
    plan = Plan.from_geometries([], units=units, metres_per_unit=mpu)
    assert insunits_for(plan) == code


def test_inch_plan_converts_back_to_inches():
    ox, oy = 100 * 0.0254, 50 * 0.0254                   # origin at (100 in, 50 in)
    plan = Plan.from_geometries([box(ox, oy, ox + 3, oy + 3).exterior], origin=(ox, oy),
                                units="in", metres_per_unit=0.0254)
    result = CheckResult(plan=plan, vehicle=demo_vehicle(), settings={}, stations=[],
                         reachable={}, findings=[Finding("tight", ox + 0.254, oy + 0.508, "x")])
    doc = ezdxf.read(io.StringIO(overlay_dxf(result).decode("utf-8")))
    (text,) = doc.modelspace().query("TEXT")
    x, y, _ = text.dxf.align_point
    assert (x, y) == (pytest.approx(110.0, abs=1e-9), pytest.approx(70.0, abs=1e-9))
    assert doc.header["$INSUNITS"] == 1


def test_bad_unit_length_is_refused():
    plan = Plan.from_geometries([], metres_per_unit=0.0, source="zero.dxf")
    result = CheckResult(plan=plan, vehicle=demo_vehicle(), settings={}, stations=[],
                         reachable={}, findings=[])
    with pytest.raises(InputError, match="zero.dxf: plan.metres_per_unit"):
        overlay_dxf(result)
