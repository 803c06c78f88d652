"""A synthetic warehouse drawn by code, at any size (invented data, for benchmarks only).

The layout, from left to right: an office / charging block behind a partition with door
openings, a dock strip along the bottom wall with round columns, a rack zone of double
rack rows (bays drawn one by one, upright protectors on the aisle faces, end barriers,
square columns in the flues) with aisles of 1.2–3.5 m and cross aisles, and a production
zone with irregular machines and round columns. Everything is in metres here and written
to DXF in millimetres on AIA/NCS-style layers (A-WALL, A-DOOR, A-COLS, A-EQPM-RACK,
A-EQPM-MACH, A-ANNO-TEXT), so the whole pipeline (import → check → report) is exercised.

``warehouse(width, height, seed)`` returns a :class:`Warehouse`; ``moved_row`` gives the
same site with one double rack row shifted sideways (a layout comparison).
"""

from __future__ import annotations

import math
from contextlib import contextmanager
from dataclasses import dataclass, field, replace
from pathlib import Path

import ezdxf
import numpy as np

__all__ = ["Warehouse", "RackRow", "warehouse", "moved_row", "write_dxf", "write_site", "SIZES",
           "FOOTPRINTS", "write_vehicle", "BAY_M", "RACK_DEPTH_M", "FLUE_M"]

MM = 1000.0
BAY_M = 2.7            # rack bay length along the row
RACK_DEPTH_M = 1.1     # single rack depth
FLUE_M = 0.2           # gap between back-to-back racks
PROTECTOR = (0.15, 0.12, 0.08)   # upright protector: length along the row, depth, protrusion into the aisle
WALL_T = 0.3           # outer wall thickness
PART_T = 0.2           # partition thickness

#: Benchmark sizes: name → (width m, height m). Chosen so that the drawings hold about
#: 200, 2,000 and 20,000 obstacle edges (the counts actually produced are reported).
SIZES = {"small": (30.0, 18.0), "medium": (69.0, 41.4), "large": (200.0, 120.0)}


@dataclass(frozen=True)
class RackRow:
    """A double rack row: x of its left face, y range, the aisle widths on its left and right (metres)."""

    x: float
    y0: float
    y1: float
    aisle_left: float
    aisle_right: float

    @property
    def width(self) -> float:
        return 2 * RACK_DEPTH_M + FLUE_M


@dataclass
class Warehouse:
    """The invented site: geometry per layer in metres (drawing frame)."""

    width: float
    height: float
    walls: list = field(default_factory=list)        # closed rings [(x, y), ...] on A-WALL
    doors: list = field(default_factory=list)        # (hinge x, y, radius, start°, end°) on A-DOOR
    rows: list = field(default_factory=list)         # RackRow
    row_segments: list = field(default_factory=list)  # (y0, y1) of rack segments between cross aisles
    flue_columns: list = field(default_factory=list)  # (cx, cy, half) square columns in the flues
    round_columns: list = field(default_factory=list)  # (cx, cy, r) on A-COLS
    machines: list = field(default_factory=list)     # rings on A-EQPM-MACH
    labels: list = field(default_factory=list)       # (text, x, y, height)
    stations: dict = field(default_factory=dict)     # name → (x, y, heading or None)
    route: tuple = ()                                # (start pose, goal pose)

    def rack_rings(self) -> list:
        """Closed rings of every rack bay, protector and end barrier (metres)."""
        rings = []
        for row in self.rows:
            rings.extend(_row_rings(row, self.row_segments))
        return rings


def _rect(x0, y0, x1, y1):
    return [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]


def _row_rings(row: RackRow, segments) -> list:
    rings = []
    pl, pd, pp = PROTECTOR
    for y0, y1 in segments:
        y0, y1 = max(y0, row.y0), min(y1, row.y1)
        n = int((y1 - y0) // BAY_M)
        if n < 1:
            continue
        ys = y0 + BAY_M * np.arange(n + 1)
        for side, (xa, xb) in enumerate(((row.x, row.x + RACK_DEPTH_M),
                                         (row.x + RACK_DEPTH_M + FLUE_M, row.x + row.width))):
            for a, b in zip(ys[:-1], ys[1:]):
                rings.append(_rect(xa, a, xb, b))
            # upright protectors on the aisle face, at every frame
            face = xa if side == 0 else xb
            out = -1 if side == 0 else 1
            for yf in ys:
                xin, xout = face - out * (pd - pp), face + out * pp
                rings.append(_rect(min(xin, xout), yf - pl / 2, max(xin, xout), yf + pl / 2))
        # end barriers, a little off each end of the double row
        for yb, s in ((ys[0], -1), (ys[-1], 1)):
            ya, yb2 = sorted((yb + s * 0.25, yb + s * 0.45))
            rings.append(_rect(row.x - 0.1, ya, row.x + row.width + 0.1, yb2))
    return rings


def _machine(cx: float, cy: float, size: float, rng) -> list:
    """An irregular non-convex machine outline: a chamfered L or U shape with a notch."""
    s = size
    kind = int(rng.integers(0, 3))
    if kind == 0:      # L with chamfers
        pts = [(0, 0), (s, 0), (s, 0.4 * s), (0.45 * s, 0.4 * s), (0.45 * s, s), (0.1 * s, s), (0, 0.9 * s)]
    elif kind == 1:    # U
        pts = [(0, 0), (s, 0), (s, 0.8 * s), (0.7 * s, 0.8 * s), (0.7 * s, 0.35 * s), (0.3 * s, 0.35 * s),
               (0.3 * s, 0.8 * s), (0, 0.8 * s)]
    else:              # a bumpy slab: many short edges
        top = [(s * (1 - i / 10), 0.5 * s + 0.06 * s * ((-1) ** i)) for i in range(11)]
        pts = [(0, 0), (s, 0)] + top
    ang = float(rng.uniform(0, 2 * math.pi))
    c, si = math.cos(ang), math.sin(ang)
    return [(cx + c * (x - s / 2) - si * (y - s / 2), cy + si * (x - s / 2) + c * (y - s / 2)) for x, y in pts]


# lays the synthetic warehouse out zone by zone; each zone is placed from coordinates computed above it
def warehouse(width: float, height: float, seed: int = 1) -> Warehouse:  # noqa: C901
    """Lay out a warehouse of ``width`` × ``height`` metres (see the module docstring)."""
    rng = np.random.default_rng(seed)
    W, H, t = float(width), float(height), WALL_T
    site = Warehouse(W, H)
    site.walls += [_rect(0, 0, W, H), _rect(t, t, W - t, H - t)]
    # --- office / charging block on the left, behind a partition with doors -----------
    xo = max(3.5, round(0.10 * W, 1))
    main = 2.6 if W < 40 else 3.0                   # main aisles along the rack zone
    n_rooms = max(1, int((H - 2 * t) // 9.0))
    room_h = (H - 2 * t) / n_rooms
    gaps = []
    for r in range(n_rooms):
        yc = t + (r + 0.5) * room_h
        w = 0.8 if r == n_rooms - 1 else 1.6        # the top room (charging) has a narrow door
        gaps.append((yc - w / 2, yc + w / 2))
        site.doors.append((xo + PART_T, yc - w / 2, w, 0.0, 90.0))
        name = "CHARGING" if r == n_rooms - 1 else f"OFFICE {r + 1}"
        site.labels.append((name, t + 0.5, yc + 1.0, 0.4))
        if r < n_rooms - 1:
            yw = t + (r + 1) * room_h
            site.walls.append(_rect(t, yw - PART_T / 2, xo, yw + PART_T / 2))
    y = t
    for a, b in gaps:
        site.walls.append(_rect(xo, y, xo + PART_T, a))
        y = b
    site.walls.append(_rect(xo, y, xo + PART_T, H - t))
    # --- zones ----------------------------------------------------------------------
    dock_top = t + max(3.0, 0.07 * H)
    prod_x = W - max(4.0, 0.14 * W)
    rack_x0 = xo + PART_T + main
    rack_x1 = prod_x - main
    rack_y0 = dock_top + main
    rack_y1 = H - t - main
    # cross aisles (3.5 m) every ~40 m of row
    n_seg = max(1, int(round((rack_y1 - rack_y0) / 40.0)))
    seg_len = (rack_y1 - rack_y0 - 3.5 * (n_seg - 1)) / n_seg
    site.row_segments = [(rack_y0 + i * (seg_len + 3.5), rack_y0 + i * (seg_len + 3.5) + seg_len)
                         for i in range(n_seg)]
    # double rows left to right, aisles 1.2–3.5 m (the first and last aisles stay wide)
    x = rack_x0
    aisles = []
    while True:
        aisle = float(rng.choice([1.2, 1.6, 2.0, 2.4, 2.8, 3.2, 3.5]))
        if x + 2 * RACK_DEPTH_M + FLUE_M + aisle > rack_x1:
            break
        aisles.append(aisle)
        x += 2 * RACK_DEPTH_M + FLUE_M + aisle
    x = rack_x0
    left = 3.0
    for i, aisle in enumerate(aisles):
        right = aisle if i < len(aisles) - 1 else max(3.0, rack_x1 - x - (2 * RACK_DEPTH_M + FLUE_M))
        site.rows.append(RackRow(round(x, 3), rack_y0, rack_y1, left, right))
        x += 2 * RACK_DEPTH_M + FLUE_M + aisle
        left = aisle
    # square columns in the flues of every third row, every 12 m
    for row in site.rows[::3]:
        cx = row.x + RACK_DEPTH_M + FLUE_M / 2
        for y0, y1 in site.row_segments:
            for cy in np.arange(y0 + 6.0, y1 - 3.0, 12.0):
                site.flue_columns.append((cx, float(cy), 0.25))
    # round columns in the dock strip and the production zone, 12 m grid
    for cx in np.arange(xo + 8.0, W - t - 2.0, 12.0):
        site.round_columns.append((float(cx), (t + dock_top) / 2 + 0.8, 0.3))
    for cx in np.arange(prod_x + 2.5, W - t - 1.0, 6.0):
        for cy in np.arange(dock_top + 6.0, H - t - 2.0, 12.0):
            site.round_columns.append((float(cx), float(cy), 0.3))
    # machines in the production zone, on a loose grid
    for cx in np.arange(prod_x + 3.5, W - t - 2.0, 6.0):
        for cy in np.arange(dock_top + 12.0, H - t - 4.0, 12.0):
            if rng.uniform() < 0.8:
                site.machines.append(_machine(float(cx + rng.uniform(-0.4, 0.4)), float(cy), 2.6, rng))
    # labels
    site.labels.append(("DOCK", W / 2, t + 0.6, 0.5))
    site.labels.append(("PRODUCTION", prod_x + 1.0, H - t - 1.5, 0.5))
    for i, row in enumerate(site.rows):
        site.labels.append((f"AISLE {i + 1}", row.x - row.aisle_left / 2, rack_y0 - 1.0, 0.25))
    # stations and the route question (drawing frame, metres, degrees)
    dock_y = (t + dock_top) / 2 - 0.6
    wide = [i for i, r in enumerate(site.rows) if r.aisle_right >= 2.8]
    far = site.rows[wide[-1]] if wide else site.rows[-1]
    near = site.rows[wide[0]] if wide else site.rows[0]
    seg0 = site.row_segments[0]
    site.stations = {
        "DOCK": (xo + 4.0, dock_y, None),
        "PICK-NEAR": (near.x + near.width + near.aisle_right / 2, (seg0[0] + seg0[1]) / 2, 90.0),
        "PICK-FAR": (far.x + far.width + far.aisle_right / 2, site.row_segments[-1][1] - 2.0, None),
        "CHARGER": (t + 1.5, t + (n_rooms - 0.5) * room_h, None),
        "PRODUCTION": (prod_x + 1.2, dock_top + 3.0, None),
    }
    if n_rooms > 1:
        site.stations["OFFICE"] = (t + 1.5, t + 0.5 * room_h, None)
    site.route = ((xo + 4.0, dock_y, 0.0), (site.stations["PICK-FAR"][0], site.stations["PICK-FAR"][1], 90.0))
    return site


def moved_row(site: Warehouse, shift_m: float = 0.5) -> tuple[Warehouse, tuple[float, float, float, float]]:
    """The same site with one double rack row (near the middle, with a wide right aisle) moved by ``shift_m`` in +x.

    Returns the new site and the drawing-frame window (xmin, ymin, xmax, ymax) that changed.
    """
    cands = [i for i, r in enumerate(site.rows) if r.aisle_right >= 2.4 and 0 < i < len(site.rows) - 1]
    if not cands:
        cands = [len(site.rows) // 2]
    i = cands[len(cands) // 2]
    old = site.rows[i]
    new = replace(old, x=round(old.x + shift_m, 3), aisle_left=old.aisle_left + shift_m,
                  aisle_right=old.aisle_right - shift_m)
    rows = list(site.rows)
    rows[i] = new
    flue = [(cx + shift_m if abs(cx - (old.x + RACK_DEPTH_M + FLUE_M / 2)) < 1e-9 else cx, cy, h)
            for cx, cy, h in site.flue_columns]
    moved = replace(site, rows=rows, flue_columns=flue)
    window = (old.x - 0.2, old.y0 - 0.5, new.x + new.width + 0.2, old.y1 + 0.5)
    return moved, window


def write_dxf(site: Warehouse, path: str | Path) -> Path:
    """Write the site as a DXF drawing in millimetres ($INSUNITS = 4)."""
    doc = ezdxf.new("R2013", setup=False)
    doc.header["$INSUNITS"] = 4
    for name, colour in (("A-WALL", 7), ("A-DOOR", 3), ("A-COLS", 1), ("A-EQPM-RACK", 5),
                         ("A-EQPM-MACH", 6), ("A-ANNO-TEXT", 2)):
        doc.layers.add(name, color=colour)
    msp = doc.modelspace()

    def ring(pts, layer):
        msp.add_lwpolyline([(x * MM, y * MM) for x, y in pts], close=True, dxfattribs={"layer": layer})

    for r in site.walls:
        ring(r, "A-WALL")
    for hx, hy, w, a0, a1 in site.doors:
        msp.add_line((hx * MM, hy * MM), ((hx + w) * MM, hy * MM), dxfattribs={"layer": "A-DOOR"})
        msp.add_arc((hx * MM, hy * MM), w * MM, a0, a1, dxfattribs={"layer": "A-DOOR"})
    for r in site.rack_rings():
        ring(r, "A-EQPM-RACK")
    for cx, cy, h in site.flue_columns:
        ring(_rect(cx - h, cy - h, cx + h, cy + h), "A-COLS")
    for cx, cy, r in site.round_columns:
        msp.add_circle((cx * MM, cy * MM), r * MM, dxfattribs={"layer": "A-COLS"})
    for m in site.machines:
        ring(m, "A-EQPM-MACH")
    for text, x, y, h in site.labels:
        msp.add_text(text, height=h * MM, dxfattribs={"layer": "A-ANNO-TEXT", "insert": (x * MM, y * MM)})
    path = Path(path)
    with fixed_dxf_metadata():
        doc.saveas(path)
    return path


@contextmanager
def fixed_dxf_metadata():
    """ezdxf writes fixed header metadata (times, GUIDs) inside this block, so a generated
    drawing is byte-identical from run to run."""
    old = ezdxf.options.write_fixed_meta_data_for_testing
    ezdxf.options.write_fixed_meta_data_for_testing = True
    try:
        yield
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = old


def write_site(site: Warehouse, path: str | Path, heading_step: float | None = None) -> Path:
    """Write the site file (stations, layer roles) for the check."""
    lines = ["# synthetic benchmark warehouse (invented)", "[layers]", '"A-EQPM-RACK" = "solid"',
             '"A-EQPM-MACH" = "solid"', '"A-COLS" = "solid"', '"A-WALL" = "wall"', '"A-DOOR" = "door"',
             '"A-ANNO-TEXT" = "label"', "", "[stations]"]
    for name, (x, y, h) in site.stations.items():
        hd = f", heading = {h:.1f}" if h is not None else ""
        lines.append(f'"{name}" = {{ x = {x:.3f}, y = {y:.3f}{hd} }}')
    if heading_step:
        lines += ["", "[analysis]", f"heading_step = {heading_step:g}"]
    path = Path(path)
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


#: Benchmark footprints (vehicle frame, metres): a rectangle whose rotation centre sits
#: off its centre (a differential base turning about its drive axle), a robot towing a
#: cart (non-convex), and a round robot drawn as a 16-gon.
FOOTPRINTS = {
    "rect": {"outline": [(0.85, -0.35), (0.85, 0.35), (-0.35, 0.35), (-0.35, -0.35)], "margin": 0.05,
             "mode": "differential"},
    "tugcart": {"outline": [(0.45, -0.3), (0.45, 0.3), (-0.25, 0.3), (-0.25, 0.08), (-0.45, 0.08),
                            (-0.45, 0.35), (-1.45, 0.35), (-1.45, -0.35), (-0.45, -0.35), (-0.45, -0.08),
                            (-0.25, -0.08), (-0.25, -0.3)], "margin": 0.0, "mode": "differential"},
    "round16": {"outline": [(0.42 * math.cos(a), 0.42 * math.sin(a))
                            for a in np.linspace(0, 2 * math.pi, 16, endpoint=False)],
                "margin": 0.03, "mode": "omni"},
}


def write_vehicle(name: str, path: str | Path) -> Path:
    """Write footprint ``name`` of :data:`FOOTPRINTS` as a vehicle file."""
    spec = FOOTPRINTS[name]
    pts = ", ".join(f"[{x:.6f}, {y:.6f}]" for x, y in spec["outline"])
    text = (f'name = "bench {name}"\n[footprint]\noutline = [{pts}]\nmargin = {spec["margin"]}\n'
            f'[motion]\nmode = "{spec["mode"]}"\n')
    path = Path(path)
    path.write_text(text, encoding="utf-8")
    return path
