"""Doors of building models: closed by name from the site file ([doors] closed), short names
(Name or Tag), findings named after the room they lie in, and the leaf-open assumption stated
in the report's notes. Uses the corridor built in ``ifc_fixtures`` (door D01, space C01)."""

from __future__ import annotations

import json

import pytest
from ifc_fixtures import DUPLEX, build_corridor, have_models, imported

import floorfit as ff
from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.cli import main
from floorfit.errors import SiteError
from floorfit.plan.ifc import load_ifc
from floorfit.plan.site import DOOR_OPEN_NOTE, close_doors, read_site

STATIONS = [Station("WEST", 1.0, 1.3), Station("EAST", 11.0, 0.9)]


@pytest.fixture(scope="module")
def corridor(tmp_path_factory):
    return build_corridor(tmp_path_factory.mktemp("doors") / "corridor.ifc")


def _site(tmp_path, text):
    p = tmp_path / "site.toml"
    p.write_text(text, encoding="utf-8")
    return p


def test_site_reads_closed_doors_with_strict_keys(tmp_path):
    assert read_site(_site(tmp_path, '[doors]\nclosed = ["D01", "D-12"]\n')).closed_doors == ("D01", "D-12")
    assert read_site(_site(tmp_path, "")).closed_doors == ()
    with pytest.raises(SiteError) as e:
        read_site(_site(tmp_path, '[doors]\nshut = ["D01"]\n'))
    assert "site.toml" in str(e.value) and "doors.shut" in str(e.value) and "\n" not in str(e.value)
    with pytest.raises(SiteError) as e:
        read_site(_site(tmp_path, '[doors]\nclosed = "D01"\n'))
    assert "doors.closed" in str(e.value)


def test_a_closed_door_stops_the_vehicle(corridor):
    plan = load_ifc(corridor, band_top_m=0.5)
    vehicle = ff.rectangle_vehicle(0.9, 0.6, height_m=0.4, name="small")
    assert run_check(plan, vehicle, STATIONS, heading_step_deg=10.0).reachable["WEST"]["EAST"]
    shut = close_doors(plan, ["D01"])
    assert not shut.doors and any("closed (site file): D01" in i.message for i in shut.issues)
    assert len(shut.walls) == len(plan.walls) + 1 and shut.wall_layers[-1] == "closed door"
    assert not run_check(shut, vehicle, STATIONS, heading_step_deg=10.0).reachable["WEST"]["EAST"]
    # by GlobalId too; an unknown name is reported with the doors there are
    gid = plan.doors[0].handle
    assert not close_doors(plan, [gid]).doors
    other = close_doors(plan, ["D99"])
    assert other.doors and any("D99" in i.message and "D01" in i.message for i in other.issues)


def test_findings_are_named_after_the_room_and_the_report_states_the_door_assumption(corridor, tmp_path):
    vehicle = tmp_path / "wide.toml"
    vehicle.write_text('name = "wide"\n[footprint]\nwidth = 0.9\nlength = 1.0\nheight = 1.0\n', encoding="utf-8")
    out = tmp_path / "out"
    code = main(["check", str(corridor), "--vehicle", str(vehicle), "--out", str(out), "--quiet",
                 "--heading-step", "10", "--station", "WEST=1.0,1.3", "--station", "EAST=11.0,0.9"])
    assert code == 1
    report = json.loads((out / "findings.json").read_text(encoding="utf-8"))
    assert DOOR_OPEN_NOTE in report["notes"]
    labels = [f["label"] or "" for f in report["findings"]]
    assert any("doorway D01" in lb and "in C01 Corridor" in lb for lb in labels), labels


@pytest.mark.skipif(not have_models(), reason="../shared/models-ifc not present")
def test_revit_door_names_are_shortened_to_their_tag():
    plan = imported(DUPLEX).plan
    names = {d.label for d in plan.doors}
    assert names and all(":" not in n and len(n) <= 24 for n in names)
    full = plan.model["door_names"]
    some = plan.doors[0]
    assert some.label in full[some.handle] and any(":" in a for a in full[some.handle])
