"""Naming places after the drawing: the nearest doorway or room label to a point."""

from __future__ import annotations

import math

import numpy as np

from floorfit.plan.model import Plan

__all__ = ["place_name"]


def place_name(plan: Plan, x: float, y: float, *, door_radius: float = 1.5, label_radius: float = 6.0) -> str | None:
    """A short name for local point (x, y): ``"doorway D-03 (0.70 m)"`` or the nearest label text.

    Doorways within ``door_radius`` metres win; otherwise the nearest label within
    ``label_radius`` metres; otherwise None.
    """
    best = None
    for d in plan.doors:
        dist = math.hypot(d.x - x, d.y - y)
        if dist <= door_radius and (best is None or dist < best[0]):
            best = (dist, d)
    if best is not None:
        d = best[1]
        name = f"doorway {d.label}" if d.label else "doorway"
        return f"{name} ({d.width_m:.2f} m drawn)"
    if plan.labels:
        xy = np.array([(lb.x, lb.y) for lb in plan.labels])
        dist = np.hypot(xy[:, 0] - x, xy[:, 1] - y)
        i = int(np.argmin(dist))
        if dist[i] <= label_radius:
            return f"near {plan.labels[i].text}"
    return None
