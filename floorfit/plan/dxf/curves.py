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


def bulge_polyline(points: np.ndarray, bulges: np.ndarray, closed: bool, tol: float,
                   max_vertices: int | None = None, outside: bool = False,
                   orientation: float = 0.0) -> np.ndarray:
    """Flatten a 2-D polyline with bulges (tan of a quarter of each segment's included angle).

    Each bulge segment is the arc through its two vertices with included angle
    4·atan(bulge), counter-clockwise for a positive bulge. ``outside``: when True, arcs
    that bulge out of the polygon (bulge sign equal to ``orientation``, the sign of the
    polygon's signed area) are replaced by circumscribed polylines and arcs that bulge
    in by chords, so the result encloses the true outline. Otherwise chords of the true
    arcs are used (sagitta ≤ ``tol``).
    """
    pts = np.asarray(points, dtype=float)
    n = len(pts)
    if n == 0:
        return pts.reshape(0, 2)
    xs, ys = pts[:, 0].tolist(), pts[:, 1].tolist()
    bl = [float(b) for b in np.asarray(bulges, dtype=float).reshape(-1)[:n]]
    bl += [0.0] * (n - len(bl))
    seg_count = n if closed else n - 1
    ox, oy = [xs[0]], [ys[0]]
    for i in range(seg_count):
        j = (i + 1) % n
        x0, y0, x1, y1, b = xs[i], ys[i], xs[j], ys[j], bl[i]
        dx, dy = x1 - x0, y1 - y0
        c = math.hypot(dx, dy)
        if b == 0.0 or not math.isfinite(b) or c == 0.0:
            ox.append(x1)
            oy.append(y1)
            continue
        theta = 4.0 * math.atan(b)                    # included angle, signed
        r = c / (2.0 * math.sin(abs(theta) / 2.0))
        h = r * math.cos(theta / 2.0)                  # chord midpoint -> centre, along the left normal
        sgn = 1.0 if b > 0 else -1.0
        cx = (x0 + x1) / 2.0 - dy / c * h * sgn
        cy = (y0 + y1) / 2.0 + dx / c * h * sgn
        a0 = math.atan2(y0 - cy, x0 - cx)
        if outside and (b > 0) == (orientation > 0):
            step = math.pi / 2 if tol >= r else 2.0 * math.acos(r / (r + tol))
            k = max(1, math.ceil(abs(theta) / step - 1e-12))
            delta = theta / k
            rr = r / math.cos(delta / 2.0)
            for m in range(k):
                ang = a0 + delta * (m + 0.5)
                ox.append(cx + rr * math.cos(ang))
                oy.append(cy + rr * math.sin(ang))
        else:
            k = arc_segment_count(r, abs(theta), tol)
            delta = theta / k
            for m in range(1, k):
                ang = a0 + delta * m
                ox.append(cx + r * math.cos(ang))
                oy.append(cy + r * math.sin(ang))
        ox.append(x1)
        oy.append(y1)
        if max_vertices is not None and len(ox) > max_vertices:
            raise TooManyVertices(len(ox))
    return np.column_stack([ox, oy])


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
    v = np.array([z[1] * u[2] - z[2] * u[1], z[2] * u[0] - z[0] * u[2], z[0] * u[1] - z[1] * u[0]]) * abs(ratio)
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
