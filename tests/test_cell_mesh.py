"""The kept triangulations answer exactly as the plain polygon paths do."""

import networkx as nx
import numpy as np
import shapely
from shapely.geometry import Point, box

from floorfit.cspace.cellpath import path_in_polygon, point_inside
from floorfit.motion.cell_mesh import CellMeshes, _dual_graph


def _room_with_racks():
    room = box(0, 0, 20, 12)
    racks = [box(2 + 3 * i, 2, 3 + 3 * i, 10 - (i % 2) * 3) for i in range(5)]
    posts = [Point(17, 2 + 2 * j).buffer(0.3, quad_segs=3) for j in range(4)]
    return room.difference(shapely.union_all(racks + posts))


def _plain_graph(poly):
    tris = shapely.get_parts(shapely.constrained_delaunay_triangles(poly))
    tris = tris[shapely.area(tris) > 0]
    coords = shapely.get_coordinates(tris).reshape(len(tris), 4, 2)[:, :3]
    cent = coords.mean(axis=1)
    G = nx.Graph()
    owner: dict = {}
    for t in range(len(tris)):
        for u in range(3):
            p, q = coords[t, u], coords[t, (u + 1) % 3]
            key = (min(tuple(p), tuple(q)), max(tuple(p), tuple(q)))
            if key in owner:
                G.add_edge(owner[key], t, weight=float(np.hypot(*(cent[owner[key]] - cent[t]))), mid=(p + q) / 2.0)
            else:
                owner[key] = t
    G.add_nodes_from(range(len(tris)))
    return G, coords, cent


def test_dual_graph_same_edges_in_same_order():
    G, coords, cent = _plain_graph(_room_with_racks())
    H = _dual_graph(coords, cent)
    assert list(H.nodes) == list(G.nodes)
    assert list(H.edges) == list(G.edges)
    for n in G.nodes:
        assert list(H[n]) == list(G[n])
    for u, v, d in G.edges(data=True):
        assert H.edges[u, v]["weight"] == d["weight"]
        assert np.array_equal(H.edges[u, v]["mid"], d["mid"])


def test_paths_and_points_match_the_plain_ones():
    poly = _room_with_racks()
    meshes = CellMeshes(size=2)
    rng = np.random.default_rng(7)
    pts = rng.uniform((0, 0), (20, 12), size=(60, 2))
    for a, b in zip(pts[:30], pts[30:]):
        want = path_in_polygon(poly, a, b)
        got = meshes.path(poly, a, b)
        assert (want is None) == (got is None)
        if want is not None:
            assert np.array_equal(want, got)
        assert np.array_equal(point_inside(poly, a), meshes.point_inside(poly, a))


def test_the_oldest_triangulations_go_beyond_the_triangle_limit():
    rooms = [_room_with_racks(), box(0, 0, 5, 5).difference(box(2, 2, 3, 3))]
    meshes = CellMeshes(max_triangles=1)
    for poly in rooms + rooms:
        want = path_in_polygon(poly, (0.5, 0.5), (4.5, 4.5))
        assert np.array_equal(meshes.path(poly, (0.5, 0.5), (4.5, 4.5)), want)
        assert len(meshes._meshes) == 1
