"""HATCH / MPOLYGON boundaries and the pattern policy (wall fill or floor finish).

Boundaries are read in the hatch's OCS: polyline paths (with bulges) and edge paths
made of line, arc, ellipse and spline edges, chained end to end like CAD does (a gap
is closed by a straight line). Arcs and ellipses are flattened with the exact sagitta
bound of :mod:`.curves`. Paths are combined with the even-odd rule (symmetric
difference), so islands become holes.

Pattern policy (common practice in architectural drafting): solid fill, ANSI31 and
masonry / concrete patterns fill cut walls and columns, so the hatch is a solid
obstacle; tile, vinyl, carpet, parquet, sand, gravel, grass and roofing patterns are
floor or roof finishes and are not obstacles. Any other pattern is judged by the shape
it fills: thinner than 0.6 m (largest inscribed circle) it is wall poché (solid),
wider it is a floor area (ignored: keeping its outline would close door openings).
"""

from __future__ import annotations

import fnmatch
import math

import numpy as np
from ezdxf.entities.boundary_paths import ArcEdge, EdgePath, EllipseEdge, LineEdge, PolylinePath, SplineEdge
from ezdxf.math import BSpline, Vec3, fit_points_to_cad_cv

from floorfit.plan.dxf.curves import arc_points, bulge_polyline, ellipse_points, spline_points

__all__ = ["SOLID_PATTERNS", "FINISH_PATTERNS", "THIN_FILL_M", "hatch_policy", "hatch_needs_thickness",
           "hatch_vertex_count", "hatch_rings_flattener"]

#: Patterns that fill cut walls / columns (common practice): the hatch is a solid obstacle.
SOLID_PATTERNS = ("solid", "ansi31", "ansi32", "ansi33", "ar-conc", "ar-b816*", "ar-b88", "ar-brelm",
                  "ar-brstd", "brick*", "*masonry*", "*concrete*", "*beton*", "steel", "net3")
#: Patterns of floor / roof finishes and ground cover (common practice): not obstacles.
FINISH_PATTERNS = ("*vinyl*", "*tile*", "*carpet*", "ar-parq*", "*parquet*", "ar-hbone", "*herring*",
                   "ar-sand", "*sand*", "*gravel*", "*grass*", "*roof*", "ar-rshke", "ar-rroof",
                   "*board*", "*batten*", "*ledgestone*", "*shingle*", "*siding*", "*dots*",
                   "*wood*", "*floor*", "*fliese*", "*square*")


#: A hatch of unknown pattern thinner than this (largest inscribed circle, metres) fills a wall.
THIN_FILL_M = 0.6


def hatch_policy(pattern: str, layer_role: str, thickness_m: float | None = None) -> tuple[str, str]:
    """(role, reason) for a hatch with ``pattern`` on a layer whose role is ``layer_role``.

    ``thickness_m``: thickness of the filled area, the diameter of its largest inscribed
    circle (metres); it
    decides patterns of unknown meaning: thin fills are wall poché (solid), wide fills
    are floor areas (ignored, so their boundaries do not close door openings).
    Returns ``"solid"`` (filled obstacle) or ``"ignore"``.
    """
    name = pattern.lower()
    if layer_role == "solid":
        return "solid", "hatch on a solid layer"
    if any(fnmatch.fnmatchcase(name, p) for p in SOLID_PATTERNS):
        return "solid", f"fill pattern '{pattern}' (wall / column fill)"
    if any(fnmatch.fnmatchcase(name, p) for p in FINISH_PATTERNS):
        return "ignore", f"finish pattern '{pattern}' (floor / roof / ground)"
    if thickness_m is not None and thickness_m < THIN_FILL_M:
        return "solid", f"pattern '{pattern}' filling a thin area ({thickness_m:.2f} m): wall fill"
    return "ignore", f"pattern '{pattern}' filling a wide area: floor area, not an obstacle"


def hatch_needs_thickness(pattern: str, layer_role: str) -> bool:
    """True when :func:`hatch_policy` decides by the filled area's thickness: a pattern of unknown
    meaning on a layer that is not a solid layer (the thickness need not be measured otherwise)."""
    name = pattern.lower()
    return layer_role != "solid" and not any(fnmatch.fnmatchcase(name, p) for p in SOLID_PATTERNS + FINISH_PATTERNS)


def hatch_vertex_count(hatch) -> int:
    """Number of stored boundary vertices / edges / control points of a hatch."""
    n = 0
    for path in hatch.paths:
        if isinstance(path, PolylinePath):
            n += len(path.vertices)
        elif isinstance(path, EdgePath):
            for edge in path.edges:
                if isinstance(edge, SplineEdge):
                    n += len(edge.control_points) + len(edge.fit_points)
                else:
                    n += 2
    return n


def _edge_points(edge, tol: float, maxv: int | None) -> np.ndarray | None:
    if isinstance(edge, LineEdge):
        return np.array([tuple(edge.start)[:2], tuple(edge.end)[:2]], dtype=float)
    if isinstance(edge, ArcEdge):
        # ezdxf stores every arc edge counter-clockwise (converted at load time)
        if abs(edge.radius) <= 1e-12:
            return None
        a0 = math.radians(edge.start_angle)
        span = math.radians((edge.end_angle - edge.start_angle) % 360.0) or 2 * math.pi
        cx, cy = tuple(edge.center)[:2]
        pts = arc_points(cx, cy, abs(edge.radius), a0, a0 + span, tol, maxv)
        return pts if edge.ccw else pts[::-1]
    if isinstance(edge, EllipseEdge):
        e = edge.construction_tool()
        pts = ellipse_points(tuple(e.center), tuple(e.major_axis), e.ratio, e.start_param, e.end_param,
                             tol, (0, 0, 1), maxv)[:, :2]
        return pts if edge.ccw else pts[::-1]
    if isinstance(edge, SplineEdge):
        if len(edge.control_points):
            spline = BSpline(control_points=[Vec3(p[0], p[1], 0) for p in edge.control_points],
                             order=edge.degree + 1, knots=edge.knot_values or None,
                             weights=edge.weights or None)
        elif len(edge.fit_points):
            spline = fit_points_to_cad_cv([Vec3(p[0], p[1], 0) for p in edge.fit_points])
        else:
            return None
        return spline_points(spline, tol, maxv)[:, :2]
    return None


def _chain(pieces: list[np.ndarray], eps: float) -> list[np.ndarray]:
    """Join edge polylines end to end into closed rings (reversing pieces where needed)."""
    rings: list[np.ndarray] = []
    loop: np.ndarray | None = None
    for piece in pieces:
        if loop is None:
            loop = piece
            continue
        if np.allclose(loop[-1], piece[0], atol=eps):
            loop = np.vstack([loop, piece[1:]])
        elif np.allclose(loop[-1], piece[-1], atol=eps):
            loop = np.vstack([loop, piece[::-1][1:]])
        elif np.allclose(loop[0], piece[-1], atol=eps):
            loop = np.vstack([piece, loop[1:]])
        elif np.allclose(loop[0], piece[0], atol=eps):
            loop = np.vstack([loop[::-1], piece[1:]])
        elif np.allclose(loop[0], loop[-1], atol=eps) and len(loop) > 3:
            rings.append(loop)
            loop = piece
        else:  # gap: closed by a straight line, as CAD programs do
            loop = np.vstack([loop, piece])
    if loop is not None:
        rings.append(loop)
    return rings


def hatch_rings_flattener(hatch, maxv: int | None):
    """(make_rings(tol) -> list of (N, 2) OCS rings, coarse (M, 2) OCS points) for a hatch."""
    paths = list(hatch.paths)

    def make_rings(tol: float) -> list[np.ndarray]:
        rings = []
        for path in paths:
            if isinstance(path, PolylinePath):
                verts = np.array([tuple(v)[:3] for v in path.vertices], dtype=float).reshape(-1, 3)
                if len(verts) < 2:
                    continue
                pts = bulge_polyline(verts[:, :2], verts[:, 2], True, tol, maxv)
                rings.append(pts)
            elif isinstance(path, EdgePath):
                pieces = [p for p in (_edge_points(edge, tol, maxv) for edge in path.edges)
                          if p is not None and len(p) >= 2]
                if pieces:
                    span = float(np.ptp(np.vstack(pieces), axis=0).max())
                    eps = span * 1e-9 + 1e-9 if np.isfinite(span) else 1e-9
                    rings.extend(_chain(pieces, eps))
        out = []
        for r in rings:
            if len(r) >= 3:
                if not np.allclose(r[0], r[-1]):
                    r = np.vstack([r, r[:1]])
                out.append(r)
        return out

    try:
        coarse_rings = make_rings(float("inf"))
    except Exception:
        coarse_rings = []
    coarse = np.vstack(coarse_rings) if coarse_rings else None
    return make_rings, coarse
