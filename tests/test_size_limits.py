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
    # the advice is computed: at 30° the run has 12 uniform slices and 8 guards beside the four
    # wall directions (which are uniform ones), 4 × 20 = 80 ≤ 100; at 22.5°, 16 + 8 = 24 slices, 96 ≤ 100
    assert "use a coarser --heading-step (e.g. 22.5°) or crop with --window" in str(exc.value)
    # and the advice works: the run it names is accepted
    run_check(plan, ff.rectangle_vehicle(1, 0.5), [Station("a", 1, 1)], heading_step_deg=22.5, quick=True)


def test_too_many_edges(monkeypatch):
    monkeypatch.setattr(limits, "MAX_EDGES", 3)
    plan = Plan.from_geometries(walls=[shapely.box(0, 0, 10, 10)], source="big.dxf")
    with pytest.raises(LimitExceeded, match=r"^big.dxf: the plan has 4 obstacle edges, above the limit of 3"):
        run_check(plan, ff.rectangle_vehicle(1, 0.5), [Station("a", 1, 1)])


def test_too_many_edges_advises_a_window_the_limit_accepts(monkeypatch):
    # 50 separate squares of 4 edges each in a row, 10 m apart: 200 edges
    walls = [shapely.box(10 * i, 0, 10 * i + 1, 1).exterior for i in range(50)]
    plan = Plan.from_geometries(walls=walls, source="row.dxf")
    monkeypatch.setattr(limits, "MAX_EDGES", 40)
    with pytest.raises(LimitExceeded) as exc:
        run_check(plan, ff.rectangle_vehicle(1, 0.5), [Station("a", 245.5, 0.5)])
    text = str(exc.value)
    assert "--window " in text
    window = tuple(float(v) for v in text.split("--window ")[1].split(" ")[0].split(","))
    x0, y0, x1, y1 = window
    assert x0 < 245.5 < x1 and y0 <= 0.0 and y1 >= 1.0      # around the middle, the whole height
    cropped = [w for w in walls if shapely.box(*window).intersects(w)]
    assert 4 * len(cropped) <= 40                           # what the limit accepts


def test_an_advised_window_holds_the_stations(monkeypatch):
    # the same row of squares with the station at its west end: a window about the middle of the
    # drawing would leave it out, and the run the advice names would then refuse the station
    walls = [shapely.box(10 * i, 0, 10 * i + 1, 1).exterior for i in range(50)]
    plan = Plan.from_geometries(walls=walls, source="row.dxf")
    stations = [Station("a", 5.5, 0.5), Station("b", 25.5, 0.5)]
    limits_edges = 40
    monkeypatch.setattr(limits, "MAX_EDGES", limits_edges)
    with pytest.raises(LimitExceeded) as exc:
        run_check(plan, ff.rectangle_vehicle(1, 0.5), stations)
    window = tuple(float(v) for v in str(exc.value).split("--window ")[1].split(" ")[0].split(","))
    x0, y0, x1, y1 = window
    assert x0 <= 5.5 - 2.0 and x1 >= 25.5 + 2.0                 # both stations and room around them
    cropped = [w for w in walls if shapely.box(*window).intersects(w)]
    assert 4 * len(cropped) <= limits_edges                      # what the limit accepts


def test_advised_step_is_the_finest_the_limit_accepts():
    # without a slice count: uniform slices plus at most 30 wall-direction and pose slices
    assert limits.advised_step_deg(10, None) == 1.0
    step = limits.advised_step_deg(40_000)
    assert 40_000 * (round(360 / step) + 30) <= limits.MAX_EDGE_SLICES
    finer = limits.ADVICE_STEPS_DEG[limits.ADVICE_STEPS_DEG.index(step) - 1]
    assert 40_000 * (round(360 / finer) + 30) > limits.MAX_EDGE_SLICES
    assert limits.advised_step_deg(10 ** 9) is None


def test_size_refuses_a_run_too_large_before_any_evaluation_and_its_advice_works(tmp_path, monkeypatch, capsys):
    # sizing builds one slice set per evaluation: the same limit as the check, before the first one
    import re

    import floorfit.analysis.sizing as sizing_module
    import floorfit.cspace.slices as slices_module
    from floorfit.cli import main
    from floorfit.demo import write_demo_site

    demo = write_demo_site(tmp_path / "plans")
    edges = ff.load_plan(demo["plan"]).edge_count()
    monkeypatch.setattr(limits, "MAX_EDGE_SLICES", edges * 40)      # about 40 slices allowed
    size = ["size", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--site", str(demo["site"]),
            "--vary", "width", "--precision", "0.1", "--quiet", "--heading-step", "3"]
    built = []
    with monkeypatch.context() as m:         # no slice may be built before the refusal
        for module in (slices_module, sizing_module):
            m.setattr(module, "build_slices", lambda *a, **k: built.append(1))
        code = main(size)
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and not built
    assert err[-1].startswith(f"floorfit size: {demo['plan']}: ") and f"above the limit of {edges * 40:,}" in err[-1]
    step = re.search(r"--heading-step \(e\.g\. ([0-9.]+)°\)", err[-1]).group(1)
    assert float(step) > 3.0
    # followed, the advice is accepted: the sizing runs (exit 0 fits, 1 does not fit)
    assert main(size[:-1] + [step]) in (0, 1)
