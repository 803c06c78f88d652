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
import unicodedata
from collections import Counter, defaultdict
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from ezdxf import bbox as ezdxf_bbox
from ezdxf.lldxf.encoding import decode_dxf_unicode, has_dxf_unicode
from ezdxf.math import OCS, Vec3

from floorfit.errors import FloorfitError, LimitExceeded, PlanImportError
from floorfit.plan.dxf.curves import TooManyVertices, arc_points, bulge_polyline, ellipse_points, spline_points
from floorfit.plan.dxf.limits import ImportLimits, check_points, check_vertex_count
from floorfit.plan.dxf.roles import RoleResolver, strip_xref_prefix

__all__ = ["ArcInfo", "Prim", "TextItem", "DoorGroup", "WalkResult", "walk_modelspace", "clean_text", "dxf_name"]

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


@dataclass
class ArcInfo:
    """A circular arc after transformation (similarity transforms only), drawing units."""

    centre: np.ndarray
    radius: float
    p_start: np.ndarray
    p_end: np.ndarray
    span: float        # radians


@dataclass
class Prim:
    """One importable entity in world coordinates, drawing units, not yet flattened.

    ``kind``: ``"line"`` (linework, open or closed) or ``"fill"`` (filled area: SOLID,
    3DFACE, HATCH). ``role``: the final role after layer / block / furniture policy.
    """

    kind: str
    layer: str
    role: str
    dxftype: str
    where: str
    handle: str
    top: str
    closed: bool = False
    width: float = 0.0
    group: int = -1          # door-block instance
    inst: int = -1           # model-space INSERT instance (for polygonising solids)
    arc: ArcInfo | None = None
    points: np.ndarray | None = None              # straight geometry (N, 2), world
    curve: Callable[[float], list[np.ndarray]] | None = None   # tol (drawing units) -> paths
    coarse: np.ndarray | None = None              # rough points for extents / windows
    pattern: str = ""                             # hatch pattern name ("SOLID" for solid fill)
    z0: float = 0.0                               # height range, drawing units: bottom ...
    z1: float = math.inf                          # ... and top (inf: a flat 2-D entity blocks all heights)

    def paths(self, tol: float) -> list[np.ndarray]:
        """World paths (drawing units) flattened with chord error ≤ ``tol``."""
        if self.curve is not None:
            return self.curve(tol)
        return [self.points]

    def bbox(self) -> tuple[float, float, float, float]:
        pts = self.coarse if self.coarse is not None else self.points
        return (float(pts[:, 0].min()), float(pts[:, 1].min()), float(pts[:, 0].max()), float(pts[:, 1].max()))


@dataclass
class TextItem:
    """A text found in the drawing: raw text (control characters removed), world position."""

    text: str
    x: float
    y: float
    layer: str
    handle: str
    where: str


@dataclass
class DoorGroup:
    """One expanded door-block reference."""

    gid: int
    block: str
    layer: str
    handle: str
    where: str


@dataclass
class WalkResult:
    prims: list[Prim] = field(default_factory=list)
    texts: list[TextItem] = field(default_factory=list)
    door_groups: dict[int, DoorGroup] = field(default_factory=dict)
    layer_counts: Counter = field(default_factory=Counter)
    layer_names: set = field(default_factory=set)
    skipped: dict[str, list[str]] = field(default_factory=lambda: defaultdict(list))
    issues: list = field(default_factory=list)     # (kind, message, handle, layer)
    filtered: int = 0
    entity_count: int = 0
    extra_points: list = field(default_factory=list)   # annotation points (extent only), world


def clean_text(text: str) -> str:
    """Text as written in the drawing: DXF ``\\U+XXXX`` escapes decoded, control and format
    characters (including bidirectional overrides) removed, whitespace runs made one space."""
    if has_dxf_unicode(text):
        text = decode_dxf_unicode(text)
    out = []
    for ch in text:
        cat = unicodedata.category(ch)
        if cat == "Cc" or (cat == "Cf" and ch != "\u200d"):
            out.append(" " if ch in "\n\r\t\v\f" else "")
        else:
            out.append(ch)
    return " ".join("".join(out).split())


def dxf_name(name: str) -> str:
    """A layer or block name with DXF ``\\U+XXXX`` escapes decoded (pre-2007 files write
    non-ASCII names that way)."""
    return decode_dxf_unicode(name) if has_dxf_unicode(name) else name


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


def _ocs_matrix(extrusion) -> np.ndarray:
    """3x3 rows ux, uy, uz of the entity's OCS (identity for extrusion +Z)."""
    ocs = OCS(extrusion)
    if not ocs.transform:
        return np.eye(3)
    return np.array([tuple(ocs.ux), tuple(ocs.uy), tuple(ocs.uz)], dtype=float)


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


class _Walker:
    def __init__(self, doc, path: str, resolver: RoleResolver, limits: ImportLimits,
                 layer_patterns: list[str] | None):
        self.doc = doc
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

    # -- helpers -------------------------------------------------------------------------
    def where(self, handle: str, ctx: _Ctx) -> str:
        if ctx.block_name is None:
            return f"entity #{handle}"
        return f"entity #{handle} in block '{ctx.block_name}' via INSERT #{ctx.top}"

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
        with np.errstate(invalid="ignore", over="ignore"):   # non-finite input is reported by check()
            if ocs is not None:
                pts3 = pts3 @ ocs
            m = ctx.m
            return pts3 @ m[:3, :2] + m[3, :2]

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
        for entity in self.doc.modelspace():
            handle = entity.dxf.get("handle", "?")
            top_ctx = _Ctx(ctx.m, 0, None, None, "", -1, -1, (), handle, None)
            self.visit(entity, top_ctx)
        return self.out

    def visit(self, e, ctx: _Ctx) -> None:
        self._entity = e
        dxftype = e.dxftype()
        try:
            handle = e.dxf.get("handle", "?")
            own_layer = dxf_name(e.dxf.get("layer", "0") or "0")
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
            method = getattr(self, "do_" + dxftype.lower().replace("3d", "three_d"), None)
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
        z0, z1 = self.z_range(self._entity, ctx)
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
    def visit_insert(self, e, ctx: _Ctx, layer: str) -> None:
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
            raise PlanImportError(f"INSERT of block '{name}' has an invalid transform ({exc})", self.path, where) from None
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
                self.visit_text(att, ctx, att_layer, att.dxf.get("handle", "?"), self.where(att.dxf.get("handle", "?"), ctx))
        rows = int(e.dxf.get("row_count", 1) or 1) if e.dxf.get("row_spacing", 0) else 1
        cols = int(e.dxf.get("column_count", 1) or 1) if e.dxf.get("column_spacing", 0) else 1
        rows, cols = max(rows, 1), max(cols, 1)
        offsets = [np.zeros(3)]
        if rows * cols > 1:
            rot = math.radians(e.dxf.get("rotation", 0.0))
            ocs = _ocs_matrix(e.dxf.get("extrusion", (0, 0, 1)))
            rs, cs = e.dxf.get("row_spacing", 0.0), e.dxf.get("column_spacing", 0.0)
            offsets = []
            for r in range(rows):
                for c in range(cols):
                    ox, oy = c * cs, r * rs
                    v = np.array([ox * math.cos(rot) - oy * math.sin(rot), ox * math.sin(rot) + oy * math.cos(rot), 0.0])
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
            ocs = _ocs_matrix(e.dxf.get("extrusion", (0, 0, 1)))
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

    # -- straight entities -------------------------------------------------------------
    def do_line(self, e, ctx, layer, role, handle, where):
        pts = np.array([tuple(e.dxf.start), tuple(e.dxf.end)], dtype=float)
        world = self.to_world(pts, ctx)
        self.check(world, where)
        self.add(self.new_prim("line", layer, self.effective_role(role, ctx), "LINE", where, handle, ctx, points=world))

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
        self._quad(pts, ctx, layer, role, handle, where, e.dxftype(), _ocs_matrix(e.dxf.get("extrusion", (0, 0, 1))))

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
                       _ocs_matrix(e.dxf.get("extrusion", (0, 0, 1))), ctx, layer, role, handle, where, "LWPOLYLINE")

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
            ocs = _ocs_matrix(e.dxf.get("extrusion", (0, 0, 1)))
        else:
            bulges = np.zeros(len(pts))
            widths = [0.0]
            ocs = None
        self._polyline(pts, bulges, max(0.0, float(max(widths))), bool(e.is_closed), ocs if ocs is not None else np.eye(3),
                       ctx, layer, role, handle, where, "POLYLINE")

    # -- curves ------------------------------------------------------------------------------
    def _arc(self, e, ctx, layer, role, handle, where, full: bool):
        c = np.array(tuple(e.dxf.center), dtype=float)
        r = float(e.dxf.radius)
        ocs = _ocs_matrix(e.dxf.get("extrusion", (0, 0, 1)))
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
        ocs = _ocs_matrix(e.dxf.get("extrusion", (0, 0, 1)))
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


def walk_modelspace(doc, path: str, resolver: RoleResolver, limits: ImportLimits,
                    layer_patterns: list[str] | None = None) -> WalkResult:
    """Expand model space into primitives (drawing units, world frame). See module docstring."""
    return _Walker(doc, path, resolver, limits, layer_patterns).run()
