"""Minkowski sums and C-obstacles checked against closed forms from the literature."""

import math

import numpy as np
import pytest
import shapely
from shapely.geometry import Polygon, box

from floorfit.cspace.minkowski import cobstacle_pieces, convex_parts, is_convex, minkowski_sum, prepare_obstacles


def _disc(r, n=4096):
    # circumscribed polygon: contains the disc; area error O(1/n^2)
    t = np.linspace(0, 2 * np.pi, n, endpoint=False)
    R = r / math.cos(math.pi / n)
    return Polygon(np.c_[R * np.cos(t), R * np.sin(t)])


@pytest.mark.parametrize("poly, expected", [
    # Steiner's formula for a convex body dilated by a disc: area = A + P·r + π·r²
    # (Schneider, Convex Bodies: the Brunn–Minkowski Theory, ch. 4; FIELD-NOTES instances)
    (box(0, 0, 1, 1), 8.141593),
    (Polygon([(0, 0), (3, 0), (0, 4)]), 21.141593),
])
def test_steiner_formula_disc_dilation(poly, expected):
    s = minkowski_sum(poly, _disc(1.0))
    assert s.area == pytest.approx(expected, abs=2e-5)
    # and from the formula itself
    assert expected == pytest.approx(poly.area + poly.length * 1.0 + math.pi, abs=1e-6)


def test_convex_sum_has_at_most_m_plus_n_edges():
    # de Berg, Cheong, van Kreveld, Overmars, Computational Geometry (3rd ed.), ch. 13, Thm 13.5:
    # the sum of convex m-gon and n-gon is convex with at most m + n edges.
    rng = np.random.default_rng(7)
    for _ in range(50):
        a = shapely.MultiPoint(rng.normal(size=(int(rng.integers(3, 12)), 2))).convex_hull
        b = shapely.MultiPoint(rng.normal(size=(int(rng.integers(3, 12)), 2))).convex_hull
        s = minkowski_sum(a, b)
        m, n = len(a.exterior.coords) - 1, len(b.exterior.coords) - 1
        assert is_convex(s)
        assert len(shapely.normalize(shapely.simplify(s, 0)).exterior.coords) - 1 <= m + n
        # mixed-area identity for convex bodies: area(A⊕B) ≥ (√A + √B)² (Brunn–Minkowski)
        assert s.area >= (math.sqrt(a.area) + math.sqrt(b.area)) ** 2 - 1e-9


def test_unit_square_plus_rotated_square():
    # FIELD-NOTES: unit square ⊕ same rotated 45°: 8 edges, area 2 + 2√2 (de Berg et al. ch. 13)
    sq = box(0, 0, 1, 1)
    s = minkowski_sum(sq, shapely.affinity.rotate(sq, 45))
    assert len(shapely.simplify(s, 0).exterior.coords) - 1 == 8
    assert s.area == pytest.approx(2 + 2 * math.sqrt(2), rel=1e-12)


@pytest.mark.parametrize("theta, expected", [(0, 4.64), (30, 5.558653), (45, 5.721981), (90, 4.94)])
def test_box_cobstacle_area_mixed_area_formula(theta, expected):
    # C-obstacle area of an a×b box for an l×w rectangle at heading θ (mixed area of two
    # rectangles; FIELD-NOTES): ab + lw + l(a|sinθ| + b|cosθ|) + w(a|cosθ| + b|sinθ|)
    a, b, length, w = 2.0, 1.0, 0.9, 0.6
    t = math.radians(theta)
    formula = a * b + length * w + length * (a * abs(math.sin(t)) + b * abs(math.cos(t))) \
        + w * (a * abs(math.cos(t)) + b * abs(math.sin(t)))
    assert formula == pytest.approx(expected, abs=1e-6)
    obs = prepare_obstacles([], [box(0, 0, a, b)])
    fp = shapely.affinity.rotate(box(-length / 2, -w / 2, length / 2, w / 2), theta, origin=(0, 0))
    pieces = cobstacle_pieces(obs, [np.asarray(fp.exterior.coords)[:-1]])
    assert shapely.union_all(pieces).area == pytest.approx(formula, rel=1e-12)


def test_nonconvex_footprint_and_obstacle_match_pairwise_union():
    # An L-shaped footprint against an L-shaped solid: the sum must equal the union of the
    # sums of all convex part pairs (distributivity of ⊕ over ∪), computed independently
    # with pyclipper's Minkowski sum (union with the translated path, per its docs).
    pyclipper = pytest.importorskip("pyclipper")
    L = Polygon([(0, 0), (3, 0), (3, 1), (1, 1), (1, 3), (0, 3)])
    F = Polygon([(0, 0), (1, 0), (1, 0.3), (0.3, 0.3), (0.3, 1), (0, 1)])
    ours = minkowski_sum(L, F)
    S = 10 ** 6
    a = [(int(round(x * S)), int(round(y * S))) for x, y in L.exterior.coords[:-1]]
    b = [(int(round(x * S)), int(round(y * S))) for x, y in F.exterior.coords[:-1]]
    swept = pyclipper.MinkowskiSum(b, a, True)
    polys = [Polygon(np.asarray(p) / S) for p in swept]
    ref = shapely.union_all([shapely.make_valid(p) for p in polys]
                            + [shapely.affinity.translate(L, *F.exterior.coords[0]),
                               shapely.affinity.translate(F, *L.exterior.coords[0])])
    assert ours.symmetric_difference(ref).area < 1e-9


def test_convex_parts_cover_polygon_exactly():
    rng = np.random.default_rng(3)
    shapes = [Polygon([(0, 0), (4, 0), (4, 1), (2, 1), (2, 3), (4, 3), (4, 4), (0, 4)]),
              box(0, 0, 5, 5).difference(box(1, 1, 2, 2))]
    for _ in range(10):
        pts = rng.uniform(0, 10, size=(12, 2))
        shapes.append(shapely.concave_hull(shapely.MultiPoint(pts), ratio=0.3))
    for s in shapes:
        parts = convex_parts(s)
        assert all(is_convex(p) for p in parts)
        assert sum(p.area for p in parts) == pytest.approx(s.area, rel=1e-9)
        assert shapely.union_all(parts).symmetric_difference(s).area < 1e-9


@pytest.mark.parametrize("anchored", [True, False])
def test_ring_owners_do_not_depend_on_heading_or_growth(anchored):
    # the clipping decides a slice's growth from the ring owners before computing the rings:
    # the owners cobstacle_owners gives must be the ones cobstacle_rings returns, for any parts
    from floorfit.cspace.minkowski import cobstacle_owners, cobstacle_rings, footprint_parts_at

    walls = [shapely.LineString([(0, 0), (5, 0)]), shapely.LineString([(5, 0), (5, 4)])]
    solids = [box(1, 1, 2, 2), Polygon([(6, 1), (9, 1), (9, 3), (7, 3), (7, 5), (6, 5)]),
              Polygon([(10, 0), (14, 0), (14, 4), (10, 4)], [[(11, 1), (13, 1), (13, 3), (11, 3)]])]
    obs = prepare_obstacles(walls, solids)
    # and non-convex solids taken whole (as for a polygon whose convex split loses area), one with a hole
    import dataclasses
    obs = dataclasses.replace(obs, nonconvex=np.asarray(solids[1:], dtype=object))
    L = Polygon([(-0.4, -0.3), (0.6, -0.3), (0.6, 0.3), (0.1, 0.3), (0.1, 0.8), (-0.4, 0.8)])   # two convex parts
    parts = convex_parts(L)
    anchor = np.array([0.05, 0.1]) if anchored else None
    for heading, grow in ((0.0, 0.0), (37.0, 0.02), (-120.0, 0.3)):
        verts = footprint_parts_at(parts, heading, grow)
        coords, counts, owner = cobstacle_rings(obs, verts, anchor)
        assert np.array_equal(owner, cobstacle_owners(obs, len(verts), anchored))
        assert len(owner) == len(counts) and counts.sum() == len(coords)
