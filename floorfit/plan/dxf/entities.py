"""Geometry of each DXF entity type: lines, solids, polylines with bulges and widths, arcs, ellipses, splines, hatches.

:class:`EntityGeometry` is the part of the model-space walker (:mod:`floorfit.plan.dxf.walker`)
that turns one entity into :class:`~floorfit.plan.dxf.primitives.Prim` records; the walker
supplies the transforms, limits and role resolution (``to_world``, ``stretch``, ``check``,
``flatten_guard``, ``new_prim``, ``effective_role``, ``add``). Drawing units, world frame.
"""

from __future__ import annotations

import math

import numpy as np
from ezdxf.math import OCS, Vec3

from floorfit.errors import PlanImportError
from floorfit.plan.dxf.curves import arc_points, bulge_polyline, ellipse_points, spline_points
from floorfit.plan.dxf.primitives import ArcInfo

__all__ = ["EntityGeometry", "ocs_matrix"]


def ocs_matrix(extrusion) -> np.ndarray:
    """3x3 rows ux, uy, uz of the entity's OCS (identity for extrusion +Z)."""
    ocs = OCS(extrusion)
    if not ocs.transform:
        return np.eye(3)
    return np.array([tuple(ocs.ux), tuple(ocs.uy), tuple(ocs.uz)], dtype=float)


class EntityGeometry:
    """Per-entity-type handlers (``do_<type>``) of the model-space walker."""

    # -- straight entities -------------------------------------------------------------
    def do_line(self, e, ctx, layer, role, handle, where):
        prim_role = self.effective_role(role, ctx)
        ends = self.model_line(e) if ctx.depth == 0 else None
        if ends is None:
            world = self.to_world(np.array([tuple(e.dxf.start), tuple(e.dxf.end)], dtype=float), ctx)
            self.check(world, where)
            ends = tuple(world.ravel().tolist())
        if prim_role == "ignore":          # never an obstacle: only its ends count, for the drawn extent
            self.out.extent_only.extend(ends)
            return
        self.add(self.new_prim("line", layer, prim_role, "LINE", where, handle, ctx,
                               points=np.array((ends[:2], ends[2:]), dtype=float)))

    def model_line(self, e) -> tuple[float, float, float, float] | None:
        """World ends (x0, y0, x1, y1) of a LINE in model space (identity transform) without numpy:
        ``v + 0.0`` is what ``to_world`` gives for an identity matrix (x·1 + y·0 + z·0 + 0, a
        negative zero made positive). None for a non-finite or too large coordinate: the general
        path then raises the error of :func:`~floorfit.plan.dxf.limits.check_points`."""
        s, t = e.dxf.start, e.dxf.end
        if not all(map(math.isfinite, (s.x, s.y, s.z, t.x, t.y, t.z))):
            return None
        ends = (s.x + 0.0, s.y + 0.0, t.x + 0.0, t.y + 0.0)
        if max(map(abs, ends)) > self.limits.max_abs_coordinate:
            return None
        return ends

    def _quad(self, pts3: np.ndarray, ctx, layer, role, handle, where, dxftype, ocs=None):
        world = self.to_world(pts3, ctx, ocs)
        self.check(world, where)
        # drop the repeated 4th vertex of triangles
        uniq = [world[0]]
        for p in world[1:]:
            if tuple(p) != tuple(uniq[-1]):
                uniq.append(p)
        if len(uniq) > 1 and tuple(uniq[0]) == tuple(uniq[-1]):
            uniq.pop()
        world = np.array(uniq)
        kind = "fill" if len(world) >= 3 else "line"
        self.add(self.new_prim(kind, layer, self.effective_role(role, ctx), dxftype, where, handle, ctx,
                               points=world, closed=kind == "fill"))

    def do_solid(self, e, ctx, layer, role, handle, where):
        v = [tuple(e.dxf.get(f"vtx{i}", e.dxf.get("vtx2", (0, 0, 0)) if i == 3 else (0, 0, 0))) for i in range(4)]
        pts = np.array([v[0], v[1], v[3], v[2]], dtype=float)   # SOLID/TRACE vertex order 0-1-3-2
        self._quad(pts, ctx, layer, role, handle, where, e.dxftype(), ocs_matrix(e.dxf.get("extrusion", (0, 0, 1))))

    do_trace = do_solid

    def do_three_dface(self, e, ctx, layer, role, handle, where):
        v = [tuple(e.dxf.get(f"vtx{i}", (0, 0, 0))) for i in range(4)]
        self._quad(np.array(v, dtype=float), ctx, layer, role, handle, where, "3DFACE")

    # -- polylines -------------------------------------------------------------------------
    def _polyline(self, pts_ocs: np.ndarray, bulges: np.ndarray, widths: float, closed: bool,
                  ocs: np.ndarray, ctx, layer, role, handle, where, dxftype):
        if len(pts_ocs) == 0:
            return
        coarse = self.to_world(pts_ocs, ctx, ocs)
        self.check(coarse, where)
        if len(pts_ocs) > 1 and closed and tuple(pts_ocs[0]) == tuple(pts_ocs[-1]):
            pts_ocs, bulges = pts_ocs[:-1], bulges[:-1]
        stretch = self.stretch(ctx, ocs)
        width_world = widths * stretch
        prim_role = self.effective_role(role, ctx)
        if not np.any(bulges):
            pts = coarse[: len(pts_ocs)]
            if closed and len(pts) > 2:
                pts = np.vstack([pts, pts[:1]])
            self.add(self.new_prim("line", layer, prim_role, dxftype, where, handle, ctx, points=pts,
                                   closed=closed and len(pts) > 3, width=width_world))
            return
        z = pts_ocs[0, 2] if pts_ocs.shape[1] > 2 else 0.0
        xy = pts_ocs[:, :2].copy()
        maxv = self.limits.max_vertices_per_entity

        def flatten(tol, xy=xy, bulges=bulges, closed=closed, z=z, ocs=ocs, ctx=ctx, stretch=stretch):
            local = bulge_polyline(xy, bulges, closed, tol / max(stretch, 1e-300), maxv)
            local3 = np.column_stack([local, np.full(len(local), z)])
            return [self.to_world(local3, ctx, ocs)]

        # bulge arcs can reach beyond the vertices: coarse points include arc mid points
        mids = bulge_polyline(xy, bulges, closed, float("inf"))
        coarse = self.to_world(np.column_stack([mids, np.full(len(mids), z)]), ctx, ocs)
        self.check(coarse, where)
        self.add(self.new_prim("line", layer, prim_role, dxftype, where, handle, ctx,
                               curve=self.flatten_guard(flatten, where), coarse=coarse,
                               closed=closed, width=width_world))

    def do_lwpolyline(self, e, ctx, layer, role, handle, where):
        self.vertices(len(e), where)
        data = np.array(list(e.get_points("xyseb")), dtype=float).reshape(-1, 5)
        elev = float(e.dxf.get("elevation", 0.0))
        pts = np.column_stack([data[:, 0], data[:, 1], np.full(len(data), elev)])
        const = float(e.dxf.get("const_width", 0.0) or 0.0)
        width = const if const > 0 else (float(np.max(data[:, 2:4])) if len(data) else 0.0)
        self._polyline(pts, data[:, 4], max(width, 0.0), bool(e.closed),
                       ocs_matrix(e.dxf.get("extrusion", (0, 0, 1))), ctx, layer, role, handle, where, "LWPOLYLINE")

    def do_polyline(self, e, ctx, layer, role, handle, where):
        self.vertices(len(e.vertices), where)
        if e.is_polygon_mesh or e.is_poly_face_mesh:
            self.out.skipped["POLYLINE (3-D mesh)"].append(handle)
            return
        verts = [v for v in e.vertices if not (v.dxf.get("flags", 0) & 16)]   # skip spline frame points
        if not verts:
            return
        pts = np.array([tuple(v.dxf.location) for v in verts], dtype=float)
        if e.is_2d_polyline:
            bulges = np.array([v.dxf.get("bulge", 0.0) for v in verts], dtype=float)
            widths = [e.dxf.get("default_start_width", 0.0), e.dxf.get("default_end_width", 0.0)]
            widths += [v.dxf.get("start_width", 0.0) for v in verts] + [v.dxf.get("end_width", 0.0) for v in verts]
            elev = float(Vec3(e.dxf.get("elevation", (0, 0, 0))).z)
            pts[:, 2] = elev
            ocs = ocs_matrix(e.dxf.get("extrusion", (0, 0, 1)))
        else:
            bulges = np.zeros(len(pts))
            widths = [0.0]
            ocs = None
        self._polyline(pts, bulges, max(0.0, float(max(widths))), bool(e.is_closed),
                       ocs if ocs is not None else np.eye(3), ctx, layer, role, handle, where, "POLYLINE")

    # -- curves ------------------------------------------------------------------------------
    def _arc(self, e, ctx, layer, role, handle, where, full: bool):
        c = np.array(tuple(e.dxf.center), dtype=float)
        r = float(e.dxf.radius)
        ocs = ocs_matrix(e.dxf.get("extrusion", (0, 0, 1)))
        if not math.isfinite(r):
            raise PlanImportError("non-finite radius", self.path, where)
        corners = np.array([[c[0] - r, c[1] - r, c[2]], [c[0] + r, c[1] + r, c[2]],
                            [c[0] - r, c[1] + r, c[2]], [c[0] + r, c[1] - r, c[2]]])
        self.check(self.to_world(corners, ctx, ocs), where)
        if full:
            a0, span = 0.0, 2 * math.pi
        else:
            a0 = math.radians(e.dxf.start_angle)
            span = math.radians((e.dxf.end_angle - e.dxf.start_angle) % 360.0) or 2 * math.pi
        stretch = self.stretch(ctx, ocs)
        maxv = self.limits.max_vertices_per_entity

        def flatten(tol, c=c, r=r, a0=a0, span=span, ocs=ocs, ctx=ctx, stretch=stretch):
            local = arc_points(c[0], c[1], r, a0, a0 + span, tol / max(stretch, 1e-300), maxv)
            local3 = np.column_stack([local, np.full(len(local), c[2])])
            pts = self.to_world(local3, ctx, ocs)
            if full:
                pts[-1] = pts[0]
            return [pts]

        coarse_local = arc_points(c[0], c[1], r, a0, a0 + span, r * 0.02)
        coarse = self.to_world(np.column_stack([coarse_local, np.full(len(coarse_local), c[2])]), ctx, ocs)
        info = None
        lin = (ocs @ ctx.m[:3, :3])[:2, :2]
        gram = lin @ lin.T
        s2 = gram[0, 0]
        if s2 > 0 and abs(gram[1, 1] - s2) <= 1e-9 * s2 and abs(gram[0, 1]) <= 1e-9 * s2:
            ends = np.array([[c[0] + r * math.cos(a0), c[1] + r * math.sin(a0), c[2]],
                             [c[0] + r * math.cos(a0 + span), c[1] + r * math.sin(a0 + span), c[2]],
                             [c[0], c[1], c[2]]])
            w = self.to_world(ends, ctx, ocs)
            info = ArcInfo(centre=w[2], radius=r * math.sqrt(s2), p_start=w[0], p_end=w[1], span=span)
        self.add(self.new_prim("line", layer, self.effective_role(role, ctx), e.dxftype(), where, handle, ctx,
                               curve=self.flatten_guard(flatten, where), coarse=coarse, closed=full, arc=info))

    def do_arc(self, e, ctx, layer, role, handle, where):
        self._arc(e, ctx, layer, role, handle, where, full=False)

    def do_circle(self, e, ctx, layer, role, handle, where):
        self._arc(e, ctx, layer, role, handle, where, full=True)

    def do_ellipse(self, e, ctx, layer, role, handle, where):
        dxf = e.dxf
        center, major, ratio = tuple(dxf.center), tuple(dxf.major_axis), float(dxf.ratio)
        sp, ep = float(dxf.get("start_param", 0.0)), float(dxf.get("end_param", 2 * math.pi))
        extrusion = tuple(dxf.get("extrusion", (0, 0, 1)))
        full = math.isclose((ep - sp) % (2 * math.pi), 0.0, abs_tol=1e-12)
        if full:
            ep = sp + 2 * math.pi
        stretch = self.stretch(ctx)
        maxv = self.limits.max_vertices_per_entity
        a = math.hypot(*major)
        if not (math.isfinite(a) and math.isfinite(ratio)):
            raise PlanImportError("non-finite ellipse axis", self.path, where)
        self.check(self.to_world(np.array([center]), ctx) + np.array([[a, a]]), where)

        def flatten(tol):
            local = ellipse_points(center, major, ratio, sp, ep, tol / max(stretch, 1e-300), extrusion, maxv)
            pts = self.to_world(local, ctx)
            if full:
                pts[-1] = pts[0]
            return [pts]

        coarse = self.to_world(ellipse_points(center, major, ratio, sp, ep, max(a, 1e-9) * 0.05, extrusion), ctx)
        self.add(self.new_prim("line", layer, self.effective_role(role, ctx), "ELLIPSE", where, handle, ctx,
                               curve=self.flatten_guard(flatten, where), coarse=coarse, closed=full))

    def do_spline(self, e, ctx, layer, role, handle, where):
        self.vertices(len(e.control_points) + len(e.fit_points), where, "control and fit points")
        spline = e.construction_tool()
        ctrl = np.array([tuple(p) for p in spline.control_points], dtype=float)
        self.check(self.to_world(ctrl, ctx), where)
        stretch = self.stretch(ctx)
        maxv = self.limits.max_vertices_per_entity

        def flatten(tol):
            return [self.to_world(spline_points(spline, tol / max(stretch, 1e-300), maxv), ctx)]

        # control polygon hull contains a non-rational spline: a safe coarse extent
        self.add(self.new_prim("line", layer, self.effective_role(role, ctx), "SPLINE", where, handle, ctx,
                               curve=self.flatten_guard(flatten, where), coarse=self.to_world(ctrl, ctx),
                               closed=bool(e.closed)))

    # -- hatches -----------------------------------------------------------------------------
    def do_hatch(self, e, ctx, layer, role, handle, where):
        from floorfit.plan.dxf.hatches import hatch_rings_flattener, hatch_vertex_count
        self.vertices(hatch_vertex_count(e), where, "boundary vertices")
        ocs = ocs_matrix(e.dxf.get("extrusion", (0, 0, 1)))
        elevation = float(Vec3(e.dxf.get("elevation", (0, 0, 0))).z)
        stretch = self.stretch(ctx, ocs)
        make_local, coarse_local = hatch_rings_flattener(e, self.limits.max_vertices_per_entity)
        if coarse_local is None or len(coarse_local) == 0:
            return
        lift = lambda p: np.column_stack([p, np.full(len(p), elevation)])  # noqa: E731
        coarse = self.to_world(lift(coarse_local), ctx, ocs)
        self.check(coarse, where)

        def flatten(tol):
            return [self.to_world(lift(r), ctx, ocs) for r in make_local(tol / max(stretch, 1e-300))]

        pattern = "SOLID" if e.dxf.get("solid_fill", 0) else str(e.dxf.get("pattern_name", "") or "")
        self.add(self.new_prim("fill", layer, self.effective_role(role, ctx), e.dxftype(), where, handle, ctx,
                               curve=self.flatten_guard(flatten, where), coarse=coarse, closed=True,
                               pattern=pattern))

    do_mpolygon = do_hatch
