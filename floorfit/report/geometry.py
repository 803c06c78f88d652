"""Small geometry helpers shared by the report writers."""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

__all__ = ["parts"]


def parts(geom: Any) -> Iterable[Any]:
    """The simple parts of a shapely geometry, nested collections flattened; nothing for None or empty."""
    if geom is None or geom.is_empty:
        return
    if hasattr(geom, "geoms"):
        for g in geom.geoms:
            yield from parts(g)
    else:
        yield geom
