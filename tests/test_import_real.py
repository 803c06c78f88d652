"""The importer on the 11 real third-party drawings of ../shared/plans-real, read in place.

Expected figures come from ../shared/plans-real/MANIFEST.md (hand-checked units, extents
measured with ezdxf's bounding box, door forms and counts). Each file either imports with
plausible results or is refused with a clear reason; #11 (a binary door/window schedule
sheet, not a plan) is imported with a "not-a-plan" warning.
"""

from __future__ import annotations

import time
from functools import cache
from pathlib import Path

import pytest

from floorfit.plan.dxf.importer import import_drawing
from floorfit.plan.dxf.report import report_from_result

PLANS = Path(__file__).parents[2] / "shared" / "plans-real"
pytestmark = pytest.mark.skipif(not PLANS.is_dir(), reason=f"real drawings not found at {PLANS}")

P1 = "yorikvanhavre__barcelona-pavillion__plan.dxf"
P2 = "yorikvanhavre__barcelona-pavillion__plan_at_96335ca.dxf"
P3 = "yorikvanhavre__barcelona-pavillion__pabellon_de_barcelona.dxf"
P4 = "yorikvanhavre__barcelona-pavillion__plan_exported.dxf"
P5 = "arbaev__dxf-vuer__floorplan.dxf"
P6 = "egghunters__dxf-viewer-examples__dxf_4.dxf"
P7 = "dotoritos-kim__dxf-json__A_000217.dxf"
P8 = "PedestrianDynamics__jupedsim__2014_12_19_Einkaufsebene.dxf"
P9 = "PedestrianDynamics__jupedsim__Gallery.dxf"
P10 = "JuPedSim__jpseditor__mixedusage.dxf"
P11 = "egghunters__dxf-viewer-examples__doors_and_windows.dxf"
INCH = 0.0254


@cache
def _import(name: str, units: str | None = None):
    start = time.perf_counter()
    result = import_drawing(PLANS / name, units=units)
    return result, report_from_result(result), time.perf_counter() - start


def _size(report) -> tuple[float, float]:
    return tuple(report["size_m"])


def _roles(report) -> dict[str, str]:
    return {layer["name"]: layer["role"] for layer in report["layers"]}


def _units_warning(report) -> str:
    (issue,) = [i for i in report["issues"] if i["kind"] == "units"]
    return issue["message"]


def test_every_reference_drawing_imports():
    names = sorted(p.name for p in PLANS.glob("*.dxf"))
    assert len(names) == 11
    for name in names:
        result, report, _ = _import(name)
        assert report["counts"]["obstacles"] > 0, name
        assert report["units"]["name"] in ("mm", "m", "in"), name


def test_1_clean_metre_plan_layers_roles_and_eight_swing_doors():
    result, report, _ = _import(P1)
    assert report["units"]["name"] == "m" and report["units"]["warning"] is None
    assert _size(report) == pytest.approx((52.0, 22.75), abs=0.01)       # MANIFEST #1 extents
    roles = _roles(report)
    assert roles["Walls"] == "wall" and roles["Doors"] == "door" and roles["Flooring"] == "ignore"
    assert roles["Furniture"] == "furniture" and roles["Columns"] == "solid"
    doors = result.plan.doors
    assert len(doors) == 8 and {d.source for d in doors} == {"swing"}
    # MANIFEST #1: swing radii 0.81 / 0.96 / 1.01 m
    assert sorted({round(d.width_m, 2) for d in doors}) == [0.81, 0.96, 1.01]
    assert not any(i["kind"] == "units" for i in report["issues"])


def test_1_flooring_grid_is_not_an_obstacle():
    from floorfit.errors import PlanImportError
    from floorfit.plan.dxf import load_plan
    with pytest.raises(PlanImportError, match="nothing usable"):
        load_plan(PLANS / P1, layers=["Flooring"])


def test_2_lying_inch_header_warns_and_override_gives_metres():
    _, report, _ = _import(P2)
    assert report["units"]["name"] == "in"                               # the header is used...
    warning = _units_warning(report)
    assert "header says in" in warning and "likely unit: m" in warning   # ...with a warning
    result, report_m, _ = _import(P2, "m")
    assert _size(report_m) == pytest.approx((52.0, 22.75), abs=0.01)
    assert len(result.plan.doors) == 8


def test_3_plan_with_elevations_lying_header_and_window():
    _, report, _ = _import(P3)
    assert "likely unit: m" in _units_warning(report)
    _, report_m, _ = _import(P3, "m")
    assert _size(report_m) == pytest.approx((115.956, 50.05), abs=0.01)   # MANIFEST #3 extents
    from floorfit.plan.dxf import load_plan
    plan = load_plan(PLANS / P3, units="m", window=(-1, -1, 52, 22))       # the plan, lower left
    assert len(plan.doors) == 8
    x0, y0, x1, y1 = plan.extent_m
    assert x1 <= 52 and y1 <= 22


def test_4_r12_blocks_on_layer_zero_without_unit_header():
    result, report, _ = _import(P4)
    assert report["dxf_version"] == "AC1009"
    assert report["units"]["name"] == "mm"
    assert report["units"]["reason"].startswith("no $INSUNITS in the header; chose mm")
    ext = report["obstacle_extent_m"]
    assert (ext[2] - ext[0], ext[3] - ext[1]) == pytest.approx((51.995, 22.155), abs=1e-6)
    # MANIFEST #4: 3 988 LINEs in 2 blocks; a LINE is one segment, kept or replaced whole by a wall band
    assert len(result.plan.walls) + result.notes["wall-band-lines"] == 3988
    assert report["counts"]["block_depth"] == 1


def test_5_mm_header_on_inch_house_xref_layers_doors_and_kitchen_label():
    _, report, _ = _import(P5)
    assert report["units"]["name"] == "mm" and "likely unit: in" in _units_warning(report)
    result, report_in, _ = _import(P5, "in")
    assert _size(report_in) == pytest.approx((24.45, 23.79), abs=0.01)    # 962.744 x 936.782 in
    roles = _roles(report_in)
    assert roles["xref-Bishop-Overland-08$0$A-WALL"] == "wall"
    assert roles["xref-Bishop-Overland-08$0$A-OPENING"] == "opening"
    swings = [d for d in result.plan.doors if d.source == "swing"]
    assert len(swings) == 11                                              # MANIFEST #5: 11 swing arcs
    assert {round(d.width_m / INCH) for d in swings} <= {24, 28, 30, 36}
    texts = {lb.text for lb in result.plan.labels}
    assert "KITCHEN" in texts and "ENTRY" in texts                         # %%u removed
    assert not any(t.startswith("%%") for t in texts)


def test_6_office_floor_chinese_layers_mirrored_blocks_and_swings():
    result, report, _ = _import(P6)
    assert report["units"]["name"] == "mm" and report["units"]["warning"] is None
    assert _size(report) == pytest.approx((93.14, 34.04), abs=0.01)
    assert _roles(report)["WINDOW"] == "wall"                              # the base plan lives on WINDOW
    assert {"男厕", "女厕"} <= {lb.text for lb in result.plan.labels}
    assert len([d for d in result.plan.doors if d.source == "swing"]) >= 10
    assert all(0.5 <= d.width_m <= 1.5 for d in result.plan.doors)
    assert report["counts"]["block_depth"] == 3


def test_7_unitless_apartment_floor_door_blocks_attribs_and_speed():
    result, report, seconds = _import(P7)
    assert report["units"]["name"] == "in"
    assert "door sizes" in report["units"]["reason"]
    assert _size(report) == pytest.approx((106.81, 40.18), abs=0.01)      # 4205.0 x 1581.9 in
    blocks = [d for d in result.plan.doors if d.source == "block"]
    assert len(blocks) == 57                                              # MANIFEST #7: 57 DOOR inserts
    assert {round(d.width_m / INCH, 6) for d in blocks} == {30, 32, 36}
    texts = {lb.text for lb in result.plan.labels}
    assert {"A101", "A112", "LOBBY", "CORRIDOR"} <= texts
    assert seconds < 10.0                                                 # measured ≈ 2 s on 2 cores


def test_8_shopping_mall_openings_and_scale_warning():
    result, report, _ = _import(P8)
    assert report["units"]["name"] == "m"
    doors = result.plan.doors
    assert len(doors) == 89 and {d.source for d in doors} == {"opening-line"}   # 89 LINEs on Tueren
    warning = _units_warning(report)
    assert "openings on layer Tueren" in warning and "scale may be wrong" in warning
    assert any(i["kind"] == "skipped" and "IMAGE" in i["message"] for i in report["issues"])   # raster underlay


def test_9_gallery_obstacle_polygons_and_walkable_area():
    result, report, _ = _import(P9)
    assert report["units"]["name"] == "m" and report["units"]["warning"] is None
    assert _size(report) == pytest.approx((45.49, 29.92), abs=0.01)
    roles = _roles(report)
    assert roles["jps-obstacles"] == "solid" and roles["jps-walkablearea"] == "wall"
    assert roles["jps-exits"] == "ignore"
    assert len(result.plan.solids) >= 16


def test_10_factory_hall_unit_note_nested_furniture_and_office_labels():
    _, report, _ = _import(P10)
    warning = _units_warning(report)
    assert "likely unit: m" in warning and "Measurements in [m]" in warning
    result, report_m, _ = _import(P10, "m")
    assert _size(report_m) == pytest.approx((60.73, 26.58), abs=0.01)
    doors = result.plan.doors
    assert len(doors) == 9 and all(d.width_m == pytest.approx(1.0) for d in doors)
    texts = {lb.text for lb in result.plan.labels}
    assert {"Office 1", "Office 5", "Factory hall", "Hallway"} <= texts
    assert report_m["counts"]["block_depth"] == 3
    assert _roles(report_m)["CHAIRS"] == "furniture"


def test_11_binary_schedule_sheet_is_read_with_a_not_a_plan_warning():
    _, report, _ = _import(P11)
    assert report["binary"] is True and report["dxf_version"] == "AC1032"
    assert _size(report) == pytest.approx((84.1, 29.7), abs=0.01)         # two A3 sheets at 1:100
    kinds = {i["kind"] for i in report["issues"]}
    assert "not-a-plan" in kinds
