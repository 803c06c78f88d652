"""Model space to primitives: block expansion with exact transforms, OCS, layer inheritance.

The walker visits model space (paper space is never read), expands INSERT and MINSERT
references recursively with the accumulated 4x4 transform (scale, rotation, mirroring,
OCS/extrusion, base point), gives entities on layer ``0`` inside a block the layer of
the INSERT (as CAD programs do), resolves each entity's role and produces
:class:`Prim` records in *drawing units*, world coordinates.

Curves are not flattened here: the unit (hence the chord tolerance in drawing units) is
decided afterwards from header-independent evidence. Each curved primitive keeps a
deferred flattening that works in the entity's own frame with the tolerance divided by
the largest stretch of the transform (its largest singular value), so the bound holds
in world coordinates for any affine transform, including non-uniform scaling and shear.
"""

from __future__ import annotations

import fnmatch
import math
from dataclasses import dataclass

import numpy as np
from ezdxf import bbox as ezdxf_bbox
from ezdxf.math import Vec3

from floorfit.errors import FloorfitError, LimitExceeded, PlanImportError
from floorfit.plan.dxf.curves import TooManyVertices
from floorfit.plan.dxf.entities import EntityGeometry, ocs_matrix
from floorfit.plan.dxf.limits import ImportLimits, check_points, check_vertex_count
from floorfit.plan.dxf.primitives import DoorGroup, Prim, TextItem, WalkResult, clean_text, dxf_name
from floorfit.plan.dxf.roles import RoleResolver, strip_xref_prefix

__all__ = ["walk_modelspace", "SKIPPED_TYPES"]

#: Entity types that are never obstacles: counted and reported, not imported.
SKIPPED_TYPES = {
    "XLINE": "infinite construction line", "RAY": "semi-infinite construction line",
    "DIMENSION": "dimension", "ARC_DIMENSION": "dimension", "LARGE_RADIAL_DIMENSION": "dimension",
    "LEADER": "leader", "MLEADER": "leader", "MULTILEADER": "leader", "TOLERANCE": "tolerance frame",
    "IMAGE": "raster underlay", "WIPEOUT": "wipeout mask", "POINT": "point",
    "ACAD_PROXY_ENTITY": "proxy entity (content unknown)", "VIEWPORT": "viewport",
    "ATTDEF": "attribute definition", "OLE2FRAME": "embedded object", "OLEFRAME": "embedded object",
    "PDFUNDERLAY": "underlay", "DWFUNDERLAY": "underlay", "DGNUNDERLAY": "underlay",
    "SHAPE": "shape", "3DSOLID": "ACIS solid", "REGION": "ACIS region", "BODY": "ACIS body",
    "SURFACE": "ACIS surface", "MESH": "3-D mesh", "HELIX": "helix", "LIGHT": "light",
    "SECTION": "section object", "UNDERLAY": "underlay",
}

_TEXT_TYPES = ("TEXT", "MTEXT", "ATTRIB")


def _box_corners(entity) -> list[tuple[float, float, float]]:
    """Corners of the approximate WCS bounding box of an annotation entity (text, dimension)."""
    try:
        box = ezdxf_bbox.extents([entity], fast=True)
    except Exception:
        return []
    if not box.has_data:
        return []
    (x0, y0, _), (x1, y1, _) = box.extmin, box.extmax
    return [(x0, y0, 0.0), (x1, y0, 0.0), (x1, y1, 0.0), (x0, y1, 0.0)]


def _transform(pts3: np.ndarray, m: np.ndarray, ocs: np.ndarray | None) -> np.ndarray:
    """(N, 3) entity coordinates (OCS when ``ocs`` given) through the 4x4 row-vector matrix ``m`` -> (N, 2)."""
    if ocs is not None:
        pts3 = pts3 @ ocs
    return pts3 @ m[:3, :2] + m[3, :2]


def _forget(db, entity) -> None:
    """Delete a model-space entity that was read from the drawing's entity database (a damaged
    drawing's duplicate or missing handle is left alone: it only costs memory)."""
    try:
        db.delete_entity(entity)
    except Exception:
        pass


def _model_line_z(e) -> tuple[float, float] | None:
    """:meth:`_Walker.z_range` of a flat LINE (no thickness) in model space, without numpy: its
    start's z (z·1 + x·0 + y·0 + 0 under the identity transform). None for anything else."""
    try:
        dxf = e.dxf
        if float(dxf.get("thickness", 0.0) or 0.0) != 0.0:
            return None
        Vec3(dxf.get("extrusion", (0, 0, 1)))     # as the general path reads it (a bad value gives (0, inf))
        z = float(Vec3(dxf.start).z) + 0.0
    except Exception:
        return None
    if not math.isfinite(z):
        return None
    return (0.0, math.inf) if abs(z) < 1e-12 else (z, math.inf)


@dataclass
class _Ctx:
    m: np.ndarray                # 4x4 block -> world (row vectors)
    depth: int
    layer: str | None            # effective layer of the enclosing INSERT (None in model space)
    forced: str | None           # role forced by an enclosing block
    forced_reason: str
    group: int
    inst: int
    blocks: tuple[str, ...]      # enclosing block names, innermost first
    top: str                     # model-space handle
    block_name: str | None       # innermost block name
    stretch: float | None = None  # cached largest singular value of the xy part of m


class _Walker(EntityGeometry):
    def __init__(self, doc, path: str, resolver: RoleResolver, limits: ImportLimits,
                 layer_patterns: list[str] | None, release: bool = False):
        self.doc = doc
        self.release = release
        self.path = path
        self._entity = None          # the entity being visited (for its height range)
        self.resolver = resolver
        self.limits = limits
        self.patterns = [p.lower() for p in layer_patterns] if layer_patterns else None
        self.out = WalkResult()
        self._next_group = 0
        self._next_inst = 0
        self._layer_ok: dict[str, bool] = {}
        self._role_cache: dict[tuple, str] = {}
        self._quiet = False                         # True while run() holds np.errstate for the walk
        self._names: dict[str, str] = {}            # layer name as stored -> decoded (dxf_name)
        self._handlers: dict[str, object] = {}      # entity type -> its do_<type> method or None

    # -- helpers -------------------------------------------------------------------------
    def where(self, handle: str, ctx: _Ctx) -> str:
        if ctx.block_name is None:
            return f"entity #{handle}"
        return f"entity #{handle} in block '{ctx.block_name}' via INSERT #{ctx.top}"

    def _handler(self, dxftype: str):
        """The ``do_<type>`` method for an entity type, or None."""
        try:
            return self._handlers[dxftype]
        except KeyError:
            method = self._handlers[dxftype] = getattr(self, "do_" + dxftype.lower().replace("3d", "three_d"), None)
            return method

    def layer_selected(self, layer: str) -> bool:
        if self.patterns is None:
            return True
        hit = self._layer_ok.get(layer)
        if hit is None:
            full, core = layer.lower(), strip_xref_prefix(layer).lower()
            hit = any(fnmatch.fnmatchcase(full, p) or fnmatch.fnmatchcase(core, p) for p in self.patterns)
            self._layer_ok[layer] = hit
        return hit

    def role_for(self, layer: str, ctx: _Ctx) -> str:
        key = (ctx.forced, ctx.blocks, layer)
        role = self._role_cache.get(key)
        if role is None:
            role = ctx.forced or self.resolver.layer_role(layer).role
            if role == "furniture":
                role = self.resolver.furniture_policy([*ctx.blocks, layer]).role
            self._role_cache[key] = role
        return role

    def to_world(self, pts3: np.ndarray, ctx: _Ctx, ocs: np.ndarray | None = None) -> np.ndarray:
        """(N, 3) entity coordinates (OCS when ``ocs`` given) -> (N, 2) world, drawing units."""
        if self._quiet:         # the walk runs under one np.errstate (entering one per call is slow)
            return _transform(pts3, ctx.m, ocs)
        with np.errstate(invalid="ignore", over="ignore"):   # non-finite input is reported by check()
            return _transform(pts3, ctx.m, ocs)

    def stretch(self, ctx: _Ctx, ocs: np.ndarray | None = None) -> float:
        """Largest factor by which the transform (entity frame -> world xy) stretches lengths."""
        plain = ocs is None or (ocs[0, 0] == 1.0 and ocs[1, 1] == 1.0 and ocs[2, 2] == 1.0)
        if plain and ctx.stretch is not None:
            return ctx.stretch
        lin = ctx.m[:3, :3] if ocs is None else ocs @ ctx.m[:3, :3]
        value = float(np.linalg.norm(lin[:, :2], 2))
        if plain:
            ctx.stretch = value
        return value

    def check(self, pts: np.ndarray, where: str) -> None:
        check_points(pts, self.limits, self.path, where)

    def vertices(self, count: int, where: str, what: str = "vertices") -> None:
        check_vertex_count(count, self.limits, self.path, where, what)

    def flatten_guard(self, fn, where: str):
        """Wrap a flattening function so that too many vertices become LimitExceeded."""
        limits, path = self.limits, self.path

        def run(tol: float):
            try:
                result = fn(tol)
            except TooManyVertices as exc:
                raise LimitExceeded(
                    f"curve needs {exc.count:,} vertices at the chord tolerance, limit "
                    f"{limits.max_vertices_per_entity:,} (ImportLimits.max_vertices_per_entity)",
                    path, where) from None
            for p in result:
                check_points(p, limits, path, where)
            return result
        return run

    def add(self, prim: Prim) -> None:
        self.out.prims.append(prim)

    # -- walking -------------------------------------------------------------------------
    def run(self) -> WalkResult:
        ctx = _Ctx(m=np.eye(4), depth=0, layer=None, forced=None, forced_reason="", group=-1,
                   inst=-1, blocks=(), top="", block_name=None)
        for layer in self.doc.layers:
            self.out.layer_names.add(dxf_name(layer.dxf.name))
        db = self.doc.entitydb if self.release else None
        self._quiet = True
        try:
            with np.errstate(invalid="ignore", over="ignore"):   # non-finite input is reported by check()
                for entity in self.doc.modelspace():
                    ctx.top = entity.dxf.get("handle", "?")   # one context for model space: only its handle changes
                    self.visit(entity, ctx)
                    if db is not None:     # read once: its memory is free for the primitives to come
                        _forget(db, entity)
        finally:
            self._quiet = False
        # the deferred flattenings keep this walker: let go of the drawing so that it can be freed
        self.doc = self._entity = None
        return self.out

    # the per-entity dispatcher: each early exit (damaged, INSERT, filtered, skipped, text, no handler) is one branch
    def visit(self, e, ctx: _Ctx) -> None:  # noqa: C901
        self._entity = e
        dxftype = e.dxftype()
        try:
            handle = e.dxf.get("handle", "?")
            raw_layer = e.dxf.get("layer", "0") or "0"
            own_layer = self._names.get(raw_layer)
            if own_layer is None:
                own_layer = self._names[raw_layer] = dxf_name(raw_layer)
        except Exception:        # unknown or damaged entity type without the common attributes
            self.out.skipped[dxftype].append(getattr(e.dxf, "handle", None) or "?")
            return
        layer = ctx.layer if (own_layer == "0" and ctx.layer is not None) else own_layer
        self.out.entity_count += 1
        if dxftype == "INSERT":
            try:
                self.visit_insert(e, ctx, layer)
            except FloorfitError:
                raise
            except Exception as exc:  # a malformed INSERT must not stop the import
                self.out.issues.append(("skipped", f"cannot read INSERT: {type(exc).__name__}: {exc}",
                                        handle, layer))
            return
        self.out.layer_counts[layer] += 1
        self.out.layer_names.add(layer)
        if not self.layer_selected(layer):
            self.out.filtered += 1
            return
        if dxftype in SKIPPED_TYPES:
            self.out.skipped[dxftype].append(handle)
            self.note_points(e, dxftype, ctx)
            return
        role = self.role_for(layer, ctx)
        where = self.where(handle, ctx)
        try:
            if dxftype in _TEXT_TYPES:
                if role != "ignore":
                    self.visit_text(e, ctx, layer, handle, where)
                return
            if role == "label":
                role = "ignore"      # non-text entities on text layers: read for the extent only
            method = self._handler(dxftype)
            if method is None:
                self.out.skipped[dxftype].append(handle)
                return
            method(e, ctx, layer, role, handle, where)
        except FloorfitError:
            raise
        except Exception as exc:  # a malformed entity must not stop the import
            self.out.issues.append(("skipped", f"cannot read {dxftype}: {type(exc).__name__}: {exc}",
                                    handle, layer))

    def new_prim(self, kind, layer, role, dxftype, where, handle, ctx, **kw) -> Prim:
        flat_z = _model_line_z(self._entity) if ctx.depth == 0 and dxftype == "LINE" else None
        z0, z1 = flat_z if flat_z is not None else self.z_range(self._entity, ctx)
        return Prim(kind=kind, layer=layer, role=role, dxftype=dxftype, where=where, handle=handle,
                    top=ctx.top, group=ctx.group if role == "door-block" else -1, inst=ctx.inst,
                    z0=z0, z1=z1, **kw)

    def z_range(self, e, ctx: _Ctx) -> tuple[float, float]:
        """Height range (bottom, top) of an entity in world z, drawing units.

        From its elevation and thickness (DXF group 39, extruded along the entity's normal,
        possibly negative). A flat entity at elevation 0 with no thickness is a plain 2-D
        plan entity: (0, inf), an obstacle at every height. A flat entity above the floor
        (elevation > 0, no thickness) is taken as an overhead object: (z, inf).
        """
        if e is None:
            return 0.0, math.inf
        try:
            dxf = e.dxf
            thickness = float(dxf.get("thickness", 0.0) or 0.0)
            kind = e.dxftype()
            if kind == "LINE":
                base = Vec3(dxf.start)
            elif kind in ("CIRCLE", "ARC", "ELLIPSE"):
                base = Vec3(dxf.center)
            elif kind == "LWPOLYLINE":
                base = Vec3(0, 0, float(dxf.get("elevation", 0.0) or 0.0))
            elif kind in ("POLYLINE", "HATCH", "MPOLYGON"):
                base = Vec3(dxf.get("elevation", (0, 0, 0)))
            elif kind in ("SOLID", "TRACE", "3DFACE"):
                base = Vec3(dxf.vtx0)
            else:
                base = Vec3(0, 0, 0)
            normal = Vec3(dxf.get("extrusion", (0, 0, 1)))
            if kind in ("CIRCLE", "ARC", "LWPOLYLINE", "POLYLINE", "HATCH", "MPOLYGON", "SOLID", "TRACE"):
                base = e.ocs().to_wcs(base)
            top = base + normal.normalize() * thickness if thickness else base
            m = ctx.m
            za = float(np.dot(np.array(base.xyz), m[:3, 2]) + m[3, 2])
            zb = float(np.dot(np.array(top.xyz), m[:3, 2]) + m[3, 2])
        except Exception:
            return 0.0, math.inf
        if not (math.isfinite(za) and math.isfinite(zb)):
            return 0.0, math.inf
        lo, hi = min(za, zb), max(za, zb)
        if thickness == 0:
            return (0.0, math.inf) if abs(lo) < 1e-12 else (lo, math.inf)
        return lo, hi

    def effective_role(self, role: str, ctx: _Ctx) -> str:
        return "door-block" if ctx.forced == "door" else role

    def note_points(self, e, dxftype: str, ctx: _Ctx) -> None:
        """Definition points of annotation entities, for the drawing extent only (never obstacles)."""
        try:
            if dxftype in ("DIMENSION", "ARC_DIMENSION", "LARGE_RADIAL_DIMENSION"):
                block = e.get_geometry_block()
                if block is not None and self._shallow_block(block):
                    pts = _box_corners(e)      # the rendered dimension (lines, arrows, text)
                else:
                    names = ("defpoint", "defpoint2", "defpoint3", "defpoint4", "defpoint5", "text_midpoint")
                    pts = [tuple(e.dxf.get(n)) for n in names if e.dxf.hasattr(n)]
                ocs = None
            elif dxftype == "LEADER":
                pts, ocs = [tuple(v) for v in e.vertices], None
            elif dxftype == "POINT":
                pts, ocs = [tuple(e.dxf.location)], None
            else:
                return
            if pts:
                world = self.to_world(np.array(pts, dtype=float).reshape(-1, 3), ctx, ocs)
                if np.all(np.isfinite(world)) and float(np.max(np.abs(world))) <= self.limits.max_abs_coordinate:
                    self.out.extra_points.append(world)
        except Exception:   # annotation points are a nicety: never fail an import on them
            return

    def _shallow_block(self, block) -> bool:
        """A small block whose INSERTs (arrowheads) reference blocks without INSERTs: safe to measure."""
        if len(block) > 500:
            return False
        for x in block:
            if x.dxftype() == "INSERT":
                sub = self.doc.blocks.get(x.dxf.get("name", ""))
                if sub is None or len(sub) > 500 or x.mcount > 1 or any(y.dxftype() == "INSERT" for y in sub):
                    return False
        return True

    # -- INSERT ----------------------------------------------------------------------------
    # one INSERT: block, transform, forced role, attributes and array grid, then the recursion per grid cell
    def visit_insert(self, e, ctx: _Ctx, layer: str) -> None:  # noqa: C901
        handle = e.dxf.get("handle", "?")
        raw_name = e.dxf.get("name", "")
        block = self.doc.blocks.get(raw_name)
        name = dxf_name(raw_name)
        where = self.where(handle, ctx)
        self.out.layer_counts[layer] += 1
        self.out.layer_names.add(layer)
        if block is None:
            self.out.issues.append(("missing-block", f"INSERT of undefined block '{name}' ignored", handle, layer))
            return
        if block.block is not None and block.block.is_xref:
            self.out.issues.append(("skipped", f"external reference '{name}' is not bound: its content "
                                    "is not in this file", handle, layer))
            return
        try:
            m_child = np.array(list(e.matrix44().rows()), dtype=float)
        except Exception as exc:
            raise PlanImportError(f"INSERT of block '{name}' has an invalid transform ({exc})",
                                  self.path, where) from None
        if not np.all(np.isfinite(m_child)):
            raise PlanImportError(f"INSERT of block '{name}' has a non-finite insertion point, scale "
                                  "or rotation", self.path, where)
        # role forced by the block name (outermost decision stands; furniture may be refined)
        forced, reason = ctx.forced, ctx.forced_reason
        if forced is None or forced == "furniture":
            choice = self.resolver.block_role(name)
            if choice is not None:
                forced, reason = choice.role, choice.reason
        # attributes attached to this INSERT live in the enclosing frame
        try:
            attribs = list(e.attribs)
        except AttributeError:
            attribs = []
        for att in attribs:
            att_layer = dxf_name(att.dxf.get("layer", "0") or "0")
            att_layer = layer if att_layer == "0" else att_layer
            if not self.layer_selected(att_layer):
                continue
            if att.dxf.get("flags", 0) & 1:   # invisible attribute
                continue
            if self.role_for(att_layer, ctx) != "ignore":
                self.visit_text(att, ctx, att_layer, att.dxf.get("handle", "?"),
                                self.where(att.dxf.get("handle", "?"), ctx))
        rows = int(e.dxf.get("row_count", 1) or 1) if e.dxf.get("row_spacing", 0) else 1
        cols = int(e.dxf.get("column_count", 1) or 1) if e.dxf.get("column_spacing", 0) else 1
        rows, cols = max(rows, 1), max(cols, 1)
        offsets = [np.zeros(3)]
        if rows * cols > 1:
            rot = math.radians(e.dxf.get("rotation", 0.0))
            ocs = ocs_matrix(e.dxf.get("extrusion", (0, 0, 1)))
            rs, cs = e.dxf.get("row_spacing", 0.0), e.dxf.get("column_spacing", 0.0)
            offsets = []
            for r in range(rows):
                for c in range(cols):
                    ox, oy = c * cs, r * rs
                    v = np.array([ox * math.cos(rot) - oy * math.sin(rot),
                                  ox * math.sin(rot) + oy * math.cos(rot), 0.0])
                    offsets.append(v @ ocs)
        top = ctx.top if ctx.block_name is not None else handle
        for off in offsets:
            m = m_child.copy()
            m[3, :3] += off
            inst = ctx.inst
            if ctx.depth == 0:
                inst = self._next_inst
                self._next_inst += 1
            gid = ctx.group
            if forced == "door" and ctx.forced != "door":   # a new door symbol starts here
                gid = self._next_group
                self._next_group += 1
                self.out.door_groups[gid] = DoorGroup(gid, name, layer, handle, where)
            child = _Ctx(m=m @ ctx.m, depth=ctx.depth + 1, layer=layer, forced=forced, forced_reason=reason,
                         group=gid, inst=inst, blocks=(name, *ctx.blocks), top=top, block_name=name)
            for sub in block:
                self.visit(sub, child)

    # -- text -----------------------------------------------------------------------------
    def visit_text(self, e, ctx: _Ctx, layer: str, handle: str, where: str) -> None:
        dxftype = e.dxftype()
        if dxftype == "MTEXT":
            raw = e.plain_text(split=False)
            point = np.array([tuple(e.dxf.get("insert", (0, 0, 0)))], dtype=float)
            ocs = None
        else:
            if dxftype == "ATTRIB" and e.has_embedded_mtext_entity:
                raw = e.virtual_mtext_entity().plain_text(split=False)
            else:
                raw = e.plain_text()
            align, p1, p2 = e.get_placement()
            p = p1 if p2 is None else (Vec3(p1) + Vec3(p2)) * 0.5
            point = np.array([tuple(p)], dtype=float)
            ocs = ocs_matrix(e.dxf.get("extrusion", (0, 0, 1)))
        text = clean_text(raw)
        if not text:
            return
        xy = self.to_world(point, ctx, ocs)
        self.check(xy, where)
        corners = _box_corners(e)
        if corners:
            box = self.to_world(np.array(corners, dtype=float), ctx)
            if np.all(np.isfinite(box)) and float(np.max(np.abs(box))) <= self.limits.max_abs_coordinate:
                self.out.extra_points.append(box)
        self.out.texts.append(TextItem(text, float(xy[0, 0]), float(xy[0, 1]), layer, handle, where))

def walk_modelspace(doc, path: str, resolver: RoleResolver, limits: ImportLimits,
                    layer_patterns: list[str] | None = None, release: bool = False) -> WalkResult:
    """Expand model space into primitives (drawing units, world frame). See module docstring.

    ``release=True`` deletes each model-space entity from ``doc`` once it was read (blocks and
    tables stay), so that a big drawing is not held twice, as ezdxf entities and as primitives;
    ``doc`` has an empty model space afterwards.
    """
    return _Walker(doc, path, resolver, limits, layer_patterns, release).run()
