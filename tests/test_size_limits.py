"""Beyond the documented size limits the check stops at once and says what to do."""

import pytest
import shapely

import floorfit as ff
import floorfit.cspace.sizelimits as limits
from floorfit.analysis.check import run_check
from floorfit.analysis.findings import Station
from floorfit.errors import LimitExceeded
from floorfit.plan.model import Plan


def test_too_many_edge_slices_gives_advice(monkeypatch):
    monkeypatch.setattr(limits, "MAX_EDGE_SLICES", 100)
    plan = Plan.from_geometries(walls=[shapely.box(0, 0, 10, 10)], source="site.dxf")
    with pytest.raises(LimitExceeded) as exc:
        run_check(plan, ff.rectangle_vehicle(1, 0.5), [Station("a", 1, 1)], heading_step_deg=5.0)
    # 4 edges × 72 uniform slices plus the guarded wall-direction slices
    assert str(exc.value).startswith("site.dxf: 4 obstacle edges × ")
    assert "use a coarser --heading-step (e.g. 15°) or crop with --window" in str(exc.value)


def test_too_many_edges(monkeypatch):
    monkeypatch.setattr(limits, "MAX_EDGES", 3)
    plan = Plan.from_geometries(walls=[shapely.box(0, 0, 10, 10)], source="big.dxf")
    with pytest.raises(LimitExceeded, match=r"^big.dxf: the plan has 4 obstacle edges, above the limit of 3"):
        run_check(plan, ff.rectangle_vehicle(1, 0.5), [Station("a", 1, 1)])
