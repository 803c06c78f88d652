"""Safety limits for hostile or broken drawings, and the block-graph check done before expansion.

A DXF file is a program of sorts: one INSERT of a block that inserts itself, or a
MINSERT array of arrays, can describe more geometry than any machine can hold. Before
any block is expanded, :func:`check_block_graph` walks the block reference graph once
(iteratively, so a 10 000-deep chain does not exhaust Python's stack), detects cycles,
measures the nesting depth and computes the number of entities the expansion would
produce from a memoised per-block count times the multiplicity of each reference. A
drawing that would expand to 10^12 entities is refused in milliseconds, before a single
one is built.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from floorfit.errors import LimitExceeded, PlanImportError

__all__ = ["ImportLimits", "check_block_graph", "check_points", "check_vertex_count", "BlockStats", "block_key",
           "grid_multiplicity", "grid_shape"]


@dataclass(frozen=True)
class ImportLimits:
    """Documented safety limits of the DXF importer.

    Attributes
    ----------
    max_block_depth : int
        Deepest allowed INSERT nesting counted from model space (an INSERT in model space
        is depth 1). Default 64; real drawings seldom exceed 5.
    max_expanded_entities : int
        Most entities the expansion of all INSERT/MINSERT references may produce, counted
        before expanding. Default 2 000 000.
    max_vertices_per_entity : int
        Most vertices one entity may have, as stored (polyline vertices, spline control
        points, hatch boundary vertices) and after flattening curves. Default 200 000.
    max_abs_coordinate : float
        Largest absolute coordinate, in drawing units, after block transforms. Default 1e9
        (1000 km in millimetres; georeferenced plans sit near 1e8 mm).
    max_extent_m : float
        Largest plausible extent of the imported geometry, metres. Beyond it the drawing
        is refused as absurd for a floor plan. Default 100 000 m (100 km).
    """

    max_block_depth: int = 64
    max_expanded_entities: int = 2_000_000
    max_vertices_per_entity: int = 200_000
    max_abs_coordinate: float = 1e9
    max_extent_m: float = 100_000.0

    def __post_init__(self) -> None:
        for name in ("max_block_depth", "max_expanded_entities", "max_vertices_per_entity"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, int) or value < 1:
                raise ValueError(f"ImportLimits.{name} must be a positive integer, got {value!r}")
        for name in ("max_abs_coordinate", "max_extent_m"):
            value = getattr(self, name)
            if not (isinstance(value, (int, float)) and math.isfinite(value) and value > 0):
                raise ValueError(f"ImportLimits.{name} must be a positive finite number, got {value!r}")


@dataclass
class BlockStats:
    """What the block-graph check learnt: expanded entity count and deepest nesting."""

    expanded_entities: int
    max_depth: int


def block_key(name: str) -> str:
    """Block names are case-insensitive in DXF: the key used for every block lookup."""
    return str(name).casefold()


def grid_shape(insert) -> tuple[int, int]:
    """(rows, columns) of a MINSERT grid, (1, 1) for a plain INSERT. A count whose spacing
    is zero collapses to 1, as the copies would coincide."""
    dxf = insert.dxf
    rows = int(dxf.get("row_count", 1) or 1) if dxf.get("row_spacing", 0) else 1
    cols = int(dxf.get("column_count", 1) or 1) if dxf.get("column_spacing", 0) else 1
    return max(rows, 1), max(cols, 1)


def grid_multiplicity(insert) -> int:
    """Number of grid copies a (M)INSERT produces (1 for a plain INSERT)."""
    rows, cols = grid_shape(insert)
    return rows * cols


def _attrib_count(insert) -> int:
    try:
        return len(insert.attribs)
    except AttributeError:
        return 0


# one iterative depth-first search finds cycles, depth and expanded size together, scanning each block once
def check_block_graph(doc, limits: ImportLimits, path: str) -> BlockStats:  # noqa: C901
    """Refuse cycles, too deep nesting and entity blow-up before any block is expanded.

    Counts are exact Python integers (no overflow): a block's expanded size is
    ``own entities + Σ multiplicity × (1 + attribs + expanded size of child)``.

    Raises
    ------
    LimitExceeded
        naming the block (cycle, depth) or the model-space INSERT handle (blow-up).
    """
    blocks = doc.blocks
    children: dict[str, list[tuple[str, int]]] = {}
    own: dict[str, int] = {}
    shown: dict[str, str] = {}   # block key -> name as written in the drawing

    def scan(name: str) -> None:
        layout = blocks.get(name)
        kids: list[tuple[str, int]] = []
        n = 0
        if layout is not None:
            for e in layout:
                if e.dxftype() == "INSERT":
                    kids.append((block_key(e.dxf.get("name", "")), grid_multiplicity(e)))
                    shown.setdefault(block_key(e.dxf.get("name", "")), e.dxf.get("name", ""))
                    n += _attrib_count(e) * grid_multiplicity(e)
                else:
                    n += 1
        children[name] = kids
        own[name] = n

    # iterative depth-first search with colours: 1 = on the stack, 2 = finished
    colour: dict[str, int] = {}
    size: dict[str, int] = {}
    depth: dict[str, int] = {}   # deepest INSERT chain below this block (0 = no inserts)
    msp_refs: list[tuple[str, int, str]] = []
    msp_own = 0
    for e in doc.modelspace():
        if e.dxftype() == "INSERT":
            msp_refs.append((block_key(e.dxf.get("name", "")), grid_multiplicity(e), e.dxf.handle or "?"))
            shown.setdefault(block_key(e.dxf.get("name", "")), e.dxf.get("name", ""))
            msp_own += _attrib_count(e) * grid_multiplicity(e)
        else:
            msp_own += 1

    for root, _, _ in msp_refs:
        if colour.get(root) == 2:
            continue
        stack: list[tuple[str, int]] = [(root, 0)]
        path_names: list[str] = []
        while stack:
            name, idx = stack.pop()
            if idx == 0:
                if colour.get(name) == 2:
                    continue
                if name not in children:
                    scan(name)
                colour[name] = 1
                path_names.append(name)
                if len(path_names) > limits.max_block_depth:
                    raise LimitExceeded(
                        f"blocks nest deeper than {limits.max_block_depth} levels "
                        "(ImportLimits.max_block_depth)", path, f"block '{shown.get(name, name)}'")
            kids = children[name]
            if idx < len(kids):
                stack.append((name, idx + 1))
                child = kids[idx][0]
                state = colour.get(child)
                if state == 1:
                    start = path_names.index(child)
                    chain = " -> ".join(shown.get(n, n) for n in [*path_names[start:], child])
                    what = "references itself" if len(path_names) - start == 1 else "references itself through a chain"
                    label = shown.get(child, child)
                    raise LimitExceeded(f"{what} ({chain})", path, f"block '{label}'")
                if state != 2:
                    stack.append((child, 0))
                continue
            # all children done: post-order bookkeeping
            total = own[name]
            deepest = 0
            for child, mult in kids:
                total += mult * (1 + size.get(child, 0))
                deepest = max(deepest, 1 + depth.get(child, 0))
            size[name] = total
            depth[name] = deepest
            colour[name] = 2
            path_names.pop()

    grand = msp_own
    worst = (0, None, None)
    deepest = 0
    for name, mult, handle in msp_refs:
        contribution = mult * (1 + size.get(name, 0))
        grand += contribution
        deepest = max(deepest, 1 + depth.get(name, 0))
        if contribution > worst[0]:
            worst = (contribution, name, handle)
    if deepest > limits.max_block_depth:
        raise LimitExceeded(f"blocks nest {deepest} levels deep, limit {limits.max_block_depth} "
                            "(ImportLimits.max_block_depth)", path)
    if grand > limits.max_expanded_entities:
        _, name, handle = worst
        raise LimitExceeded(
            f"expanding the blocks would produce {grand:,} entities, limit "
            f"{limits.max_expanded_entities:,} (ImportLimits.max_expanded_entities); "
            f"largest contribution from block '{shown.get(name, name)}'", path, f"INSERT #{handle}")
    return BlockStats(expanded_entities=grand, max_depth=deepest)


def check_vertex_count(count: int, limits: ImportLimits, path: str, where: str, what: str = "vertices") -> None:
    """Raise LimitExceeded when one entity holds more than the allowed number of vertices."""
    if count > limits.max_vertices_per_entity:
        raise LimitExceeded(f"entity has {count:,} {what}, limit {limits.max_vertices_per_entity:,} "
                            "(ImportLimits.max_vertices_per_entity)", path, where)


def check_points(points: np.ndarray, limits: ImportLimits, path: str, where: str) -> None:
    """Refuse non-finite coordinates (PlanImportError) and absurd ones (LimitExceeded), drawing units."""
    if points.size == 0:
        return
    if not np.all(np.isfinite(points)):
        raise PlanImportError("non-finite coordinate (NaN or infinity)", path, where)
    big = float(np.max(np.abs(points)))
    if big > limits.max_abs_coordinate:
        raise LimitExceeded(f"coordinate {big:.6g} exceeds the limit {limits.max_abs_coordinate:.6g} drawing units "
                            "(ImportLimits.max_abs_coordinate)", path, where)
