"""The divide-and-conquer union, shared half-turn slices, worker pools and the linework clean-up.

Each speed-up must leave the free space as it was: the cascaded union is compared with one
sweep over the same rings and with an independent pose test (shapely's exact predicates on
the footprint placed in the drawing), shared slices with slices computed one by one, several
workers with one, and the cleaned linework with the input segment by segment in exact
arithmetic.
"""

import math

import numpy as np
import pytest
import shapely

from floorfit.cspace import freespace, slicepool
from floorfit.cspace import slices as cspace
from floorfit.cspace.freespace import obstacle_clusters
from floorfit.cspace.headings import make_heading_cells
from floorfit.cspace.minkowski import prepare_obstacles
from floorfit.cspace.roadmap import build_roadmap
from floorfit.cspace.slices import build_slices, half_turn_twins, slice_recipe
from floorfit.plan.dxf.cleanup import _orient_exact, clean_segments
from floorfit.plan.model import Plan
from floorfit.vehicles.rigid import vehicle_from_outline


def _wavy(x0, y0, x1, y1, step=0.1, amp=0.01):
    """A wall drawn as many short segments that zig-zag by ``amp`` (as a flattened curve would)."""
    n = max(2, int(math.hypot(x1 - x0, y1 - y0) / step))
    t = np.linspace(0.0, 1.0, n + 1)
    x, y = x0 + t * (x1 - x0), y0 + t * (y1 - y0)
    nx_, ny_ = -(y1 - y0), x1 - x0
    norm = math.hypot(nx_, ny_)
    off = amp * ((np.arange(n + 1) % 2) * 2 - 1)
    off[0] = off[-1] = 0.0
    return np.c_[x + off * nx_ / norm, y + off * ny_ / norm]


def _rooms_plan(rooms=4, size=4.0, door=1.2) -> Plan:
    """A grid of rooms with doors in the middle of each wall: the outer ring is one cluster of about 800 segments."""
    walls = []
    span = rooms * size
    for i in range(rooms + 1):
        c = i * size
        for a in range(rooms):
            lo, hi = a * size, (a + 1) * size
            mid = 0.5 * (lo + hi)
            inner = 0 < i < rooms
            for s0, s1 in ((lo, mid - door / 2), (mid + door / 2, hi)) if inner else ((lo, hi),):
                walls.append(shapely.LineString(_wavy(c, s0, c, s1)))
                walls.append(shapely.LineString(_wavy(s0, c, s1, c)))
    walls.append(shapely.LineString([(0, 0), (span, 0)]))
    solids = [shapely.box(1.0, 1.0, 1.6, 1.4), shapely.box(9.0, 5.0, 9.5, 7.0)]
    return Plan.from_geometries(walls=walls, solids=solids)


CENTRED = [[0.4, -0.3], [0.4, 0.3], [-0.4, 0.3], [-0.4, -0.3]]          # 0.8 x 0.6, reference at the centre
OFFSET = [[0.55, -0.31], [0.55, 0.31], [-0.35, 0.31], [-0.35, -0.31]]   # reference on the axle


@pytest.fixture(scope="module")
def rooms():
    return _rooms_plan()


@pytest.fixture(scope="module")
def cells():
    return make_heading_cells(15.0, [0.0, 90.0, 180.0, 270.0])      # wall directions come in fours


def _same_free_space(a, b, tol_area=1e-9):
    assert len(a) == len(b)
    for k in range(len(a)):
        assert len(a.components[k]) == len(b.components[k]), k
        diff = shapely.symmetric_difference(a.free(k), b.free(k)).area
        assert diff < tol_area, (k, diff)


def test_rooms_plan_is_one_big_cluster(rooms, cells):
    veh = vehicle_from_outline(CENTRED, name="centred")
    obs = prepare_obstacles(rooms.walls, rooms.solids)
    labels = obstacle_clusters(obs, cspace.cluster_reach_m(slice_recipe(rooms, veh, cells, "sound")))
    # every wall piece touches the next: the cascade threshold is reached by one cluster
    assert np.bincount(labels).max() >= freespace.CASCADE_MIN_RINGS


@pytest.mark.parametrize("bound", ["sound", "optimistic"])
def test_cascaded_union_equals_one_sweep(rooms, cells, bound, monkeypatch):
    veh = vehicle_from_outline(OFFSET, name="axle")
    cascaded = build_slices(rooms, veh, cells=cells, bound=bound)
    monkeypatch.setattr(freespace, "CASCADE_MIN_RINGS", 10 ** 9)
    one_sweep = build_slices(rooms, veh, cells=cells, bound=bound)
    # the cascade grows the sound footprint by CASCADE_GUARD_M (64 grid steps, 6e-11 m) more:
    # areas differ by at most that times the boundary length
    _same_free_space(cascaded, one_sweep, tol_area=1e-7)
    assert sum(len(c) for c in cascaded.components) > len(cells)      # doors: several rooms joined


def test_cascaded_slices_are_clear_of_every_obstacle(rooms, cells):
    """Sample points of the free space; the footprint there (at the slice heading) meets no obstacle."""
    veh = vehicle_from_outline(OFFSET, name="axle")
    slices = build_slices(rooms, veh, cells=cells)
    obstacles = np.concatenate([rooms.walls, rooms.solids])
    tree = shapely.STRtree(obstacles)
    rng = np.random.default_rng(7)
    checked = 0
    for k in range(0, len(slices), 3):
        h = float(slices.cells.headings[k])
        for comp in slices.components[k]:
            x0, y0, x1, y1 = comp.bounds
            pts = shapely.points(rng.uniform(x0, x1, 60), rng.uniform(y0, y1, 60))
            pts = pts[shapely.contains(comp, pts)]
            for p in pts[:10]:
                foot = shapely.affinity.translate(shapely.affinity.rotate(veh.footprint, h, origin=(0, 0)),
                                                  p.x, p.y)
                assert not len(tree.query(foot, predicate="intersects")), (k, p.x, p.y)
                checked += 1
    assert checked > 100


def test_half_turn_twins_only_for_symmetric_footprints(rooms, cells):
    sym = vehicle_from_outline(CENTRED, name="centred")
    asym = vehicle_from_outline(OFFSET, name="axle")
    twins_sym = half_turn_twins(cells, slice_recipe(rooms, sym, cells, "sound").jobs)
    twins_asym = half_turn_twins(cells, slice_recipe(rooms, asym, cells, "sound").jobs)
    assert np.array_equal(twins_asym, np.arange(len(cells)))
    shared = np.flatnonzero(twins_sym != np.arange(len(cells)))
    assert len(shared) == len(cells) // 2              # every heading h ≥ 0 shares with h − 180°
    for k in shared:
        d = (cells.headings[k] - cells.headings[twins_sym[k]]) % 360.0
        assert abs(d - 180.0) < 1e-9


@pytest.mark.parametrize("bound", ["sound", "optimistic"])
def test_shared_slices_equal_slices_computed_one_by_one(rooms, cells, bound, monkeypatch):
    veh = vehicle_from_outline(CENTRED, name="centred")
    shared = build_slices(rooms, veh, cells=cells, bound=bound)
    assert shared.twins is not None and (shared.twins != np.arange(len(cells))).any()
    monkeypatch.setattr(cspace, "half_turn_twins", lambda cells, jobs: np.arange(len(jobs)))
    single = build_slices(rooms, veh, cells=cells, bound=bound)
    # h and h + 180° are computed from footprints rotated by different floating-point angles
    _same_free_space(shared, single)
    ga, gb = build_roadmap(shared), build_roadmap(single)
    assert sorted(ga.nodes) == sorted(gb.nodes) and sorted(ga.edges) == sorted(gb.edges)


def test_two_workers_give_the_same_slices_as_one(rooms, cells, monkeypatch):
    veh = vehicle_from_outline(OFFSET, name="axle")
    monkeypatch.setattr(slicepool, "POOL_MIN_WORK", 0)
    one = build_slices(rooms, veh, cells=cells, workers=1)
    two = build_slices(rooms, veh, cells=cells, workers=2)
    assert one.workers_used == 1 and two.workers_used == 2
    for a, b in zip(one.components, two.components):
        assert list(shapely.to_wkb(a)) == list(shapely.to_wkb(b))        # identical, not merely close


@pytest.mark.parametrize("name, outline", [("axle", OFFSET), ("centred, with twins", CENTRED)])
def test_roadmap_split_over_two_processes_is_the_same_graph(rooms, cells, monkeypatch, name, outline):
    from floorfit.cspace import roadmap as roadmap_module
    from floorfit.forking import Pending

    slices = build_slices(rooms, vehicle_from_outline(outline, name=name), cells=cells)
    one = build_roadmap(slices, workers=1)
    monkeypatch.setattr(roadmap_module, "SPLIT_MIN_VERTICES", 0)
    forked = []
    real_init = Pending.__init__

    def watching(self, *a, **kw):
        real_init(self, *a, **kw)
        forked.append(self.apart)

    monkeypatch.setattr(Pending, "__init__", watching)
    two = build_roadmap(slices, workers=2)
    assert forked == [True] and one.number_of_edges() > len(cells)
    # the same nodes and edges, with the same attributes, added in the same order
    assert list(one.nodes(data=True)) == list(two.nodes(data=True))
    assert list(one.edges(data=True)) == list(two.edges(data=True))


def test_worker_count_defaults_to_every_core():
    assert slicepool.worker_count(3) == 3
    assert slicepool.worker_count(None) == slicepool.worker_count(0) >= 1


def _covered_exactly(seg, cleaned) -> bool:
    """Every input segment lies on one cleaned segment, decided in exact arithmetic."""
    for s in seg:
        lo, hi = sorted([tuple(s[0]), tuple(s[1])])
        if lo == hi:
            continue
        ok = False
        for p, q in cleaned:
            if _orient_exact(p, q, lo) == 0 and _orient_exact(p, q, hi) == 0 and tuple(p) <= lo and hi <= tuple(q):
                ok = True
                break
        if not ok:
            return False
    return True


def test_clean_segments_merges_only_what_is_exactly_collinear():
    seg = np.array([
        [[0, 0], [1, 0]], [[1, 0], [2, 0]], [[0.5, 0], [3, 0]],     # one run 0..3
        [[5, 0], [6, 0]],                                             # same line, apart: kept
        [[2, 2], [2, 2]],                                             # zero length: dropped
        [[1, 0], [0, 0]],                                             # duplicate, reversed: dropped
        [[0.1, 0.1], [0.3, 0.3]], [[0.3, 0.3], [0.7, 0.7]],           # touching on y = x: merged
        [[0, 1], [1, 2]], [[1, 2], [3, 4.000000000000001]],           # one ulp off the line: kept apart
    ], dtype=float)
    out = clean_segments(seg)
    got = sorted(tuple(map(tuple, s)) for s in out)
    assert got == sorted([((0.0, 0.0), (3.0, 0.0)), ((5.0, 0.0), (6.0, 0.0)), ((0.1, 0.1), (0.7, 0.7)),
                          ((0.0, 1.0), (1.0, 2.0)), ((1.0, 2.0), (3.0, 4.000000000000001))])
    assert _covered_exactly(seg, out)


def test_clean_segments_keeps_every_point_on_random_linework():
    rng = np.random.default_rng(3)
    # axis-aligned and diagonal lines cut into overlapping pieces, plus random segments
    pieces = []
    for _ in range(40):
        a, b = sorted(rng.integers(0, 40, 2) / 4.0)
        y = float(rng.integers(0, 5))
        pieces += [[[a, y], [b, y]], [[y, a], [y, b]], [[a, a], [b, b]]]
    pieces += rng.uniform(0, 10, (30, 2, 2)).tolist()
    seg = np.asarray(pieces, dtype=float)
    out = clean_segments(seg)
    assert len(out) < len(seg)
    assert _covered_exactly(seg, out)
    # and nothing new: every cleaned endpoint is an input endpoint, every cleaned segment is covered by input
    ends = {tuple(p) for p in seg.reshape(-1, 2)}
    assert all(tuple(p) in ends for p in out.reshape(-1, 2))
    union = shapely.union_all(shapely.linestrings(seg[np.any(seg[:, 0] != seg[:, 1], axis=1)]))
    assert shapely.covered_by(shapely.linestrings(out), union.buffer(1e-9)).all()


def test_cleaned_plan_gives_the_same_free_space(cells):
    """A wall drawn as overlapping pieces and repeated gives the free space of the wall drawn once."""
    veh = vehicle_from_outline(OFFSET, name="axle")
    once = Plan.from_geometries(walls=[shapely.LineString([(0, 0), (10, 0)]), shapely.LineString([(0, 3), (10, 3)])],
                                solids=[shapely.box(4, 1, 5, 2)])
    pieces = [shapely.LineString([(0, 0), (4, 0)]), shapely.LineString([(3, 0), (10, 0)]),
              shapely.LineString([(10, 0), (0, 0)]), shapely.LineString([(0, 3), (5, 3), (10, 3)]),
              shapely.LineString([(2, 3), (2, 3), (6, 3)])]
    many = Plan.from_geometries(walls=pieces, solids=[shapely.box(4, 1, 5, 2)])
    assert prepare_obstacles(many.walls, many.solids).edge_count == prepare_obstacles(once.walls,
                                                                                      once.solids).edge_count
    a, b = build_slices(once, veh, cells=cells), build_slices(many, veh, cells=cells)
    for k in range(len(cells)):
        assert shapely.equals(a.free(k), b.free(k)) or \
            shapely.symmetric_difference(a.free(k), b.free(k)).area < 1e-12


def test_slice_cache_gives_back_the_very_slices_built(tmp_path, cells):
    from floorfit.cspace.slicecache import use_cache

    veh = vehicle_from_outline(OFFSET, name="axle")
    plan = Plan.from_geometries(walls=[shapely.LineString([(0, 0), (10, 0), (10, 6)])],
                                solids=[shapely.box(4, 1, 5, 2), shapely.box(7, 3, 8, 5)])
    plain = build_slices(plan, veh, cells=cells)
    use_cache(tmp_path)
    try:
        first = build_slices(plan, veh, cells=cells)
        second = build_slices(plan, veh, cells=cells)
        moved = Plan.from_geometries(walls=[shapely.LineString([(0, 0), (10, 0), (10, 6)])],
                                     solids=[shapely.box(4, 1, 5, 2), shapely.box(7, 3, 8, 5.5)])
        other = build_slices(moved, veh, cells=cells)
    finally:
        use_cache(None)
    assert first.reused == 0 and second.reused == len(cells) and second.workers_used == 0
    assert other.reused == 0                              # one solid 0.5 m longer: nothing reused
    for a, b, c in zip(plain.components, first.components, second.components):
        assert list(shapely.to_wkb(a)) == list(shapely.to_wkb(b)) == list(shapely.to_wkb(c))
    assert len(list(tmp_path.rglob("*.wkb"))) == 2 * len(cells)


def test_window_slices_are_the_plan_slices_cut_to_the_window(rooms, cells):
    veh = vehicle_from_outline(OFFSET, name="axle")
    full = build_slices(rooms, veh, cells=cells)
    window = (3.0, 2.5, 10.5, 9.0)
    local = build_slices(rooms, veh, cells=cells, window=window)
    box = shapely.box(*window)
    assert shapely.equals(local.domain, shapely.intersection(full.domain, box))
    for k in range(len(cells)):
        cut = shapely.intersection(full.free(k), box)
        # the whole plan's big cluster runs the cascade (CASCADE_GUARD_M, 6e-11 m more growth),
        # the window's smaller one a single sweep: areas differ by that times the boundary length
        assert shapely.symmetric_difference(cut, local.free(k)).area < 1e-7, k
    with pytest.raises(ValueError):
        build_slices(rooms, veh, cells=cells, window=(100.0, 100.0, 101.0, 101.0))


def test_route_tries_the_slices_near_start_and_goal_first(tmp_path, capsys):
    """A route found near the poses is stated as such; an unreachable one is decided on the whole drawing,
    with the answers of --full-slices (the demo site's routes of tests/test_cli.py)."""
    import json

    from floorfit.cli import main
    from floorfit.demo import write_demo_site

    demo = write_demo_site(tmp_path / "plans")
    answers = {}
    for name, start, goal in (("dock", "15,2.2,-90", "6.5,11,90"), ("door", "36,7,0", "36,20,90")):
        for mode in ((), ("--full-slices",)):
            out = tmp_path / f"{name}{len(mode)}.json"
            code = main(["route", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--start", start,
                         "--goal", goal, "--json", str(out), "--quiet", *mode])
            text = capsys.readouterr().out
            answers[name, len(mode)] = (code, json.loads(out.read_text())["status"], text)
    assert answers["dock", 0][:2] == answers["dock", 1][:2] == (0, "reachable")
    assert "around start and goal only" in answers["dock", 0][2]
    assert "around start and goal only" not in answers["dock", 1][2]
    assert answers["door", 0][:2] == answers["door", 1][:2] == (1, "unreachable")
    assert "around start and goal only" not in answers["door", 0][2]      # decided on the whole drawing


def test_route_reuses_cached_slices_of_the_whole_drawing(tmp_path, capsys, monkeypatch):
    from floorfit.cli import main
    from floorfit.demo import write_demo_site

    demo = write_demo_site(tmp_path / "plans")
    monkeypatch.setenv("FLOORFIT_CACHE", str(tmp_path / "cache"))
    route = ["route", str(demo["plan"]), "--vehicle", str(demo["vehicle"]), "--start", "15,2.2,-90",
             "--goal", "6.5,11,90", "--quiet"]
    try:
        assert main(route + ["--full-slices"]) == 0
        first = capsys.readouterr().out
        assert main(route) == 0
        second = capsys.readouterr().out
    finally:
        from floorfit.cspace.slicecache import use_cache
        use_cache(None)
    assert "reused from the disk cache" in first and ", 0 reused" in first
    # the whole drawing's slices are in the cache: no window, nothing built
    assert "around start and goal only" not in second and "slices: 0 built" in second
    assert first.splitlines()[:2] == second.splitlines()[:2]          # same answer, same path


def test_ctrl_c_during_the_slices_stops_every_process_with_one_line(plans_real, tmp_path):
    """Ctrl-C (SIGINT to the whole process group, as a terminal sends it) while the pool builds slices."""
    import os
    import signal
    import subprocess
    import sys

    veh = tmp_path / "robot.toml"
    veh.write_text('name = "r"\n[footprint]\nwidth = 0.6\nlength = 0.8\n[motion]\nmode = "differential"\n')
    cmd = [sys.executable, "-m", "floorfit", "check", str(plans_real / "egghunters__dxf-viewer-examples__dxf_4.dxf"),
           "--vehicle", str(veh), "--out", str(tmp_path / "out"), "--workers", "2", "--no-cache"]
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, start_new_session=True,
                            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    lines = []
    for line in proc.stderr:                      # wait until the slices are being built
        lines.append(line.rstrip("\n"))
        if line.startswith("floorfit: slices:"):
            break
    assert "on 2 processes" in lines[-1]
    os.killpg(proc.pid, signal.SIGINT)
    rest = proc.stderr.read().splitlines()
    proc.wait(timeout=120)
    assert proc.returncode == 130
    assert rest[-1:] == ["floorfit check: interrupted"] and not any("Traceback" in ln for ln in rest)
    left = subprocess.run(["pgrep", "-g", str(proc.pid)], capture_output=True, text=True).stdout.split()
    assert left == []                              # no pool worker outlives the command
