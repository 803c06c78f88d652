"""Big drawings: the invented office floor of benchmarks/big_drawing.py, the importer's lean paths
(model-space LINEs without numpy, ignored linework kept for the extent only, entities freed once
read) and size-limit advice that the limits accept when followed.

Timings are never asserted here; benchmarks/big_drawing.py --measure reports them.
"""

import math
import re

import ezdxf
import numpy as np
import pytest

import floorfit.cspace.sizelimits as limits
from benchmarks.big_drawing import office_floor, write_office_dxf
from floorfit.cli import main
from floorfit.cspace.slices import choose_headings
from floorfit.errors import LimitExceeded
from floorfit.plan.dxf import load_plan
from floorfit.plan.dxf.importer import import_drawing
from floorfit.plan.dxf.limits import ImportLimits
from floorfit.plan.dxf.roles import RoleResolver
from floorfit.plan.dxf.walker import walk_modelspace
from floorfit.vehicles.rigid import load_vehicle

ROBOT = 'name = "robot"\n[footprint]\nwidth = 0.6\nlength = 0.8\n[motion]\nmode = "differential"\n'


@pytest.fixture(scope="module")
def small_floor(tmp_path_factory):
    """Two offices on each side of one corridor (4 offices)."""
    folder = tmp_path_factory.mktemp("floor")
    info = write_office_dxf(folder / "office.dxf", columns=2, modules=1)
    (folder / "robot.toml").write_text(ROBOT, encoding="utf-8")
    return folder, info


def test_generator_writes_the_entities_it_reports(small_floor):
    folder, info = small_floor
    doc = ezdxf.readfile(info["path"])                      # an independent reader of the file written
    msp = doc.modelspace()
    lines = msp.query("LINE")
    assert len(lines) == info["lines"] == office_floor(2, 1).line_count
    # A-WALL: outer wall 2 × 4 lines; each office row 3 partitions × 2 lines, and per office the
    # corridor wall's two faces split at the door (4 lines) and two jambs: 6 + 2 × 6 = 18 per row
    assert len(msp.query('LINE[layer=="A-WALL"]')) == 8 + 2 * 18
    assert len(msp.query('INSERT[name=="DOOR-0900"]')) == 4
    assert len(msp.query("TEXT")) == len(msp.query("MTEXT")) == 4 == info["rooms"]
    line_handles = {int(e.dxf.handle, 16) for e in lines}
    other = {int(e.dxf.handle, 16) for e in doc.entitydb.values() if e.dxftype() != "LINE"}
    assert len(line_handles) == len(lines) and not line_handles & other   # no LINE handle collides
    assert int(doc.header["$HANDSEED"], 16) > max(line_handles)          # the seed as written lies beyond them
    assert doc.header["$INSUNITS"] == 4


def test_generated_floor_imports_as_drawn(small_floor):
    _, info = small_floor
    result = import_drawing(info["path"])
    plan = result.plan
    assert plan.units == "mm"
    assert [d.source for d in plan.doors] == ["block"] * 4
    assert all(d.width_m == pytest.approx(0.9) for d in plan.doors)
    assert sorted(lb.text for lb in plan.labels)[:2] == ["0001", "0002"]
    # the glazing mullions reach the outer faces: the drawn extent is the floor's
    w, h = info["size_m"]
    assert result.drawn_extent_m == pytest.approx([0.0, 0.0, w, h], abs=1e-9)
    # chairs, tile and ceiling grids, sockets are never obstacles
    assert not {"A-FURN-CHAIR", "A-FLOR-PATT", "A-CLNG-GRID", "E-POWR-DEVC"} & set(plan.wall_layers)


def _prims(path, release):
    doc = ezdxf.readfile(path)
    walk = walk_modelspace(doc, str(path), RoleResolver(None), ImportLimits(), release=release)
    return doc, walk


def test_walk_that_frees_model_space_reads_the_same(small_floor):
    _, info = small_floor
    kept_doc, kept = _prims(info["path"], release=False)
    freed_doc, freed = _prims(info["path"], release=True)
    assert not list(freed_doc.modelspace()) and len(list(kept_doc.modelspace())) == info["entities"]
    assert len(freed.prims) == len(kept.prims)
    for a, b in zip(kept.prims, freed.prims):
        assert (a.kind, a.layer, a.role, a.handle, a.z0, a.z1) == (b.kind, b.layer, b.role, b.handle, b.z0, b.z1)
        np.testing.assert_array_equal(a.paths(1.0)[0], b.paths(1.0)[0])
    assert kept.layer_counts == freed.layer_counts
    np.testing.assert_array_equal(kept.extent_only_points(), freed.extent_only_points())


def _line_doc(path, start, end, **attribs):
    """A LINE in model space and the same LINE in a block inserted at the origin without scale."""
    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 6
    msp = doc.modelspace()
    msp.add_line(start, end, dxfattribs={"layer": "WALL", **attribs})
    blk = doc.blocks.new("B")
    blk.add_line(start, end, dxfattribs={"layer": "WALL", **attribs})
    msp.add_blockref("B", (0, 0), dxfattribs={"layer": "WALL"})
    msp.add_line((0, 0), (10, 0), dxfattribs={"layer": "WALL"})      # something to stand in the plan
    doc.saveas(path)
    return path


@pytest.mark.parametrize("start,end,attribs", [
    ((-0.0, 1.5, 0.0), (4.25, -0.0, 0.0), {}),                       # negative zeros
    ((1.0, 2.0, 0.75), (3.0, 2.0, 0.75), {}),                        # above the floor: an overhead line
    ((1.0, 2.0, 0.0), (3.0, 2.0, 0.0), {"thickness": 1.2}),          # an extruded line (general path)
    ((1e-13, 2.0, 1e-13), (3.0, 2.0, 0.0), {}),                      # z within 1e-12 of the floor
])
def test_model_space_line_is_read_as_the_general_path_reads_it(tmp_path, start, end, attribs):
    _, walk = _prims(_line_doc(tmp_path / "l.dxf", start, end, **attribs), release=True)
    direct, in_block = walk.prims[0], walk.prims[1]
    assert in_block.top != in_block.handle                          # read through the INSERT's transform
    np.testing.assert_array_equal(direct.points, in_block.points)
    assert [math.copysign(1.0, v) for v in direct.points.ravel()] == \
        [math.copysign(1.0, v) for v in in_block.points.ravel()]
    assert (direct.z0, direct.z1) == (in_block.z0, in_block.z1)


def test_ignored_linework_counts_for_the_extent_only(tmp_path):
    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 6
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (10, 0), (10, 5), (0, 5)], close=True, dxfattribs={"layer": "A-WALL"})
    msp.add_line((40, 30), (45, 32), dxfattribs={"layer": "A-FLOR-PATT"})     # floor pattern, far away
    doc.saveas(tmp_path / "p.dxf")
    result = import_drawing(tmp_path / "p.dxf")
    assert result.drawn_extent_m == [0.0, 0.0, 45.0, 32.0]
    assert list(result.plan.extent_m) == [0.0, 0.0, 10.0, 5.0]
    assert list(result.plan.wall_layers) == ["A-WALL"]
    cropped = import_drawing(tmp_path / "p.dxf", window=(-1, -1, 42, 31))
    assert cropped.drawn_extent_m == [0.0, 0.0, 40.0, 30.0]         # one end of the far line is inside
    cropped = import_drawing(tmp_path / "p.dxf", window=(-1, -1, 39, 29))
    assert cropped.drawn_extent_m == [0.0, 0.0, 10.0, 5.0]          # both are outside


def _refusal(plan, n_slices, slices_for_step=None) -> str:
    with pytest.raises(LimitExceeded) as exc:
        limits.check_problem_size(plan, n_slices, slices_for_step)
    return str(exc.value)


def test_advised_heading_step_is_accepted(small_floor, monkeypatch):
    folder, info = small_floor
    plan = load_plan(info["path"])
    vehicle = load_vehicle(folder / "robot.toml")
    edges = plan.edge_count()
    default = len(choose_headings(plan, vehicle))

    def count(step):
        return len(choose_headings(plan, vehicle, heading_step_deg=step))

    # a limit that refuses the default step (finer than 5°) and accepts 10°
    monkeypatch.setattr(limits, "MAX_EDGE_SLICES", edges * count(10.0))
    assert default > count(10.0)
    text = _refusal(plan, default, count)
    step = float(re.search(r"--heading-step \(e\.g\. ([0-9.]+)°\)", text).group(1))
    assert step == 10.0                                  # the finest step of the advice list that passes
    limits.check_problem_size(plan, count(step), count)  # followed, the advice is accepted
    assert edges * count(9.0) > limits.MAX_EDGE_SLICES   # and the next finer one would not be


def test_advised_window_is_accepted_by_the_cropped_run(small_floor, monkeypatch):
    folder, info = small_floor
    plan = load_plan(info["path"])
    vehicle = load_vehicle(folder / "robot.toml")
    cells = choose_headings(plan, vehicle)
    monkeypatch.setattr(limits, "MAX_EDGES", plan.edge_count() // 3)
    text = _refusal(plan, len(cells))
    assert text.startswith(f"{info['path']}: the plan has {plan.edge_count():,} obstacle edges")
    window = tuple(float(v) for v in re.search(r"--window ([-0-9.,e]+)", text).group(1).split(","))
    cropped = load_plan(info["path"], window=window)                # the run the advice names
    assert 0 < cropped.edge_count() <= limits.window_budget(len(cells))
    limits.check_problem_size(cropped, len(choose_headings(cropped, vehicle)))


def test_check_refuses_before_building_slices_with_one_line(small_floor, monkeypatch, capsys):
    folder, info = small_floor
    monkeypatch.setattr(limits, "MAX_EDGE_SLICES", 1000)
    built = []
    import floorfit.analysis.check as check_module
    monkeypatch.setattr(check_module, "build_slices", lambda *a, **k: built.append(1))
    code = main(["check", info["path"], "--vehicle", str(folder / "robot.toml"), "--out", str(folder / "out"),
                 "--quiet", "--no-cache"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and not built
    assert err[-1].startswith(f"floorfit check: {info['path']}: ") and "above the limit of 1,000" in err[-1]
    assert "Traceback" not in "\n".join(err)


@pytest.mark.parametrize("pattern,role,needed", [
    ("ANSI31", "wall", False), ("SOLID", "wall", False), ("AR-CARPET", "wall", False),
    ("USER-7", "solid", False), ("USER-7", "wall", True), ("HONEY", "opening", True),
])
def test_hatch_thickness_is_measured_only_where_it_decides(pattern, role, needed):
    from floorfit.plan.dxf.hatches import hatch_needs_thickness, hatch_policy
    assert hatch_needs_thickness(pattern, role) is needed
    thin, wide = hatch_policy(pattern, role, 0.1)[0], hatch_policy(pattern, role, 10.0)[0]
    assert (thin != wide) is needed            # where it is not measured, the thickness changes nothing


def test_cyclic_gc_is_paused_for_the_import_and_restored(small_floor):
    import gc

    from floorfit.plan.dxf.reading import no_cyclic_gc
    _, info = small_floor
    assert gc.isenabled()
    seen = []
    with no_cyclic_gc():
        seen.append(gc.isenabled())
        with no_cyclic_gc():              # nested: the outer pause stands
            pass
        seen.append(gc.isenabled())
    assert seen == [False, False] and gc.isenabled()
    with pytest.raises(LimitExceeded):      # restored when the import fails too
        import_drawing(info["path"], limits=ImportLimits(max_expanded_entities=10))
    assert gc.isenabled()
    gc.disable()
    try:                                    # a caller that paused it keeps it paused
        import_drawing(info["path"])
        assert not gc.isenabled()
    finally:
        gc.enable()
