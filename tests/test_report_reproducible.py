"""report.html and overlay.dxf are byte-identical between runs of the same input (issue 16),
as findings.json already was: no clock time, random GUID or run-dependent order in them."""

import shapely

import floorfit as ff
from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.plan.model import Plan
from floorfit.plan.site import Site
from floorfit.report import write_report


def test_report_and_overlay_are_byte_identical_between_runs(tmp_path):
    walls = [shapely.box(0, 0, 12.2, 5).exterior]
    solids = [shapely.box(6, 0, 6.2, 2.1), shapely.box(6, 2.9, 6.2, 5)]      # a 0.8 m door
    plan = Plan.from_geometries(walls=walls, solids=solids, source="hall.dxf")
    veh = ff.rectangle_vehicle(0.9, 0.62, margin=0.05, name="tote robot")
    stations = [Station("A", 3.0, 2.5), Station("B", 9.0, 2.5, 0.0)]
    site = Site(required_clearance_m=0.45, clearance_reference="b56.5", routes=[("A", "B")])
    outs = []
    for run in range(2):
        # a fresh check each time: nothing may carry over between the runs but the input
        result = run_check(plan, veh, stations, site=site, heading_step_deg=10.0)
        paths = write_report(result, tmp_path / f"run{run}", formats=("html", "json", "csv", "dxf"), quiet=True)
        outs.append({k: p.read_bytes() for k, p in paths.items()})
    for kind in ("html", "dxf", "json", "csv"):
        assert outs[0][kind] == outs[1][kind], kind
    assert b"<svg" in outs[0]["html"] or b"data:image/svg" in outs[0]["html"]
