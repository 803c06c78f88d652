"""Prototypes measured by the benchmark for changes proposed outside the slice kernel.

``roadmap_edges_fast(slices)``: the roadmap's rotation edges without computing every
overlap geometry. Two components of adjacent slices are joined when their interiors
meet (DE-9IM ``T********``, i.e. an overlap of positive area); a cheap sufficient test
comes first (an interior point of one lies strictly inside the other). The zone of an
edge (the overlap geometry) is then needed only along a path that is actually used, and
can be computed there with one ``shapely.intersection``. Not used by floorfit itself.
"""

from __future__ import annotations

import numpy as np
import shapely

__all__ = ["roadmap_edges_fast"]


def roadmap_edges_fast(slices) -> list[tuple[tuple[int, int], tuple[int, int]]]:
    """Pairs of roadmap nodes ``((k, i), (k + 1, j))`` whose free-space components overlap with positive area."""
    n = len(slices)
    if n < 2:
        return []
    inner = []
    for k in range(n):
        comps = slices.components[k]
        shapely.prepare(comps)
        inner.append(shapely.point_on_surface(comps) if len(comps) else comps)
    edges = []
    for k in range(n if n > 2 else 1):
        k2 = (k + 1) % n
        a, b = slices.components[k], slices.components[k2]
        if not len(a) or not len(b):
            continue
        ia, ib = slices.tree(k2).query(a)                 # envelopes only
        if not len(ia):
            continue
        ok = shapely.contains_properly(b[ib], inner[k][ia]) | shapely.contains_properly(a[ia], inner[k2][ib])
        rest = np.flatnonzero(~ok)
        if len(rest):
            ok[rest] = shapely.relate_pattern(a[ia[rest]], b[ib[rest]], "T********")
        edges.extend(((k, int(i)), (k2, int(j))) for i, j in zip(ia[ok], ib[ok]))
    return edges
