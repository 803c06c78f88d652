"""Flattening curves into polylines with a bounded chord error (sagitta), never a fixed count.

Every function takes ``tol``, the largest allowed distance between the true curve and
the polyline, in the units of its input, and returns an ``(N, 2)`` or ``(N, 3)`` numpy
array including both end points. For circular arcs and ellipses the bound is exact:

* arc of radius r: n chords of angle Δ with r·(1 − cos(Δ/2)) ≤ tol;
* ellipse with semi-axes a ≥ b: the curvature radius is at least b²/a and the chord
  length is at most a·Δt for a parameter step Δt, so chords no longer than
  2·sqrt(2·ρ·tol − tol²) with ρ = b²/a keep the sagitta under tol.

Splines use ezdxf's adaptive subdivision of the true B-spline with half the tolerance
(a midpoint test, not a strict bound; splines are rare in floor plans).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["arc_segment_count", "arc_points", "arc_points_outside", "bulge_polyline",
           "ellipse_points", "spline_points", "TooManyVertices"]


class TooManyVertices(Exception):
    """Raised when a curve would need more vertices than allowed (carries the count)."""

    def __init__(self, count: int):
        super().__init__(count)
        self.count = count


def arc_segment_count(radius: float, span: float, tol: float) -> int:
    """Chords needed for an arc of ``radius`` and ``span`` radians so the sagitta is ≤ ``tol``."""
    span = abs(span)
    if radius <= 0 or span == 0:
        return 1
    if tol >= radius:
        step = math.pi / 2
    else:
        step = 2.0 * math.acos(1.0 - tol / radius)
    return max(1, math.ceil(span / step - 1e-12))


def _check(n: int, max_vertices: int | None) -> None:
    if max_vertices is not None and n + 1 > max_vertices:
        raise TooManyVertices(n + 1)


def arc_points(cx: float, cy: float, r: float, a0: float, a1: float, tol: float,
               max_vertices: int | None = None) -> np.ndarray:
    """Points on the arc from angle ``a0`` to ``a1`` (radians, counter-clockwise, a1 > a0)."""
    n = arc_segment_count(r, a1 - a0, tol)
    _check(n, max_vertices)
    t = np.linspace(a0, a1, n + 1)
    return np.column_stack([cx + r * np.cos(t), cy + r * np.sin(t)])


def arc_points_outside(cx: float, cy: float, r: float, a0: float, a1: float, tol: float,
                       max_vertices: int | None = None) -> np.ndarray:
    """A polyline that stays on or outside the arc (circumscribed), within ``tol`` of it.

    Starts and ends on the arc; inner vertices sit at radius r / cos(Δ/2) between the
    tangent points, so every edge is tangent to the circle. Used where a flattened
    outline must enclose the true one (vehicle outlines).
    """
    span = a1 - a0
    # vertices lie r(1/cos(Δ/2) - 1) outside: choose Δ so that this is ≤ tol
    if tol >= r:
        step = math.pi / 2
    else:
        step = 2.0 * math.acos(r / (r + tol))
    n = max(1, math.ceil(abs(span) / step - 1e-12))
    _check(n + 1, max_vertices)
    delta = span / n
    mids = a0 + delta * (np.arange(n) + 0.5)
    rr = r / math.cos(delta / 2.0)
    inner = np.column_stack([cx + rr * np.cos(mids), cy + rr * np.sin(mids)])
    start = np.array([[cx + r * math.cos(a0), cy + r * math.sin(a0)]])
    end = np.array([[cx + r * math.cos(a1), cy + r * math.sin(a1)]])
    return np.vstack([start, inner, end])


def _bulge_arc(p0: np.ndarray, p1: np.ndarray, bulge: float):
    """Centre, radius, start and end angle (ccw order) of a bulge segment."""
    chord = p1 - p0
    c = math.hypot(chord[0], chord[1])
    theta = 4.0 * math.atan(bulge)            # included angle, signed
    r = c / (2.0 * math.sin(abs(theta) / 2.0))
    mid = (p0 + p1) / 2.0
    # distance from the chord midpoint to the centre, signed by the bulge direction
    h = r * math.cos(theta / 2.0)
    normal = np.array([-chord[1], chord[0]]) / c
    centre = mid + normal * (h if bulge > 0 else -h) * (1 if abs(theta) <= math.pi else 1)
    a_start = math.atan2(p0[1] - centre[1], p0[0] - centre[0])
    return centre, r, a_start, theta


def bulge_polyline(points: np.ndarray, bulges: np.ndarray, closed: bool, tol: float,
                   max_vertices: int | None = None, outside: bool = False,
                   orientation: float = 0.0) -> np.ndarray:
    """Flatten a 2-D polyline with bulges (tan of a quarter of each segment's included angle).

    ``outside``: when True, arcs that bulge out of the polygon (same turning sense as
    ``orientation``, the sign of the polygon's signed area) are replaced by
    circumscribed polylines, arcs that bulge in by chords, so the result encloses the
    true outline. Otherwise chords of the true arcs are used.
    """
    pts = np.asarray(points, dtype=float)
    bul = np.asarray(bulges, dtype=float)
    n = len(pts)
    if n == 0:
        return pts.reshape(0, 2)
    seg_count = n if closed else n - 1
    out = [pts[:1]]
    total = 1
    for i in range(seg_count):
        p0 = pts[i]
        p1 = pts[(i + 1) % n]
        b = bul[i] if i < len(bul) else 0.0
        if b == 0.0 or not math.isfinite(b) or np.allclose(p0, p1):
            out.append(p1[None, :])
            total += 1
            continue
        centre, r, a_start, theta = _bulge_arc(p0, p1, b)
        a_end = a_start + theta
        lo, hi = (a_start, a_end) if theta > 0 else (a_end, a_start)
        bulges_out = outside and (np.sign(b) == np.sign(orientation))
        if bulges_out:
            arc = arc_points_outside(centre[0], centre[1], r, lo, hi, tol)
        else:
            arc = arc_points(centre[0], centre[1], r, lo, hi, tol)
        if theta < 0:
            arc = arc[::-1]
        arc[0] = p0
        arc[-1] = p1
        out.append(arc[1:])
        total += len(arc) - 1
        _check(total, max_vertices)
    return np.vstack(out)


def ellipse_points(center, major_axis, ratio: float, start_param: float, end_param: float,
                   tol: float, extrusion=(0.0, 0.0, 1.0), max_vertices: int | None = None) -> np.ndarray:
    """Points (N, 3) of an ELLIPSE in WCS with a sagitta ≤ ``tol`` (drawing units).

    Parameters as stored by DXF: centre, major axis vector (WCS), ratio minor/major,
    start and end parameter (radians, counter-clockwise about ``extrusion``).
    """
    c = np.asarray(center, dtype=float)[:3]
    u = np.asarray(major_axis, dtype=float)[:3]
    z = np.asarray(extrusion, dtype=float)[:3]
    z = z / np.linalg.norm(z)
    a = float(np.linalg.norm(u))
    b = a * abs(ratio)
    v = np.cross(z, u) * abs(ratio)
    span = end_param - start_param
    while span <= 0:
        span += 2 * math.pi
    span = min(span, 2 * math.pi)
    if a == 0:
        return c[None, :].copy()
    rho = b * b / a if a > 0 else 0.0
    if rho <= 0:
        n = 2
    elif tol >= rho:
        chord = 2.0 * rho
        n = max(2, math.ceil(a * span / chord))
    else:
        chord = 2.0 * math.sqrt(2.0 * rho * tol - tol * tol)
        n = max(2, math.ceil(a * span / chord))
    _check(n, max_vertices)
    t = start_param + np.linspace(0.0, span, n + 1)
    return c + np.outer(np.cos(t), u) + np.outer(np.sin(t), v)


def spline_points(bspline, tol: float, max_vertices: int | None = None) -> np.ndarray:
    """Points (N, 3) of an ezdxf BSpline, adaptive subdivision at ``tol / 2`` (drawing units)."""
    segments = max(4, len(bspline.control_points))
    pts = []
    for p in bspline.flattening(tol / 2.0, segments=segments):
        pts.append((p.x, p.y, p.z))
        if max_vertices is not None and len(pts) > max_vertices:
            raise TooManyVertices(len(pts))
    return np.asarray(pts, dtype=float).reshape(-1, 3)
