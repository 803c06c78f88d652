"""Checks on IFC storeys: the built corridor gives the same findings as the same layout drawn as
DXF with a site file of heights; the duplex ground floor end to end with findings named after
its spaces; the pavilion (no storeys) at building level; BCF output valid against
buildingSMART's schemas (../shared/bcf-xsd)."""

from __future__ import annotations

import json
import zipfile

import pytest
from ifc_fixtures import (
    BCF_XSD,
    DOOR_HEAD,
    DOOR_W,
    DUCT_Z,
    DUPLEX,
    PAVILION,
    build_corridor,
    have_models,
    model_path,
    write_corridor_dxf,
)

import floorfit as ff
from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.cli import main
from floorfit.plan.dxf import load_plan
from floorfit.plan.ifc import band_for_height, load_ifc
from floorfit.plan.site import apply_height_ranges, read_site

STATIONS = [Station("WEST", 1.0, 1.3), Station("EAST", 11.0, 0.9)]


def _key(f):
    return (f.kind, f.cause, round(f.x, 1), round(f.y, 1),
            None if f.clear_width_m is None else round(f.clear_width_m, 2),
            None if f.clear_height_m is None else round(f.clear_height_m, 2), tuple(f.cuts_off))


@pytest.fixture(scope="module")
def corridor(tmp_path_factory):
    folder = tmp_path_factory.mktemp("corridor")
    dxf, site_file = write_corridor_dxf(folder)
    site = read_site(site_file)
    return build_corridor(folder / "corridor.ifc"), apply_height_ranges(load_plan(dxf, roles=site.roles),
                                                                          site.heights), site


@pytest.mark.parametrize("width, height, expect", [
    (0.6, 0.4, "passes"),            # under the table, through the door, under the duct
    (0.9, 1.0, "width"),             # wider than the 0.80 m door at every heading
    (0.6, 2.35, "height"),           # the 2.10 m door head stops it
])
def test_built_model_matches_the_same_layout_drawn_as_dxf(corridor, width, height, expect):
    ifc_path, dxf_plan, site = corridor
    vehicle = ff.rectangle_vehicle(max(width, 0.9), width, height_m=height, name=f"{width} x {height}")
    ifc_plan = load_ifc(ifc_path, band_top_m=band_for_height(height))
    from_model = run_check(ifc_plan, vehicle, STATIONS, site=site, heading_step_deg=10.0)
    from_drawing = run_check(dxf_plan, vehicle, STATIONS, site=site, heading_step_deg=10.0)
    assert sorted(map(_key, from_model.findings)) == sorted(map(_key, from_drawing.findings))
    assert from_model.reachable == from_drawing.reachable
    blocked = [f for f in from_model.findings if f.kind == "blocked"]
    if expect == "passes":
        assert from_model.reachable["WEST"]["EAST"] and not blocked
    else:
        assert not from_model.reachable["WEST"]["EAST"]
        f = min(blocked, key=lambda b: abs(b.x - 6.1))        # the door (the duct may stop it too)
        assert f.cause == expect and f.cuts_off == ["EAST"]
        if expect == "width":
            assert f.clear_width_m == pytest.approx(DOOR_W, abs=0.01)
        else:
            assert f.clear_height_m == pytest.approx(DOOR_HEAD) and f.needed_height_m == pytest.approx(height)
        assert "doorway D01" in (f.label or "")


def test_duct_underside_is_the_height_that_counts_beyond_the_door(corridor):
    ifc_path, _, _ = corridor
    plan = load_ifc(ifc_path, band_top_m=band_for_height(2.3))
    ducts = [h for h, c in zip(plan.solid_heights, plan.solid_layers) if c == "IfcDuctSegment"]
    assert [tuple(h) for h in ducts] == [pytest.approx(DUCT_Z)]


# -- BCF ----------------------------------------------------------------------------------------

def _schemas():
    xmlschema = pytest.importorskip("xmlschema")
    return {name: xmlschema.XMLSchema(str(BCF_XSD / f"{name}.xsd"))
            for name in ("markup", "visinfo", "version", "extensions", "project")}


def _validate_bcf(path, schemas):
    """Every part valid; returns {topic folder: (markup text, viewpoint text)}."""
    topics = {}
    with zipfile.ZipFile(path) as zf:
        for name in zf.namelist():
            data = zf.read(name)
            if name.endswith(".png"):
                assert data.startswith(b"\x89PNG\r\n\x1a\n")
                continue
            text = data.decode("utf-8-sig")
            kind = {"bcf.version": "version", "extensions.xml": "extensions", "project.bcfp": "project"}.get(name)
            if kind is None:
                kind = "markup" if name.endswith("markup.bcf") else "visinfo"
                topics.setdefault(name.split("/")[0], {})[kind] = text
            schemas[kind].validate(text)
    return topics


def test_official_examples_validate():
    schemas = _schemas()
    for example in sorted((BCF_XSD / "examples").glob("*.bcf")):
        assert _validate_bcf(example, schemas)


def _check_bcf_against(topics, findings_json, model_file, floor_z):
    from xml.etree import ElementTree as ET

    import ifcopenshell

    model = ifcopenshell.open(str(model_file))
    findings = findings_json["findings"]
    assert len(topics) == len(findings) > 0
    cameras = []
    for parts in topics.values():
        vis = ET.fromstring(parts["visinfo"])
        p = vis.find("OrthogonalCamera/CameraViewPoint")
        cameras.append((float(p.find("X").text), float(p.find("Y").text), float(p.find("Z").text)))
        assert vis.find("OrthogonalCamera/CameraDirection/Z").text == "-1.0"
        ids = [c.get("IfcGuid") for c in vis.iter("Component")]
        assert ids, "every topic selects the elements around it"
        for gid in ids:
            assert model.by_guid(gid) is not None
        markup = ET.fromstring(parts["markup"])
        assert markup.find("Topic/Title").text.split()[0] in {f["id"] for f in findings}
    for f in findings:
        assert any(abs(x - f["x"]) <= 0.01 and abs(y - f["y"]) <= 0.01 and z > floor_z for x, y, z in cameras), f


def test_corridor_check_writes_valid_bcf(corridor, tmp_path, capsys):
    ifc_path, _, _ = corridor
    vehicle = tmp_path / "tall.toml"
    vehicle.write_text('name = "tall"\n[footprint]\nwidth = 0.6\nlength = 0.7\nheight = 2.35\n'
                       '[motion]\nmode = "omni"\n', encoding="utf-8")
    out = tmp_path / "report"
    code = main(["check", str(ifc_path), "--vehicle", str(vehicle), "--station", "WEST=1.0,1.3",
                 "--station", "EAST=11.0,0.9", "--out", str(out), "--quiet", "--heading-step", "15"])
    assert code == 1
    assert (out / "findings.bcf").is_file()
    report = json.loads((out / "findings.json").read_text(encoding="utf-8"))
    topics = _validate_bcf(out / "findings.bcf", _schemas())
    _check_bcf_against(topics, report, ifc_path, 0.0)
    # a second run replaces the folder's files, the BCF included (floorfit recognises its own file)
    assert main(["check", str(ifc_path), "--vehicle", str(vehicle), "--station", "WEST=1.0,1.3",
                 "--station", "EAST=11.0,0.9", "--out", str(out), "--quiet", "--heading-step", "15"]) == 1


@pytest.mark.slow
@pytest.mark.skipif(not have_models(), reason="../shared/models-ifc not present")
def test_duplex_ground_floor_end_to_end(tmp_path, capsys):
    out = tmp_path / "duplex"
    vehicle = tmp_path / "robot.toml"
    vehicle.write_text('name = "robot"\n[footprint]\nwidth = 0.62\nlength = 0.9\nheight = 1.2\n'
                       '[motion]\nmode = "differential"\n', encoding="utf-8")
    stations = ["LIVING-A=4.21,-14.99", "KITCHEN-A=1.58,-11.95", "FOYER-A=7.31,-12.93", "BATH-A=7.04,-8.75"]
    argv = ["check", str(model_path(DUPLEX)), "--storey", "Level 1", "--vehicle", str(vehicle), "--out", str(out),
            "--quiet", "--heading-step", "10"]
    for s in stations:
        argv += ["--station", s]
    code = main(argv)
    assert code in (0, 1)
    report = json.loads((out / "findings.json").read_text(encoding="utf-8"))
    labels = [f["label"] or "" for f in report["findings"]]
    spaces = ("Living Room", "Kitchen", "Foyer", "Bathroom", "Stair", "Room")
    assert report["findings"] and sum(any(s in lb for s in spaces) for lb in labels) >= 1, labels
    topics = _validate_bcf(out / "findings.bcf", _schemas())
    _check_bcf_against(topics, report, model_path(DUPLEX), 0.0)


@pytest.mark.slow
@pytest.mark.skipif(not have_models(), reason="../shared/models-ifc not present")
def test_pavilion_is_checked_at_building_level():
    plan = load_ifc(model_path(PAVILION), band_top_m=band_for_height(1.2))
    assert any("no storeys" in i.message for i in plan.issues)
    vehicle = ff.rectangle_vehicle(0.9, 0.62, height_m=1.2, name="robot")
    # two points on the podium (MANIFEST: walls from z 0; floor made of proxies), 6 m apart
    result = run_check(plan, vehicle, [Station("A", 0.0, -4.0), Station("B", 6.0, -4.0)], heading_step_deg=15.0)
    assert result.plan.model["storey"] is None and result.settings
