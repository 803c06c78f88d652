"""Principal directions of a plan's straight linework (degrees), for the heading slices that
follow the walls (:func:`floorfit.cspace.slices.choose_headings`)."""

from __future__ import annotations

import numpy as np
import shapely

__all__ = ["dominant_directions_deg"]


def dominant_directions_deg(lines, *, count: int = 2, min_share: float = 0.05) -> list[float]:
    """Principal directions of straight linework, degrees in [0, 90).

    Directions are taken modulo 90° (a wall at 17.5° also implies walls at 107.5°) and
    weighted by segment length; peaks with at least ``min_share`` of the total length are
    returned, strongest first, at most ``count``.
    """
    if len(lines) == 0:
        return []
    coords, idx = shapely.get_coordinates(np.asarray(lines), return_index=True)
    same = idx[1:] == idx[:-1]
    d = (coords[1:] - coords[:-1])[same]
    length = np.hypot(d[:, 0], d[:, 1])
    keep = length > 0
    if not np.any(keep):
        return []
    ang = np.degrees(np.arctan2(d[keep, 1], d[keep, 0])) % 90.0
    w = length[keep]
    bins = np.round(ang * 20.0).astype(int) % 1800          # 0.05° bins
    hist = np.bincount(bins, weights=w, minlength=1800)
    out: list[float] = []
    total = w.sum()
    for b in np.argsort(hist)[::-1]:
        if hist[b] < min_share * total or len(out) >= count:
            break
        centre = b / 20.0
        if any(abs(((centre - o) + 45) % 90 - 45) < 1.0 for o in out):
            continue
        sel = np.abs(((ang - centre) + 45) % 90 - 45) <= 0.05
        mean = centre + float(np.average(((ang[sel] - centre) + 45) % 90 - 45, weights=w[sel]))
        out.append(round(mean % 90.0, 6))
    return out
