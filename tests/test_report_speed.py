"""The report's fast paths give what the slow ones gave: matplotlib paths built in one step, patches
added without the per-segment limit loop, the nearest turn-round place searched in growing windows,
clearances in one tree search, close-up clipping shared, and report.pdf drawn in a second process
(the same bytes as drawn in one)."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from matplotlib.figure import Figure
from matplotlib.patches import Circle, PathPatch, Rectangle
from matplotlib.path import Path
from report_fixtures import demo_result

from floorfit import forking as apart
from floorfit.report import write_report
from floorfit.report.bounding_entities import sheet_obstacles
from floorfit.report.geometry import add_polygon_patch, line_segments, parts, polygon_path
from floorfit.report.remedies import RemedyContext, _geodesic, _nearest_goal


# -- the ring-by-ring builders the vectorised ones replace ------------------------------------------------
def _polygon_path_ref(geoms, shift):
    verts, codes = [], []
    for g in geoms:
        for part in parts(g):
            if not isinstance(part, shapely.Polygon):
                continue
            part = shapely.orient_polygons(part)
            for ring in [part.exterior, *part.interiors]:
                xy = np.asarray(ring.coords)[:, :2] + shift
                if len(xy) < 3:
                    continue
                verts.append(xy)
                codes.append(np.r_[Path.MOVETO, np.full(len(xy) - 2, Path.LINETO), Path.CLOSEPOLY])
    if not verts:
        return None
    return Path(np.vstack(verts), np.concatenate(codes).astype(np.uint8))


def _line_segments_ref(geoms, shift):
    lines = []
    for g in geoms:
        for part in parts(g):
            if isinstance(part, shapely.Polygon):
                rings = [part.exterior, *part.interiors]
            elif isinstance(part, (shapely.LineString, shapely.LinearRing)):
                rings = [part]
            else:
                continue
            for ring in rings:
                xy = np.asarray(ring.coords)[:, :2]
                if len(xy) >= 2:
                    lines.append(xy + shift)
    return lines


_HOLED = shapely.Polygon([(0, 0), (4, 0), (4, 3), (0, 3)], [[(1, 1), (1, 2), (2, 2), (2, 1)]])
_CW = shapely.Polygon([(5, 5), (5, 6), (6, 6), (6, 5)])             # clockwise exterior: gets re-oriented
_GEOM_SETS = [
    [_HOLED, _CW, shapely.box(10, 0, 11, 1)],                          # plain polygons (the quick route)
    [_HOLED, None, shapely.Polygon(), shapely.MultiPolygon([_CW, shapely.box(8, 8, 9, 9)]),
     shapely.GeometryCollection([shapely.LineString([(0, 0), (3, 4)]), shapely.Point(1, 1), _CW]),
     shapely.LinearRing([(0, 0), (1, 0), (1, 1)]), shapely.Polygon([(0, 0, 1), (2, 0, 1), (2, 2, 1)])],
    [shapely.LineString([(0, 0), (1, 1), (2, 0)]), shapely.MultiLineString([[(0, 0), (0, 5)], [(1, 1), (2, 2)]])],
    [],
]


@pytest.mark.parametrize("geoms", _GEOM_SETS)
def test_polygon_path_is_the_ring_by_ring_path(geoms):
    shift = np.array([250.5, -80.25])
    ref, got = _polygon_path_ref(geoms, shift), polygon_path(geoms, shift)
    assert (ref is None) == (got is None)
    if ref is not None:
        assert np.array_equal(ref.vertices, got.vertices)
        assert np.array_equal(ref.codes, got.codes) and got.codes.dtype == ref.codes.dtype


@pytest.mark.parametrize("geoms", _GEOM_SETS)
def test_line_segments_are_the_ring_by_ring_segments(geoms):
    shift = np.array([3.0, 4.0])
    ref, got = _line_segments_ref(geoms, shift), line_segments(geoms, shift)
    assert len(ref) == len(got)
    for a, b in zip(ref, got):
        assert np.array_equal(a, b)


def _two_axes():
    return Figure().add_subplot(), Figure().add_subplot()


@pytest.mark.parametrize("make", [
    lambda: PathPatch(polygon_path([_HOLED, _CW], np.array([1.0, 2.0])), facecolor="red"),
    lambda: Rectangle((2.0, -1.0), 3.0, 0.5, facecolor="none"),
    lambda: Rectangle((7.0, 7.0), 0.0, 0.0),                        # left out of the limits, as add_patch does
    lambda: Circle((1.0, 1.0), 2.0),                                 # curves: handed to add_patch
])
def test_add_polygon_patch_matches_add_patch(make):
    slow, fast = _two_axes()
    for ax in (slow, fast):
        ax.add_patch(Rectangle((-1.0, -1.0), 0.5, 0.5))              # limits already set by something
    a, b = make(), make()
    slow.add_patch(a)
    assert add_polygon_patch(fast, b) is b
    assert np.array_equal(slow.dataLim.get_points(), fast.dataLim.get_points())
    assert slow.ignore_existing_data_limits == fast.ignore_existing_data_limits
    assert b in fast.patches and b.axes is fast and b.get_figure(root=False) is fast.get_figure(root=False)
    assert b.get_clip_box() is not None and b.get_clip_box().bounds == a.get_clip_box().bounds
    assert (a.get_clip_path() is None) == (b.get_clip_path() is None)
    assert np.allclose(a.get_transform().get_matrix(), b.get_transform().get_matrix())
    assert a._get_in_autoscale() == b._get_in_autoscale()
    assert slow.get_xlim() == fast.get_xlim() and slow.get_ylim() == fast.get_ylim()


# -- nearest turn-round place -----------------------------------------------------------------------------
def _nearest_ref(walk, goal, iy, ix, window):
    """The whole-window search the growing windows replace."""
    a, b, c, d = window
    w, g = walk[a:b, c:d].copy(), goal[a:b, c:d]
    w[iy - a, ix - c] = True
    dist = np.where(g, _geodesic(w, iy - a, ix - c), np.inf)
    k = int(np.argmin(dist))
    if not math.isfinite(float(dist.flat[k])):
        return None
    gy, gx = np.unravel_index(k, dist.shape)
    return int(gy) + a, int(gx) + c, float(dist.flat[k])


@pytest.mark.parametrize("seed", range(6))
def test_nearest_goal_in_growing_windows_is_the_whole_window_answer(seed, monkeypatch):
    import floorfit.report.remedies as rem

    monkeypatch.setattr(rem, "_GROWING_WINDOWS", (2, 5, 11))     # small windows on a small map
    rng = np.random.default_rng(seed)
    ny, nx = 60, 70
    walk = rng.random((ny, nx)) > 0.3
    goal = walk & (rng.random((ny, nx)) > 0.985)
    goal[::17, ::13] |= walk[::17, ::13]                              # ties at equal step counts
    for _ in range(25):
        iy, ix = int(rng.integers(ny)), int(rng.integers(nx))
        r = int(rng.integers(8, 40))
        window = (max(iy - r, 0), min(iy + r + 1, ny), max(ix - r, 0), min(ix + r + 1, nx))
        assert _nearest_goal(walk, goal, iy, ix, window) == _nearest_ref(walk, goal, iy, ix, window)


def test_nearest_goal_none_when_unreachable():
    walk = np.zeros((9, 9), bool)
    goal = np.zeros((9, 9), bool)
    goal[0, 0] = True
    assert _nearest_goal(walk, goal, 5, 5, (0, 9, 0, 9)) is None


def test_clearances_are_the_single_point_clearances():
    result = demo_result()
    ctx = RemedyContext(result)
    pts = [(float(x), float(y)) for x, y in np.random.default_rng(3).uniform((-2, -2), (32, 20), (200, 2))]
    assert ctx.clearances(pts) == [ctx.clearance_at(x, y) for x, y in pts]
    assert ctx.clearances([]) == []


def test_clipped_obstacles_are_the_per_obstacle_cut_and_shared():
    result = demo_result()
    obst = sheet_obstacles(result)
    box = (-1.0, -1.0, 14.0, 9.5)
    idx = obst.in_box(box)
    clip = shapely.box(*box)
    ref = ([shapely.intersection(obst.geoms[i], clip) for i in idx if obst.kind[i] == "solid" and obst.floor[i]],
           [shapely.intersection(obst.geoms[i], clip) for i in idx if obst.kind[i] == "linework" and obst.floor[i]],
           [shapely.intersection(obst.geoms[i], clip) for i in idx if not obst.floor[i]])
    got = obst.clipped(box)
    assert [len(x) for x in got] == [len(x) for x in ref] and sum(len(x) for x in ref) > 0
    for a, b in zip(ref, got):
        assert all(shapely.equals_exact(p, q, 0.0) for p, q in zip(a, b))
    assert obst.clipped(box) is got


# -- report.pdf in a second process -----------------------------------------------------------------------
def test_report_bytes_are_the_same_with_one_or_two_processes(tmp_path, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    result = demo_result()
    one = write_report(result, tmp_path / "one", quiet=True, workers=1)
    two = write_report(result, tmp_path / "two", quiet=True, workers=2)
    assert one.keys() == two.keys() and "pdf" in one
    for kind in one:
        assert one[kind].read_bytes() == two[kind].read_bytes(), kind


def _fails(x):
    raise ValueError(f"bad {x}")


def test_a_part_drawn_apart_returns_its_bytes_and_raises_its_error_here():
    pending = apart.start(bytes, 5, workers=2)
    assert pending.result() == bytes(5)
    pending = apart.start(_fails, 7, workers=2)
    with pytest.raises(ValueError, match="bad 7"):
        pending.result()
    pending = apart.start(bytes, 3, workers=1)
    assert not pending.apart and pending.result() == bytes(3)
    pending = apart.start(bytes, 4, workers=2)
    pending.cancel()                                                 # stopped: drawn here when asked
    assert not pending.apart and pending.result() == bytes(4)


def test_a_pool_worker_draws_in_one_process_unless_asked(monkeypatch):
    monkeypatch.setattr(apart.multiprocessing, "parent_process", lambda: object())
    pending = apart.start(bytes, 2)
    assert not pending.apart and pending.result() == bytes(2)
    monkeypatch.setattr(apart, "usable_cores", lambda: 1)
    monkeypatch.setattr(apart.multiprocessing, "parent_process", lambda: None)
    assert not apart.start(bytes, 1).apart                          # one core: drawn here


def _sleeps(seconds):
    import time

    time.sleep(seconds)
    return seconds


def test_ctrl_c_while_waiting_stops_the_child_instead_of_waiting_for_it():
    # the child ignores Ctrl-C (the parent's to handle): the parent, interrupted while it waits,
    # must stop the child, not wait out its minute of work
    import signal

    pending = apart.start(_sleeps, 60, workers=2)
    assert pending.apart
    proc = pending._proc

    def interrupt(signum, frame):
        raise KeyboardInterrupt

    old = signal.signal(signal.SIGALRM, interrupt)
    signal.setitimer(signal.ITIMER_REAL, 0.3)
    try:
        with pytest.raises(KeyboardInterrupt):
            pending.result()
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)
    assert proc.exitcode == -signal.SIGTERM and not pending.apart
