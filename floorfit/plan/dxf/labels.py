"""Texts of the drawing as labels (room names, numbers, door marks), and label lookup.

Texts are stored as written (escaping happens at output), after the DXF control codes
were interpreted by the reader (TEXT ``%%u`` underline and friends, MTEXT formatting
via ``plain_text()``) and control characters were removed.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from floorfit.plan.dxf.primitives import TextItem
from floorfit.plan.model import Label

__all__ = ["to_labels", "LabelIndex", "DOOR_LABEL_RADIUS_M"]

#: A label names a doorway when it lies within this distance of the opening centre (m).
DOOR_LABEL_RADIUS_M = 2.0


def to_labels(texts: list[TextItem], origin_u: tuple[float, float], mpu: float) -> list[Label]:
    """Labels in the local frame (metres) from texts in drawing units."""
    ox, oy = origin_u
    return [Label(text=t.text, x=(t.x - ox) * mpu, y=(t.y - oy) * mpu, layer=t.layer, handle=t.handle)
            for t in texts]


class LabelIndex:
    """Nearest-label queries in the local frame (metres)."""

    def __init__(self, labels: list[Label]):
        self.labels = labels
        self.tree = cKDTree(np.array([(lb.x, lb.y) for lb in labels])) if labels else None

    def nearest(self, x: float, y: float, radius: float = DOOR_LABEL_RADIUS_M) -> Label | None:
        """The label closest to (x, y) within ``radius`` metres, or None."""
        if self.tree is None:
            return None
        dist, idx = self.tree.query((x, y), distance_upper_bound=radius)
        if not np.isfinite(dist):
            return None
        return self.labels[int(idx)]
