"""What the walker produces: primitives in drawing units, texts, door groups, and name clean-up.

A :class:`Prim` is one entity (or one piece of a block instance) after its transform to world
coordinates, in *drawing units*; curved primitives keep a deferred flattening (see
:mod:`floorfit.plan.dxf.walker`). :class:`WalkResult` collects everything one walk of model
space found.
"""

from __future__ import annotations

import math
import unicodedata
from array import array
from collections import Counter, defaultdict
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from ezdxf.lldxf.encoding import decode_dxf_unicode, has_dxf_unicode

__all__ = ["ArcInfo", "Prim", "TextItem", "DoorGroup", "WalkResult", "clean_text", "dxf_name"]


@dataclass(slots=True)
class ArcInfo:
    """A circular arc after transformation (similarity transforms only), drawing units."""

    centre: np.ndarray
    radius: float
    p_start: np.ndarray
    p_end: np.ndarray
    span: float        # radians


@dataclass(slots=True)
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
    #: x, y, x, y, ... (world, drawing units) of linework that is never an obstacle (ignored and
    #: text layers): kept flat, for the drawn extent only, instead of one primitive per line
    extent_only: array = field(default_factory=lambda: array("d"))

    def extent_only_points(self) -> np.ndarray:
        """The :attr:`extent_only` points as an (N, 2) array (drawing units, world frame): a view,
        read-only, on the walk's buffer (which then cannot grow)."""
        view = np.frombuffer(self.extent_only, dtype=float).reshape(-1, 2)
        view.flags.writeable = False
        return view


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
