"""Naming places after the drawing: the nearest doorway, the room a point lies in (building
models: their spaces' outlines) or the nearest room label."""

from __future__ import annotations

import math

import numpy as np

from floorfit.plan.model import Plan

__all__ = ["place_name"]


def place_name(plan: Plan, x: float, y: float, *, door_radius: float = 1.5, label_radius: float = 6.0) -> str | None:
    """A short name for local point (x, y): ``"doorway D-03 (0.70 m) in A102 Kitchen"``,
    ``"in A102 Kitchen"`` or ``"near KITCHEN"``.

    Doorways within ``door_radius`` metres win; the room the point lies in (plans from a
    building model know their rooms' outlines) is added; otherwise the nearest label within
    ``label_radius`` metres; otherwise None.
    """
    room = _room_at(plan, x, y)
    best = None
    for d in plan.doors:
        dist = math.hypot(d.x - x, d.y - y)
        if dist <= door_radius and (best is None or dist < best[0]):
            best = (dist, d)
    if best is not None:
        d = best[1]
        name = f"doorway {d.label}" if d.label else "doorway"
        return f"{name} ({d.width_m:.2f} m drawn)" + (f" in {room}" if room else "")
    if room:
        return f"in {room}"
    if plan.labels:
        xy = np.array([(lb.x, lb.y) for lb in plan.labels])
        dist = np.hypot(xy[:, 0] - x, xy[:, 1] - y)
        i = int(np.argmin(dist))
        if dist[i] <= label_radius:
            return f"near {plan.labels[i].text}"
    return None


def _room_at(plan: Plan, x: float, y: float) -> str | None:
    """The name of the room (``plan.model["rooms"]``: text, id, outline) that holds (x, y)."""
    import shapely

    model = getattr(plan, "model", None)
    rooms = model.get("rooms") if isinstance(model, dict) else None
    if not rooms:
        return None
    p = shapely.Point(x, y)
    inside = [(area.area, text) for text, _id, area in rooms if area is not None and area.covers(p)]
    return min(inside)[1] if inside else None
