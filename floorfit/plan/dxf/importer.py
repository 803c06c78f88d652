"""The import pipeline: read, check limits, expand, decide units, recognise doors, build the Plan.

Order matters: the unit must be known before curves are flattened (the chord
tolerance is given in metres), and the unit check needs door sizes, so doors are
measured in drawing units first (radii and block scales do not depend on the unit)
and recognised for good once the unit is fixed.
"""

from __future__ import annotations

import functools
import gc
import math
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import shapely
from shapely.errors import GEOSException

from floorfit.errors import FloorfitError, InputError, PlanImportError
from floorfit.plan.directions import dominant_directions_deg
from floorfit.plan.dxf.doors import door_size_evidence, find_doors
from floorfit.plan.dxf.hatches import hatch_needs_thickness, hatch_policy
from floorfit.plan.dxf.labels import LabelIndex, to_labels
from floorfit.plan.dxf.limits import BlockStats, ImportLimits, check_block_graph
from floorfit.plan.dxf.primitives import Prim, WalkResult
from floorfit.plan.dxf.reading import audit_drawing, no_cyclic_gc, open_drawing
from floorfit.plan.dxf.roles import RoleResolver
from floorfit.plan.dxf.units import UnitDecision, UnitEvidence, decide_units, parse_units, unit_hint_from_text
from floorfit.plan.dxf.walker import walk_modelspace
from floorfit.plan.dxf.wallbands import form_wall_bands
from floorfit.plan.model import Doorway, ImportIssue, LayerInfo, Plan

__all__ = ["ImportResult", "import_drawing", "DEFAULT_CURVE_TOLERANCE_M"]

#: Chord tolerance for flattening arcs, ellipses, splines and bulges (metres). The
#: engine grows the vehicle by this amount, so "fits" stays sound.
DEFAULT_CURVE_TOLERANCE_M = 0.005
_MAX_LISTED_HANDLES = 5
#: Plausible median width of door openings drawn as lines, metres (wider than a door leaf:
#: double doors and shop fronts; common practice).
OPENING_RANGE_M = (0.5, 5.0)


@dataclass
class ImportResult:
    """A plan and what the importer learnt on the way (for ``floorfit inspect``)."""

    plan: Plan
    units: UnitDecision
    evidence: UnitEvidence
    block_stats: BlockStats
    binary: bool
    release: str | None
    layer_roles: dict[str, tuple[str, str]] = field(default_factory=dict)
    notes: dict[str, Any] = field(default_factory=dict)
    drawn_extent_m: list[float] | None = None   # every entity read (all roles), drawing frame, metres


def _check_window(window) -> tuple[float, float, float, float] | None:
    if window is None:
        return None
    try:
        values = tuple(float(v) for v in window)
    except (TypeError, ValueError):
        raise InputError(f"window must be four numbers xmin,ymin,xmax,ymax, got {window!r}", None, "--window") from None
    if len(values) != 4 or not all(math.isfinite(v) for v in values):
        raise InputError(f"window must be four finite numbers xmin,ymin,xmax,ymax, got {window!r}", None, "--window")
    x0, y0, x1, y1 = values
    if not (x0 < x1 and y0 < y1):
        raise InputError(f"window needs xmin < xmax and ymin < ymax, got {window!r}", None, "--window")
    return values


def _check_layers(layers) -> list[str] | None:
    if layers is None:
        return None
    if isinstance(layers, str):
        layers = [layers]
    out = []
    for pat in layers:
        if not isinstance(pat, str) or not pat.strip():
            raise InputError(f"layer pattern must be a non-empty text, got {pat!r}", None, "--layers")
        out.append(pat.strip())
    return out or None


def _is_binary(path: Path) -> bool:
    with path.open("rb") as fh:
        return fh.read(18) == b"AutoCAD Binary DXF"


def _header(doc, name: str):
    try:
        if name in doc.header:
            return doc.header.get(name)
    except Exception:
        return None
    return None


def _header_int(doc, name: str) -> int | None:
    value = _header(doc, name)
    try:
        return int(value) if value is not None else None
    except (TypeError, ValueError):
        return None


def _release_name(dxfversion: str) -> str | None:
    """The AutoCAD release of a DXF version code (``AC1024`` -> ``R2010``), None when unknown."""
    try:
        from ezdxf.lldxf.const import acad_release
        return acad_release.get(dxfversion)
    except Exception:
        return None


def _polygons_of(geom) -> list[shapely.Polygon]:
    if geom is None or geom.is_empty:
        return []
    if not geom.is_valid:
        geom = shapely.make_valid(geom)
    return [g for g in shapely.get_parts(geom) if g.geom_type == "Polygon" and not g.is_empty and g.area > 0]


def _fill_thickness(geom) -> float:
    """Largest thickness of a filled area: diameter of its largest inscribed circle (input units)."""
    best = 0.0
    for part in _polygons_of(geom):
        x0, y0, x1, y1 = part.bounds
        line = shapely.maximum_inscribed_circle(part, tolerance=max(x1 - x0, y1 - y0) / 1000.0)
        best = max(best, 2.0 * float(line.length))
    return best


def _ring_polygon(ring: np.ndarray) -> list[shapely.Polygon]:
    if len(ring) < 3:
        return []
    return _polygons_of(shapely.Polygon(ring))


# one dispatch over primitive kinds (fill, wide polyline, solid, line) into the same parallel lists and line pools
def _build_geometry(prims: list[Prim], flat: list[list[np.ndarray]], remove: set[int], leaves: set[int],  # noqa: C901
                    keep_leaves: bool, notes: Counter, mpu: float, tol_units: float):
    """Linework paths and solid polygons in drawing units (world frame), each with its
    attributes (layer, bottom, top, handle, entity type) in parallel lists ``wall_attrs`` /
    ``solid_attrs``. The handle is the model-space entity's (the INSERT's for a block member)."""
    walls: list[np.ndarray] = []
    solids: list[shapely.Polygon] = []
    wall_attrs: list[tuple[str, float, float, str, str]] = []
    solid_attrs: list[tuple[str, float, float, str, str]] = []
    pools: dict[tuple[int, str], list[np.ndarray]] = {}       # loose solid lines (paths) per instance and layer
    pool_z: dict[tuple[int, str], tuple[float, float]] = {}
    pool_src: dict[tuple[int, str], tuple[str, str]] = {}

    def add_walls(items, attrs):
        items = list(items)
        walls.extend(items)
        wall_attrs.extend([attrs] * len(items))

    def add_solids(items, attrs):
        items = list(items)
        solids.extend(items)
        solid_attrs.extend([attrs] * len(items))

    def add_ring(ring, attrs):
        """A closed ring: the solid it encloses, or linework where it encloses no area."""
        polys = _ring_polygon(ring)
        if polys:
            add_solids(polys, attrs)
        else:
            add_walls([ring], attrs)

    for i, p in enumerate(prims):
        if i in remove:
            continue
        role = p.role
        if i in leaves:
            if not keep_leaves:
                continue
            role = "wall"
        if role in ("door-block", "ignore"):
            continue           # not obstacles (door symbols, ignored layers)
        if role in ("door", "opening"):
            role = "wall"      # frames, windows and other lines on door layers stay obstacles
        paths = flat[i]
        attrs = (p.layer, p.z0, p.z1, *_source(p))
        if p.kind == "fill":
            if p.dxftype in ("HATCH", "MPOLYGON"):
                polys = [poly for ring in paths for poly in _ring_polygon(ring)]
                if not polys:
                    continue
                try:       # even-odd rule: islands become holes
                    merged = functools.reduce(shapely.symmetric_difference, polys) if len(polys) > 1 else polys[0]
                except GEOSException:
                    merged = shapely.union_all(polys)
                # the thickness (a largest inscribed circle) only where the pattern leaves the role open
                thickness = _fill_thickness(merged) * mpu if hatch_needs_thickness(p.pattern, role) else None
                hrole, _ = hatch_policy(p.pattern, role, thickness)
                notes[f"hatch-{hrole}"] += 1
                if hrole == "solid":
                    add_solids(_polygons_of(merged), attrs)
                continue
            for ring in paths:
                add_ring(ring, attrs)
            continue
        if p.width > 0:
            for path in paths:
                if len(path) >= 2:
                    band = shapely.LineString(path).buffer(p.width / 2.0, cap_style="flat", join_style="mitre")
                    add_solids(_polygons_of(band), attrs)
            notes["wide-polyline"] += 1
            continue
        if role == "solid":
            if p.closed:
                for ring in paths:
                    add_ring(ring, attrs)
            else:
                key = (p.inst, p.layer)
                pools.setdefault(key, []).extend(x for x in paths if len(x) >= 2)
                z0, z1 = pool_z.get(key, (math.inf, -math.inf))
                pool_z[key] = (min(z0, p.z0), max(z1, p.z1))
                pool_src.setdefault(key, _source(p))
            continue
        add_walls(paths, attrs)
    return walls, solids, wall_attrs, solid_attrs, [((k[1], *pool_z[k], *pool_src[k]), v) for k, v in pools.items()]


def _pooled_solids(walls, solids, wall_attrs, solid_attrs, pools, notes: Counter, tol_units: float):
    """Faces of the loose lines of solid layers (``pools``: (attributes, paths) per model-space
    instance and layer from :func:`_build_geometry`) added to its parallel lists as solids; lines
    that close no face stay linework."""
    def add_walls(items, attrs):
        items = list(items)
        walls.extend(items)
        wall_attrs.extend([attrs] * len(items))

    for attrs, lines in pools:
        try:
            # snap to a grid far below the chord tolerance so that arc ends meet exactly (the lines
            # are made in one vectorised call: a floor of exploded furniture pools 100,000 of them)
            noded = shapely.union_all(shapely.set_precision(_linestrings(lines), tol_units / 100.0))
            polys, cuts, dangles, invalid = shapely.polygonize_full(shapely.get_parts(noded))
        except GEOSException:
            add_walls(lines, attrs)      # keep the outline as linework
            notes["solid-lines-no-face"] += len(lines)
            continue
        faces = [g for g in shapely.get_parts(polys) if g.area > 0]
        solids.extend(faces)
        solid_attrs.extend([attrs] * len(faces))
        for extra in (cuts, dangles, invalid):
            for g in shapely.get_parts(extra):
                if not g.is_empty:
                    add_walls([np.asarray(g.coords) if g.geom_type == "LineString" else np.asarray(g.exterior.coords)],
                              attrs)
        if not faces:
            notes["solid-lines-no-face"] += len(lines)
    return walls, solids, wall_attrs, solid_attrs


def _points_size(prims: list[Prim]) -> float | None:
    """Larger side of the box around the primitives' points (or coarse points), drawing units;
    None without primitives. One array, not a box per primitive."""
    if not prims:
        return None
    pts = np.vstack([p.coarse if p.coarse is not None else p.points for p in prims])
    lo, hi = pts[:, :2].min(axis=0), pts[:, :2].max(axis=0)
    return float(max(hi[0] - lo[0], hi[1] - lo[1]))


def _source(p: Prim) -> tuple[str, str]:
    """(handle, entity type) a sheet names for an obstacle from ``p``: the model-space entity, so
    a block member is named by its INSERT (the entity a planner can select in the drawing)."""
    if p.top and p.top != p.handle:
        return p.top, f"{p.dxftype} in INSERT"
    return p.handle or "", p.dxftype


def _flatten_all(prims: list[Prim], tol_units: float, issues: list[ImportIssue]) -> list[list[np.ndarray]]:
    """Flatten every primitive; a malformed curve is reported and dropped, never fatal."""
    flat = []
    for p in prims:
        pts = p.points
        if p.curve is None and pts is not None and pts.dtype == float and pts.ndim == 2 and pts.shape[1] == 2:
            flat.append([pts])         # straight: its points are its only path (no copy per line)
            continue
        try:
            flat.append([np.asarray(x, dtype=float).reshape(-1, 2) for x in p.paths(tol_units)])
        except FloorfitError:
            raise
        except Exception as exc:
            issues.append(ImportIssue("skipped", f"cannot flatten {p.dxftype}: {type(exc).__name__}: {exc}",
                                      p.handle, p.layer))
            flat.append([])
    return flat


def _extent_of(flat: list[list[np.ndarray]], window) -> tuple[float, float, float, float] | None:
    """Bounding box (drawing units) of every flattened path and annotation point, within the window."""
    pts = [p for paths in flat for p in paths if len(p)]
    if window is not None:
        x0, y0, x1, y1 = window
        pts = [p[(p[:, 0] >= x0) & (p[:, 0] <= x1) & (p[:, 1] >= y0) & (p[:, 1] <= y1)] for p in pts]
        pts = [p for p in pts if len(p)]
    if not pts:
        return None
    allp = np.vstack(pts)
    x0, y0 = allp.min(axis=0)
    x1, y1 = allp.max(axis=0)
    return float(x0), float(y0), float(x1), float(y1)


def _linestrings(paths: list[np.ndarray]) -> np.ndarray:
    """An object array of LineStrings from (N_i, 2) arrays, built in one vectorised call."""
    if not paths:
        return np.array([], dtype=object)
    coords = np.vstack(paths)
    index = np.repeat(np.arange(len(paths)), [len(p) for p in paths])
    return np.asarray(shapely.linestrings(coords, indices=index), dtype=object).reshape(-1)


def _skipped_issues(walk: WalkResult) -> list[ImportIssue]:
    from floorfit.plan.dxf.walker import SKIPPED_TYPES
    issues = []
    for dxftype, handles in sorted(walk.skipped.items()):
        what = SKIPPED_TYPES.get(dxftype, "unsupported entity type")
        listed = ", ".join(f"#{h}" for h in handles[:_MAX_LISTED_HANDLES])
        more = f" and {len(handles) - _MAX_LISTED_HANDLES} more" if len(handles) > _MAX_LISTED_HANDLES else ""
        issues.append(ImportIssue("skipped", f"{len(handles)} {dxftype} entit{'y' if len(handles) == 1 else 'ies'} "
                                  f"ignored ({what}, not an obstacle): {listed}{more}",
                                  handles[0] if handles else None))
    return issues


def import_drawing(path, *, units: str | None = None, roles: dict | None = None, window=None,
                   layers=None, keep_door_leaves: bool = False, limits: ImportLimits | None = None,
                   curve_tolerance_m: float = DEFAULT_CURVE_TOLERANCE_M) -> ImportResult:
    """Import a DXF floor plan; see :func:`floorfit.plan.dxf.load_plan` for the parameters.

    Python's cyclic garbage collector is paused meanwhile (:func:`.reading.no_cyclic_gc`): the
    import makes millions of long-lived objects and frees what it no longer needs itself.
    """
    with no_cyclic_gc():
        return _import_drawing(path, units=units, roles=roles, window=window, layers=layers,
                               keep_door_leaves=keep_door_leaves, limits=limits,
                               curve_tolerance_m=curve_tolerance_m)


# the import pipeline stage by stage (read, walk, units, doors, geometry, local frame, issues), as marked below
def _import_drawing(path, *, units, roles, window, layers, keep_door_leaves, limits,  # noqa: C901
                    curve_tolerance_m) -> ImportResult:
    name = str(path)
    limits = limits or ImportLimits()
    if units is not None:
        parse_units(units)
    window = _check_window(window)
    layer_patterns = _check_layers(layers)
    try:
        resolver = RoleResolver(roles)
    except (ValueError, TypeError, AttributeError) as exc:
        raise InputError(f"bad layer roles: {exc}", None, "roles") from None

    doc, read_issues = open_drawing(name)
    issues: list[ImportIssue] = [ImportIssue(k, m, h) for k, m, h in read_issues]
    stats = check_block_graph(doc, limits, name)
    if not any(i.kind == "repaired" for i in issues):       # the recovery path has audited already
        issues.extend(ImportIssue(k, m, h) for k, m, h in audit_drawing(doc, name))

    msp_count = len(doc.modelspace())
    if msp_count == 0:
        paper = sum(len(layout) for layout in doc.layouts if not layout.is_modelspace)
        if any(i.kind == "truncated" for i in issues):
            raise PlanImportError("the file is cut short (no EOF marker) and no model-space entity "
                                  "could be recovered", name)
        raise PlanImportError(f"model space is empty (paper space holds {paper} entit{'y' if paper == 1 else 'ies'}; "
                              "floorfit reads model space only)", name)

    header = {key: _header_int(doc, key) for key in ("$INSUNITS", "$MEASUREMENT")}
    dxf_version, release = doc.dxfversion, _release_name(doc.dxfversion)
    # model space is read once: each entity is freed as soon as it is walked (a 47 MB drawing
    # would otherwise be held twice, as ezdxf entities and as primitives)
    walk = walk_modelspace(doc, name, resolver, limits, layer_patterns, release=True)
    del doc
    gc.collect()        # what is left of the drawing (blocks, tables, objects) holds reference cycles
    prims = walk.prims
    texts = walk.texts
    if window is not None:
        x0, y0, x1, y1 = window
        keep = []
        for p in prims:
            bx0, by0, bx1, by1 = p.bbox()
            if bx1 >= x0 and bx0 <= x1 and by1 >= y0 and by0 <= y1:
                keep.append(p)
        prims = keep
        texts = [t for t in texts if x0 <= t.x <= x1 and y0 <= t.y <= y1]

    # --- units --------------------------------------------------------------------------
    evidence = UnitEvidence(
        header_code=header["$INSUNITS"],
        measurement=header["$MEASUREMENT"],
        door_sizes=door_size_evidence(prims, walk.door_groups),
    )
    evidence.extent = _points_size([p for p in prims if p.role not in ("door-block", "ignore")])
    for t in texts:
        hint = unit_hint_from_text(t.text)
        if hint:
            evidence.text_hint = (hint, t.text[:80])
            break
    decision = decide_units(evidence, units)
    mpu = decision.metres_per_unit
    if decision.warning:
        issues.append(ImportIssue("units", decision.warning))

    # --- flatten, doors, geometry -------------------------------------------------------
    tol_units = curve_tolerance_m / mpu
    flat = _flatten_all(prims, tol_units, issues)
    extra = [np.array([[t.x, t.y] for t in texts])] if texts else []
    extra += walk.extra_points
    extra.append(walk.extent_only_points())
    drawn_extent = _extent_of(flat + [extra], window)
    extra = None
    doors_found, remove, leaves = find_doors(prims, flat, walk.door_groups, mpu)
    notes: Counter = Counter()
    try:
        *parts, pools = _build_geometry(prims, flat, remove, leaves, keep_door_leaves, notes, mpu, tol_units)
        # the primitives are done with: free them before the pooled lines are noded (a union that
        # needs about 190 MB for the 105,000 loose furniture lines of a 47 MB office floor)
        prims = flat = walk.prims = None
        wall_paths, solid_polys, wall_attrs, solid_attrs = _pooled_solids(*parts, pools, notes, tol_units)
    except GEOSException as exc:
        raise PlanImportError(f"geometry could not be built ({exc})", name) from None

    keep = [i for i, w in enumerate(wall_paths) if len(w) >= 2]
    walls = _linestrings([wall_paths[i] for i in keep])
    w_attr = [wall_attrs[i] for i in keep]
    degenerate = 0
    if len(walls):
        lengths = shapely.length(walls)
        degenerate = int(np.sum(lengths <= 0))
        w_attr = [a for a, ok in zip(w_attr, lengths > 0) if ok]
        walls = walls[lengths > 0]
    solids = np.asarray(solid_polys, dtype=object).reshape(-1)
    s_attr = list(solid_attrs)
    if window is not None:
        x0, y0, x1, y1 = window
        if len(walls):
            parts, src = shapely.get_parts(shapely.clip_by_rect(walls, x0, y0, x1, y1), return_index=True)
            ok = ~shapely.is_empty(parts) & (shapely.get_type_id(parts) == 1)
            walls, w_attr = parts[ok], [w_attr[i] for i in src[ok]]
        if len(solids):
            clipped = shapely.intersection(solids, shapely.box(x0, y0, x1, y1))
            pairs = [(g, s_attr[i]) for i, c in enumerate(clipped) for g in _polygons_of(c)]
            solids = np.array([g for g, _ in pairs], dtype=object)
            s_attr = [a for _, a in pairs]
        doors_found = [d for d in doors_found if x0 <= d.x <= x1 and y0 <= d.y <= y1]
    if degenerate:
        issues.append(ImportIssue("skipped", f"{degenerate} zero-length line(s) dropped"))

    if len(walls) + len(solids) == 0:
        reasons = []
        if walk.filtered:
            reasons.append(f"{walk.filtered} entities outside the selected layers")
        if window is not None:
            reasons.append("the window may not cover the drawing")
        ignored = sum(len(v) for v in walk.skipped.values())
        if ignored:
            reasons.append(f"{ignored} entities of types that are never obstacles")
        detail = "; ".join(reasons) if reasons else "every entity is on a layer whose role is not an obstacle"
        raise PlanImportError(f"nothing usable: no obstacle geometry in model space ({detail})", name)

    # --- local frame ------------------------------------------------------------------------
    geoms = np.concatenate([walls, solids]) if len(solids) else walls
    b = shapely.bounds(geoms)
    xmin, ymin = float(np.nanmin(b[:, 0])), float(np.nanmin(b[:, 1]))
    xmax, ymax = float(np.nanmax(b[:, 2])), float(np.nanmax(b[:, 3]))
    size_m = max(xmax - xmin, ymax - ymin) * mpu
    if size_m > limits.max_extent_m:
        raise PlanImportError(f"the geometry is {size_m:.4g} m across with unit {decision.name}, absurd for a "
                              f"floor plan (limit {limits.max_extent_m:g} m); check --units or crop with --window",
                              name)
    origin_m = (math.floor(xmin * mpu), math.floor(ymin * mpu))
    origin_u = (origin_m[0] / mpu, origin_m[1] / mpu)
    shift = np.array(origin_u)

    def to_local(g):
        return shapely.transform(g, lambda c: (c - shift) * mpu)

    walls_m = to_local(walls) if len(walls) else walls
    solids_m = to_local(solids) if len(solids) else solids
    # the walls' directions as drawn (the heading slices follow them), before bands replace lines
    wall_directions = tuple(dominant_directions_deg(walls_m)) if len(walls_m) else ()
    walls_m, w_attr, solids_m, s_attr, bands = form_wall_bands(     # double wall lines -> filled bands
        walls_m, w_attr, solids_m, s_attr, lambda lay: resolver.layer_role(lay).role == "wall")
    notes.update(bands)

    labels = to_labels(texts, origin_u, mpu)
    index = LabelIndex(labels)
    doorways = []
    for d in doors_found:
        x, y = (d.x - origin_u[0]) * mpu, (d.y - origin_u[1]) * mpu
        near = index.nearest(x, y)
        doorways.append(Doorway(x=x, y=y, width_m=d.width * mpu, layer=d.layer, source=d.source,
                                handle=d.handle, label=near.text if near else None))

    # --- layers and issues ------------------------------------------------------------------
    layer_infos = []
    layer_roles = {}
    for lname in sorted(walk.layer_names, key=lambda s: (-walk.layer_counts.get(s, 0), s.lower())):
        choice = resolver.layer_role(lname)
        count = walk.layer_counts.get(lname, 0)
        layer_infos.append(LayerInfo(lname, choice.role, count, choice.reason))
        layer_roles[lname] = (choice.role, choice.reason)
        if not choice.known and count > 0 and (layer_patterns is None or _selected(lname, layer_patterns)):
            what = "is layer 0 (drawn without a layer)" if lname == "0" else "matches no known name"
            issues.append(ImportIssue("unknown-layer", f"layer '{lname}' ({count} entities) {what}: treated as "
                                      "wall; give it a role in the site file [layers] table", layer=lname))
    # a site [layers] pattern that matches no layer at all is most likely misspelt: say so
    for pat, role in resolver.user_layers:
        if not any(_selected(n, [pat]) for n in walk.layer_names):
            issues.append(ImportIssue("unused-pattern", f"site [layers] pattern '{pat}' (role {role}) matches "
                                      "no layer of the drawing"))
    issues.extend(ImportIssue(k, m, h, lay) for k, m, h, lay in walk.issues)
    issues.extend(_skipped_issues(walk))
    if notes.get("hatch-ignore"):
        issues.append(ImportIssue("hatch", f"{notes['hatch-ignore']} hatch(es) taken as floor finish or floor "
                                  "area (not obstacles)"))
    for d in doorways:
        if not (0.5 <= d.width_m <= 2.6) and d.source != "opening-line":
            issues.append(ImportIssue("door", f"door width {d.width_m:.3g} m is unusual (check the unit)",
                                      d.handle, d.layer))
    openings = [d.width_m for d in doorways if d.source == "opening-line"]
    if openings and not decision.warning:
        median = float(np.median(openings))
        if not (OPENING_RANGE_M[0] <= median <= OPENING_RANGE_M[1]):
            layers_txt = ", ".join(sorted({d.layer for d in doorways if d.source == "opening-line"}))
            issues.append(ImportIssue("units", f"openings on layer {layers_txt} are {median:.3g} m wide (median of "
                                      f"{len(openings)}) with unit {decision.name}: the drawing scale may be wrong; "
                                      "check for a scale note and pass --units", layer=layers_txt))
    sheet = _sheet_warning(walk, layer_roles)
    if sheet:
        issues.append(ImportIssue("not-a-plan", sheet))

    def heights(attrs):
        z = np.array([(a[1], a[2]) for a in attrs], dtype=float).reshape(-1, 2) * mpu
        return np.where(np.isfinite(z), z, np.inf)

    plan = Plan(walls=walls_m, solids=solids_m, origin=(float(origin_m[0]), float(origin_m[1])), source=name,
                wall_layers=np.array([a[0] for a in w_attr], dtype=object),
                solid_layers=np.array([a[0] for a in s_attr], dtype=object),
                wall_heights=heights(w_attr), solid_heights=heights(s_attr),
                wall_handles=np.array([a[3] for a in w_attr], dtype=object),
                solid_handles=np.array([a[3] for a in s_attr], dtype=object),
                wall_types=np.array([a[4] for a in w_attr], dtype=object),
                solid_types=np.array([a[4] for a in s_attr], dtype=object),
                units=decision.name, metres_per_unit=mpu, unit_reason=decision.reason,
                curve_tolerance_m=curve_tolerance_m, doors=doorways, labels=labels, layers=layer_infos,
                issues=issues, dxf_version=dxf_version, wall_directions_deg=wall_directions)
    return ImportResult(plan=plan, units=decision, evidence=evidence, block_stats=stats,
                        binary=_is_binary(Path(name)), release=release, layer_roles=layer_roles,
                        notes=dict(notes),
                        drawn_extent_m=[v * mpu for v in drawn_extent] if drawn_extent else None)


def _selected(layer: str, patterns: list[str]) -> bool:
    import fnmatch

    from floorfit.plan.dxf.roles import strip_xref_prefix
    full, core = layer.lower(), strip_xref_prefix(layer).lower()
    return any(fnmatch.fnmatchcase(full, p.lower()) or fnmatch.fnmatchcase(core, p.lower()) for p in patterns)


def _sheet_warning(walk: WalkResult, layer_roles: dict[str, tuple[str, str]]) -> str | None:
    """A warning when the model space looks like elevations / sections rather than a plan."""
    views = sum(c for n, c in walk.layer_counts.items()
                if "elevation / section / detail" in layer_roles.get(n, ("", ""))[1])
    plan_like = sum(c for n, c in walk.layer_counts.items()
                    if layer_roles.get(n, ("", ""))[0] in ("wall", "solid", "door", "opening")
                    and layer_roles.get(n, ("", ""))[1] != "layer 0 (no name): fallback wall")
    if views and views >= 0.3 * max(plan_like, 1):
        return (f"looks like a sheet of elevations / sections, not a floor plan: {views} entities on "
                f"elevation, section or detail layers against {plan_like} on plan layers; "
                "crop the plan with --window or pick layers with --layers")
    return None
