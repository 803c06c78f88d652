"""The faster holonomic legs answer as the networkx searches and full predicates they replace.

Reference implementations below are the previous code: the dual graph as a networkx Graph searched
with A* (Dijkstra when A* finds no path), the shortcut that tests every later waypoint with
``covers``, the inset copy made for every query and the rotation zone made for every query.
"""

import networkx as nx
import numpy as np
import shapely
import shapely.ops
from shapely.geometry import LineString, Point, box

import floorfit as ff
from floorfit.cspace import roadmap
from floorfit.cspace.cellpath import (
    TriangleMesh,
    is_direct,
    path_in_polygon,
    point_inside,
    segments_covered,
    shortcut_in_polygon,
)
from floorfit.cspace.roadmap import build_roadmap, rotation_zone
from floorfit.cspace.slices import build_slices
from floorfit.motion.cell_mesh import CellMeshes, _dual_graph
from floorfit.plan.model import Plan


def _racks(n=6, rows=3):
    """A room with a regular grid of racks (many equal-cost triangle chains) and round posts."""
    room = box(0, 0, 4 * n + 2, 6 * rows + 2)
    racks = [box(2 + 4 * i, 2 + 6 * j, 3 + 4 * i, 6 + 6 * j) for i in range(n) for j in range(rows)]
    posts = [Point(1 + 4 * i, 1).buffer(0.3, quad_segs=3) for i in range(n)]
    return room.difference(shapely.union_all(racks + posts))


def _old_shortcut(poly, pts):
    shapely.prepare(poly)
    out = [pts[0]]
    i, n = 0, len(pts)
    while i < n - 1:
        cand = shapely.linestrings(np.stack([np.repeat(pts[i:i + 1], n - i - 1, axis=0), pts[i + 1:]], axis=1))
        ok = shapely.covers(poly, cand)
        i = i + 1 + (int(np.flatnonzero(ok)[-1]) if ok.any() else 0)
        out.append(pts[i])
    return np.asarray(out)


def _old_path(poly, a, b):
    """The previous path_in_polygon: networkx A* over the dual graph."""
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    if not poly.covers(Point(a)) or not poly.covers(Point(b)):
        return None
    if is_direct(poly, a, b):
        return np.array([a, b])
    tris = shapely.get_parts(shapely.constrained_delaunay_triangles(poly))
    tris = tris[shapely.area(tris) > 0]
    tree = shapely.STRtree(tris)
    ta, tb = tree.query(Point(a), predicate="intersects"), tree.query(Point(b), predicate="intersects")
    if not len(ta) or not len(tb):
        return None
    coords = shapely.get_coordinates(tris).reshape(len(tris), 4, 2)[:, :3]
    cent = coords.mean(axis=1)
    G = _dual_graph(coords, cent)
    try:
        chain = nx.astar_path(G, int(ta[0]), int(tb[0]), heuristic=lambda u, v: float(np.hypot(*(cent[u] - cent[v]))),
                              weight="weight")
    except nx.NetworkXNoPath:
        pairs = [(int(s), int(d)) for s in ta for d in tb if nx.has_path(G, int(s), int(d))]
        if not pairs:
            return None
        chain = nx.shortest_path(G, *pairs[0], weight="weight")
    pts = [a] + [G.edges[u, v]["mid"] for u, v in zip(chain[:-1], chain[1:])] + [b]
    return _old_shortcut(poly, np.asarray(pts))


def _old_point_inside(region, near, inset=1e-4):
    inner = region.buffer(-inset) if region.area > 0 else region
    target = inner if not inner.is_empty else region
    p = Point(near)
    if target.covers(p):
        return np.array(near, dtype=float)
    q = shapely.ops.nearest_points(target, p)[0]
    if not region.covers(q):
        q = region.representative_point()
    return np.array([q.x, q.y])


def test_paths_are_the_ones_the_networkx_search_found():
    poly = _racks()
    meshes = CellMeshes(size=2)
    rng = np.random.default_rng(3)
    pts = rng.uniform((0, 0), (26, 20), size=(160, 2))
    found = 0
    for a, b in zip(pts[:80], pts[80:]):
        want = _old_path(poly, a, b)
        got = path_in_polygon(poly, a, b)
        kept = meshes.path(poly, a, b)
        assert (want is None) == (got is None) == (kept is None)
        if want is not None:
            found += len(want) > 2
            assert np.array_equal(want, got)
            assert np.array_equal(want, kept)
    assert found >= 20                       # most pairs needed a detour round the racks


def test_points_on_triangle_sides_and_pieces_joined_at_a_corner():
    # two rooms touching at one corner: a and b in different pieces of the dual graph
    poly = shapely.union_all([box(0, 0, 2, 2), box(2, 2, 4, 4)])
    for a, b in [((1, 1), (3, 3)), ((0.5, 1.5), (3.5, 2.5)), ((2, 2), (3, 3.5)), ((1, 1), (1.5, 0.5))]:
        want, got = _old_path(poly, a, b), path_in_polygon(poly, a, b)
        assert (want is None) == (got is None)
        if want is not None:
            assert np.array_equal(want, got)
    # points exactly on shared triangle sides (the grid's vertices and edge midpoints)
    grid = _racks(3, 2)
    for a, b in [((1.5, 2.0), (13.5, 13.0)), ((3.0, 1.0), (11.0, 7.0)), ((0.0, 0.0), (14.0, 14.0))]:
        want, got = _old_path(grid, a, b), path_in_polygon(grid, a, b)
        assert (want is None) == (got is None)
        if want is not None:
            assert np.array_equal(want, got)


def test_the_mesh_lists_the_neighbours_as_the_networkx_graph_does():
    poly = _racks(3, 2)
    mesh = TriangleMesh(poly)
    tris = shapely.get_parts(shapely.constrained_delaunay_triangles(poly))
    tris = tris[shapely.area(tris) > 0]
    coords = shapely.get_coordinates(tris).reshape(len(tris), 4, 2)[:, :3]
    G = _dual_graph(coords, coords.mean(axis=1))
    assert len(mesh) == G.number_of_nodes()
    g = mesh.graph
    for u in G.nodes:
        ks = range(g.indptr[u], g.indptr[u + 1])
        assert [g.indices[k] for k in ks] == list(G[u])
        assert [g.data[k] for k in ks] == [d["weight"] for d in G[u].values()]
        for v, d in G[u].items():
            assert np.array_equal(mesh.midpoints(np.array([u, v])), [d["mid"]])


def test_the_dijkstra_chain_is_taken_only_where_it_is_the_only_shortest():
    # a regular grid has many equal chains: there the A* search itself decides, as networkx does
    poly = _racks()
    mesh = TriangleMesh(poly)
    tris = shapely.get_parts(shapely.constrained_delaunay_triangles(poly))
    tris = tris[shapely.area(tris) > 0]
    coords = shapely.get_coordinates(tris).reshape(len(tris), 4, 2)[:, :3]
    cent = coords.mean(axis=1)
    G = _dual_graph(coords, cent)
    rng = np.random.default_rng(4)
    astar_runs = []
    real = mesh._astar
    mesh._astar = lambda s, d: astar_runs.append((s, d)) or real(s, d)
    pairs = rng.integers(0, len(mesh), size=(150, 2))
    for s, d in pairs:
        want = nx.astar_path(G, int(s), int(d), heuristic=lambda u, v: float(np.hypot(*(cent[u] - cent[v]))),
                             weight="weight")
        assert list(mesh._shortest(int(s), int(d))) == want
    assert 0 < len(astar_runs) < len(pairs)     # both ways were taken


def test_segments_covered_is_covers():
    poly = _racks(4, 2)
    shapely.prepare(poly)
    rng = np.random.default_rng(5)
    starts = rng.uniform((0, 0), (18, 14), size=(600, 2))
    ends = rng.uniform((0, 0), (18, 14), size=(600, 2))
    # segments along the walls, through rack corners and ending on the boundary: the full test's cases
    corners = shapely.get_coordinates(poly)
    starts = np.concatenate([starts, corners[:-1], corners[:-1], [[0, 0], [2, 1], [1, 2]]])
    ends = np.concatenate([ends, corners[1:], corners[::-1][:-1], [[18, 0], [2, 13], [17, 2]]])
    want = shapely.covers(poly, shapely.linestrings(np.stack([starts, ends], axis=1)))
    got = segments_covered(poly, starts, ends)
    assert np.array_equal(want, got)
    assert want.any() and not want.all()
    assert want[600:].any()                  # some boundary segments are covered


def test_shortcut_is_the_one_that_tries_every_later_point():
    poly = _racks()
    rng = np.random.default_rng(9)
    for _ in range(20):
        pts = rng.uniform((0, 0), (26, 20), size=(40, 2))
        pts = pts[[poly.covers(Point(p)) for p in pts]]
        assert np.array_equal(shortcut_in_polygon(poly, pts), _old_shortcut(poly, pts))


def test_point_inside_as_with_the_inset_copy():
    poly = _racks(3, 2)
    meshes = CellMeshes()
    rng = np.random.default_rng(2)
    near = np.concatenate([rng.uniform((-1, -1), (15, 15), size=(60, 2)),
                           [[2.0, 2.0], [2.00005, 3.0], [1.9999, 3.0], [0.0001, 5.0], [0.0003, 5.0]]])
    for p in near:
        want = _old_point_inside(poly, p)
        assert np.array_equal(point_inside(poly, p), want)
        assert np.array_equal(meshes.point_inside(poly, p), want)


def _slices():
    plan = Plan.from_geometries(walls=[box(0, 0, 12, 8).difference(box(0.2, 0.2, 11.8, 7.8))],
                                solids=[box(4, 2, 5, 6), box(8, 3, 9, 8)])
    veh = ff.rectangle_vehicle(1.0, 0.6, mode="differential")
    return build_slices(plan, veh, heading_step_deg=15.0)


def test_rotation_zones_are_kept_per_slice_set():
    slices, other = _slices(), _slices()
    G = build_roadmap(slices)
    roadmap._ZONES.clear()
    edges = list(G.edges)[:6]
    windows = [None, (1.0, 1.0, 5.0, 5.0)]
    for u, v in edges:
        for w in windows:
            a, b = slices.components[u[0]][u[1]], slices.components[v[0]][v[1]]
            if w is not None:
                a, b = shapely.intersection(a, box(*w)), shapely.intersection(b, box(*w))
            zone = rotation_zone(slices, u, v, window=w)
            assert zone.equals_exact(shapely.intersection(a, b), 0.0)
            assert rotation_zone(slices, u, v, window=w) is zone           # made once
            assert rotation_zone(other, u, v, window=w) is not zone        # another slice set's own
    assert len(roadmap._ZONES.zones) == 2 * len(edges) * len(windows)


def test_kept_zones_stay_within_their_coordinate_limit(monkeypatch):
    slices = _slices()
    G = build_roadmap(slices)
    roadmap._ZONES.clear()
    monkeypatch.setattr(roadmap, "ZONES_KEPT_COORDINATES", 1)
    for u, v in list(G.edges)[:5]:
        rotation_zone(slices, u, v)
        assert len(roadmap._ZONES.zones) == 1
        assert roadmap._ZONES.coordinates == shapely.get_num_coordinates(rotation_zone(slices, u, v))
    roadmap._ZONES.clear()


def test_a_route_leg_round_the_racks_stays_in_the_polygon():
    poly = _racks()
    path = path_in_polygon(poly, (0.5, 0.5), (25.5, 19.5))
    assert path is not None and len(path) > 2
    assert all(poly.covers(LineString([p, q])) for p, q in zip(path[:-1], path[1:]))
