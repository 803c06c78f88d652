"""Synthetic DXF drawings with known answers, written into temporary folders by the tests.

Every drawing is designed in metres; coordinates are written in the chosen unit
(``scale`` drawing units per metre) so the same expected values hold for mm, m and
inches. Expected values are stated here in metres, in the drawing frame, computed by
hand (closed forms), never by the importer.

Nothing here is committed as a binary: each test builds the files it needs.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import ezdxf
from ezdxf import units as ezunits

__all__ = [
    "UNITS", "VERSIONS", "Drawing", "new_drawing",
    "write_basic", "write_nested_transforms", "write_ocs", "write_bulge", "write_const_width",
    "write_hatches", "write_spline_ellipse", "write_minsert", "write_texts", "write_doors",
    "write_self_reference", "write_reference_chain", "write_deep_nesting", "write_minsert_bomb",
    "write_big_polyline", "write_huge_coordinate", "write_nan_coordinate", "write_empty_modelspace",
    "write_truncated", "write_not_dxf", "write_roles_sample", "write_vehicle_outline",
    "nested_expected", "transform_point",
]

#: unit name -> ($INSUNITS code, metres per unit). 1 in = 0.0254 m exactly (1959 yard).
UNITS = {"mm": (ezunits.MM, 0.001), "m": (ezunits.M, 1.0), "in": (ezunits.IN, 0.0254)}
#: DXF versions the fixtures are written in: R12 (no LWPOLYLINE, HATCH, SPLINE, ELLIPSE,
#: MTEXT), R2000 and R2018.
VERSIONS = ("R12", "R2000", "R2018")


@dataclass
class Drawing:
    """A drawing being written: the ezdxf document and its unit scale."""

    doc: ezdxf.document.Drawing
    unit: str
    version: str
    scale: float                       # drawing units per metre
    features: set = field(default_factory=set)

    @property
    def msp(self):
        return self.doc.modelspace()

    def u(self, *metres: float):
        """Metres -> drawing units (a number or a point)."""
        if len(metres) == 1:
            return metres[0] * self.scale
        return tuple(v * self.scale for v in metres)

    def save(self, path: Path) -> Path:
        self.doc.saveas(path)
        return path


def new_drawing(version: str = "R2000", unit: str = "m") -> Drawing:
    """An empty drawing with $INSUNITS set (not exported by ezdxf for R12)."""
    doc = ezdxf.new(version)
    code, mpu = UNITS[unit]
    if version != "R12":          # R12 has no $INSUNITS
        doc.units = code
    for name in ("A-WALL", "A-COLS", "A-DOOR", "A-ANNO-TEXT", "A-FLOR-PATT", "A-EQPM", "Tueren"):
        if name not in doc.layers:
            doc.layers.add(name)
    return Drawing(doc, unit, version, 1.0 / mpu)


def _polyline(d: Drawing, layout, points, *, closed=False, layer="0", bulges=None, width=0.0, extrusion=None):
    """An LWPOLYLINE (R2000+) or a 2-D POLYLINE (R12) through ``points`` (drawing units)."""
    attribs = {"layer": layer}
    if extrusion is not None:
        attribs["extrusion"] = extrusion
    bulges = bulges or [0.0] * len(points)
    if d.version == "R12":
        if width:
            attribs["default_start_width"] = width
            attribs["default_end_width"] = width
        pl = layout.add_polyline2d([(x, y) for x, y in points], dxfattribs=attribs, close=closed)
        for v, b in zip(pl.vertices, bulges):
            v.dxf.bulge = b
        return pl
    if width:
        attribs["const_width"] = width
    return layout.add_lwpolyline([(x, y, 0, 0, b) for (x, y), b in zip(points, bulges)], format="xyseb",
                                 close=closed, dxfattribs=attribs)


# --------------------------------------------------------------------------------------
# feature drawings (known answers in the docstrings, metres, drawing frame)
# --------------------------------------------------------------------------------------

def write_basic(path: Path, version: str = "R2000", unit: str = "m") -> Path:
    """Walls, columns and a label.

    * A-WALL: LINE (0,0)-(10,0), LINE (10,0)-(10,8), polyline (10,8)-(0,8)-(0,0) (open).
    * A-COLS: CIRCLE centre (5,4) r 0.3 (a solid disc); closed square (2,2)-(2.4,2.4).
    * A-ANNO-TEXT: TEXT "%%uKITCHEN" at (3,3) -> label "KITCHEN".
    * Flooring on A-FLOR-PATT: LINE (0,4)-(10,4), ignored.
    """
    d = new_drawing(version, unit)
    m = d.msp
    m.add_line(d.u(0, 0), d.u(10, 0), dxfattribs={"layer": "A-WALL"})
    m.add_line(d.u(10, 0), d.u(10, 8), dxfattribs={"layer": "A-WALL"})
    _polyline(d, m, [d.u(10, 8), d.u(0, 8), d.u(0, 0)], layer="A-WALL")
    m.add_circle(d.u(5, 4), d.u(0.3), dxfattribs={"layer": "A-COLS"})
    _polyline(d, m, [d.u(2, 2), d.u(2.4, 2), d.u(2.4, 2.4), d.u(2, 2.4)], closed=True, layer="A-COLS")
    m.add_text("%%uKITCHEN", dxfattribs={"layer": "A-ANNO-TEXT", "height": d.u(0.2), "insert": d.u(3, 3)})
    m.add_line(d.u(0, 4), d.u(10, 4), dxfattribs={"layer": "A-FLOR-PATT"})
    return d.save(path)


def transform_point(p, *, base=(0.0, 0.0), scale=(1.0, 1.0), rotation_deg=0.0, insert=(0.0, 0.0)):
    """Where a block point lands under one INSERT: subtract the base point, scale, rotate, move.

    This is the INSERT definition of the DXF reference (group codes 10/41/42/50 and the
    block base point), written out by hand, independent of any library matrix.
    """
    x, y = p[0] - base[0], p[1] - base[1]
    x, y = x * scale[0], y * scale[1]
    c, s = math.cos(math.radians(rotation_deg)), math.sin(math.radians(rotation_deg))
    x, y = c * x - s * y, s * x + c * y
    return x + insert[0], y + insert[1]


#: The two INSERT levels of :func:`write_nested_transforms`, in metres.
NESTED_INNER = dict(base=(0.5, 0.0), scale=(2.0, 0.5), rotation_deg=90.0, insert=(1.0, 2.0))
NESTED_OUTER = dict(base=(0.2, 0.1), scale=(-1.5, 1.5), rotation_deg=30.0, insert=(10.0, 5.0))


def nested_expected(p):
    """World position (m) of a LEAF block point (m) under both INSERT levels."""
    return transform_point(transform_point(p, **NESTED_INNER), **NESTED_OUTER)


def write_nested_transforms(path: Path, version: str = "R2000", unit: str = "m") -> Path:
    """Nested INSERTs with base points, non-uniform scale, rotation and a mirror.

    Block LEAF (base (0.5, 0)): LINE (0.5,0)-(1.5,0) on layer 0 and LINE (0.5,0)-(0.5,0.25)
    on layer A-WALL. Block MID (base (0.2, 0.1)): INSERT LEAF with ``NESTED_INNER`` and an
    ARC centre (0.2, 0.1) r 1 from 0° to 90° on layer 0. Model space: INSERT MID with
    ``NESTED_OUTER`` (x scale -1.5: mirrored) on layer A-WALL, and a second INSERT MID on
    the ignored layer A-FLOR-PATT far away at (100, 100).
    Layer-0 content takes the INSERT's layer (CAD rule): walls for the first INSERT,
    ignored for the second. The ARC lands centred on (10, 5) with radius 1.5.
    """
    d = new_drawing(version, unit)
    leaf = d.doc.blocks.new("LEAF", base_point=d.u(0.5, 0.0))
    leaf.add_line(d.u(0.5, 0.0), d.u(1.5, 0.0), dxfattribs={"layer": "0"})
    leaf.add_line(d.u(0.5, 0.0), d.u(0.5, 0.25), dxfattribs={"layer": "A-WALL"})
    mid = d.doc.blocks.new("MID", base_point=d.u(0.2, 0.1))
    i = NESTED_INNER
    mid.add_blockref("LEAF", d.u(*i["insert"]), dxfattribs={
        "xscale": i["scale"][0], "yscale": i["scale"][1], "rotation": i["rotation_deg"], "layer": "0"})
    mid.add_arc(d.u(0.2, 0.1), d.u(1.0), 0, 90, dxfattribs={"layer": "0"})
    o = NESTED_OUTER
    d.msp.add_blockref("MID", d.u(*o["insert"]), dxfattribs={
        "xscale": o["scale"][0], "yscale": o["scale"][1], "rotation": o["rotation_deg"], "layer": "A-WALL"})
    d.msp.add_blockref("MID", d.u(100, 100), dxfattribs={"layer": "A-FLOR-PATT"})
    return d.save(path)


def write_ocs(path: Path, version: str = "R2000", unit: str = "m") -> Path:
    """Entities with extrusion (0, 0, -1): their OCS x axis is the world's -x.

    * ARC centre (5, 1) r 2 from 0° to 90° (OCS) -> world centre (-5, 1), ends (-7, 1)
      and (-5, 3), bulging towards -x (through (-5 - √2, 1 + √2)).
    * CIRCLE centre (3, 0) r 0.5 (OCS) on A-COLS -> world disc centred on (-3, 0).
    * polyline (1, 1)-(2, 1) (OCS) -> world (-1, 1)-(-2, 1).
    """
    d = new_drawing(version, unit)
    neg = (0, 0, -1)
    d.msp.add_arc(d.u(5, 1), d.u(2), 0, 90, dxfattribs={"layer": "A-WALL", "extrusion": neg})
    d.msp.add_circle(d.u(3, 0), d.u(0.5), dxfattribs={"layer": "A-COLS", "extrusion": neg})
    _polyline(d, d.msp, [d.u(1, 1), d.u(2, 1)], layer="A-WALL", extrusion=neg)
    return d.save(path)


def write_bulge(path: Path, version: str = "R2000", unit: str = "m") -> Path:
    """A closed polyline (0,0)-(2,0)-(2,2)-(0,2) on A-COLS whose first segment has bulge 1:
    a half circle of radius 1 centred on (1, 0) bulging down to (1, -1).
    Filled area 4 + π/2."""
    d = new_drawing(version, unit)
    _polyline(d, d.msp, [d.u(0, 0), d.u(2, 0), d.u(2, 2), d.u(0, 2)], closed=True, layer="A-COLS",
              bulges=[1.0, 0.0, 0.0, 0.0])
    return d.save(path)


def write_const_width(path: Path, version: str = "R2000", unit: str = "m") -> Path:
    """A polyline (0,0)-(10,0) of constant width 0.5 on A-WALL: a filled band of area 5.0
    spanning y from -0.25 to 0.25."""
    d = new_drawing(version, unit)
    _polyline(d, d.msp, [d.u(0, 0), d.u(10, 0)], layer="A-WALL", width=d.u(0.5))
    return d.save(path)


def write_hatches(path: Path, version: str = "R2000", unit: str = "m") -> Path:
    """HATCHes (R2000+ only).

    * solid fill on A-WALL, edge path: line (0,0)-(4,0), arc centre (4,1) r 1 from -90°
      to 90°, line (4,2)-(0,2), line (0,2)-(0,0): area 8 + π/2.
    * ANSI31 on A-WALL, polyline path square (10,0)-(12,0)-(12,2)-(10,2) with an island
      (10.5,0.5)-(11.5,1.5): area 4 - 1 = 3 (even-odd).
    * AR-PARQ1 (parquet floor finish) on A-WALL, square (20,0)-(25,5): not an obstacle.
    """
    d = new_drawing(version, unit)
    h = d.msp.add_hatch(color=1, dxfattribs={"layer": "A-WALL"})
    h.set_solid_fill()
    ep = h.paths.add_edge_path()
    ep.add_line(d.u(0, 0), d.u(4, 0))
    ep.add_arc(d.u(4, 1), d.u(1), -90, 90, ccw=True)
    ep.add_line(d.u(4, 2), d.u(0, 2))
    ep.add_line(d.u(0, 2), d.u(0, 0))
    h2 = d.msp.add_hatch(dxfattribs={"layer": "A-WALL"})
    h2.set_pattern_fill("ANSI31", scale=d.u(0.05))
    h2.paths.add_polyline_path([d.u(10, 0), d.u(12, 0), d.u(12, 2), d.u(10, 2)], is_closed=True)
    h2.paths.add_polyline_path([d.u(10.5, 0.5), d.u(11.5, 0.5), d.u(11.5, 1.5), d.u(10.5, 1.5)], is_closed=True)
    h3 = d.msp.add_hatch(dxfattribs={"layer": "A-WALL"})
    h3.set_pattern_fill("AR-PARQ1", scale=d.u(0.05))
    h3.paths.add_polyline_path([d.u(20, 0), d.u(25, 0), d.u(25, 5), d.u(20, 5)], is_closed=True)
    return d.save(path)


def write_spline_ellipse(path: Path, version: str = "R2000", unit: str = "m") -> Path:
    """SPLINE and ELLIPSE (R2000+ only).

    * SPLINE of degree 2 on A-WALL with control points (0,0), (1,2), (2,0) and clamped
      knots: the parabola y = 2x - x² for x in [0, 2] (a quadratic Bézier curve).
    * ELLIPSE on A-COLS centre (5,5), major axis (3,0), ratio 0.5, full: a filled
      ellipse of area π·3·1.5.
    * half ELLIPSE on A-WALL centre (10,0), major axis (0,2), ratio 0.25, parameters 0..π:
      points satisfy ((x-10)/0.5)² + (y/2)² = 1 with x ≤ 10 (counter-clockwise from +y).
    """
    d = new_drawing(version, unit)
    d.msp.add_open_spline([d.u(0, 0), d.u(1, 2), d.u(2, 0)], degree=2, dxfattribs={"layer": "A-WALL"})
    d.msp.add_ellipse(d.u(5, 5), major_axis=d.u(3, 0), ratio=0.5, dxfattribs={"layer": "A-COLS"})
    d.msp.add_ellipse(d.u(10, 0), major_axis=d.u(0, 2), ratio=0.25, start_param=0, end_param=math.pi,
                      dxfattribs={"layer": "A-WALL"})
    return d.save(path)


def write_minsert(path: Path, version: str = "R2000", unit: str = "m") -> Path:
    """MINSERT arrays of a 1 x 0.5 rectangle (block RACK, layer 0) on the solid layer A-EQPM.

    * at (1, 1), rotation 0, 3 rows x 4 columns, row spacing 2, column spacing 3:
      rectangles with lower-left corners (1 + 3c, 1 + 2r).
    * at (30, 0), rotation 90, 2 rows x 2 columns, spacings 2 and 3: grid offsets
      (3c, 2r) rotated by 90° -> (-2r, 3c); each rectangle rotated too.
    Total 16 solids of area 0.5.
    """
    d = new_drawing(version, unit)
    rack = d.doc.blocks.new("RACK")
    _polyline(d, rack, [d.u(0, 0), d.u(1, 0), d.u(1, 0.5), d.u(0, 0.5)], closed=True, layer="0")
    d.msp.add_blockref("RACK", d.u(1, 1), dxfattribs={
        "layer": "A-EQPM", "row_count": 3, "column_count": 4, "row_spacing": d.u(2), "column_spacing": d.u(3)})
    d.msp.add_blockref("RACK", d.u(30, 0), dxfattribs={
        "layer": "A-EQPM", "rotation": 90, "row_count": 2, "column_count": 2,
        "row_spacing": d.u(2), "column_spacing": d.u(3)})
    d.msp.add_line(d.u(0, 0), d.u(40, 0), dxfattribs={"layer": "A-WALL"})
    return d.save(path)


def write_texts(path: Path, version: str = "R2000", unit: str = "m") -> Path:
    """Labels: TEXT "%%uKITCHEN" at (1,1); TEXT with a bell character and a right-to-left
    override "Bad<BEL>Na<RLO>me" at (2,2) -> "BadName"; centred TEXT "HALL" aligned at
    (4,4); MTEXT "{\\fArial|b1;Office} 1\\PSecond" at (5,5) (R2000+) -> "Office 1 Second";
    an INSERT of block TAG at (7,7) carrying ATTRIB ROOM = "A101" placed at (7.5,7.2);
    a wall LINE (0,0)-(10,0) so the plan is not empty."""
    d = new_drawing(version, unit)
    m = d.msp
    m.add_line(d.u(0, 0), d.u(10, 0), dxfattribs={"layer": "A-WALL"})
    m.add_text("%%uKITCHEN", dxfattribs={"layer": "A-ANNO-TEXT", "height": d.u(0.2), "insert": d.u(1, 1)})
    m.add_text("Bad\x07Na\u202eme", dxfattribs={"layer": "A-ANNO-TEXT", "height": d.u(0.2), "insert": d.u(2, 2)})
    t = m.add_text("HALL", dxfattribs={"layer": "A-ANNO-TEXT", "height": d.u(0.2)})
    t.set_placement(d.u(4, 4), align=ezdxf.enums.TextEntityAlignment.MIDDLE_CENTER)
    if version != "R12":
        m.add_mtext("{\\fArial|b1;Office} 1\\PSecond", dxfattribs={"layer": "A-ANNO-TEXT", "insert": d.u(5, 5),
                                                                 "char_height": d.u(0.2)})
    tag = d.doc.blocks.new("TAG")
    tag.add_attdef("ROOM", d.u(0.5, 0.2), dxfattribs={"height": d.u(0.2)})
    tag.add_circle(d.u(0, 0), d.u(0.1), dxfattribs={"layer": "0"})
    ref = m.add_blockref("TAG", d.u(7, 7), dxfattribs={"layer": "A-ANNO-TEXT"})
    ref.add_attrib("ROOM", "A101", d.u(7.5, 7.2), dxfattribs={"height": d.u(0.2), "layer": "A-ANNO-TEXT"})
    return d.save(path)


def write_doors(path: Path, version: str = "R2000", unit: str = "m") -> Path:
    """Doors in every form, each with a wall gap.

    * door layer A-DOOR: ARC centre (5,0) r 0.9 from 0° to 90° and leaf LINE (5,0)-(5,0.9)
      (leaf drawn open): doorway centre (5.45, 0), width 0.9; TEXT "D1" at (5.45, 0.6).
    * door block DOOR (unit size, layer 0: leaf LINE (0,0)-(0,1) and ARC r 1, 0°-90°):
      INSERT at (20, 0) scale 0.8 -> doorway centre (20.4, 0), width 0.8;
      INSERT at (30, 0) x scale -0.8 (mirrored) -> centre (29.6, 0), width 0.8;
      INSERT at (40, 0) scale 0.8 rotation 90 -> centre (40, 0.4), width 0.8.
    * on plain layer 0 (no door name): ARC centre (50,0) r 1 from 0° to 90° with leaf LINE
      (50,0)-(50,1): a swing found by shape, centre (50.5, 0), width 1.0.
    * layer Tueren without arcs: LINE (60,0)-(61.2,0): an opening, centre (60.6, 0), width 1.2.
    * A-WALL lines along y = 0 with gaps at every door.
    """
    d = new_drawing(version, unit)
    m = d.msp
    for x0, x1 in [(0, 5), (5.9, 20), (20.8, 29.2), (30, 40), (40, 50), (51, 60), (61.2, 70)]:
        m.add_line(d.u(x0, 0), d.u(x1, 0), dxfattribs={"layer": "A-WALL"})
    m.add_arc(d.u(5, 0), d.u(0.9), 0, 90, dxfattribs={"layer": "A-DOOR"})
    m.add_line(d.u(5, 0), d.u(5, 0.9), dxfattribs={"layer": "A-DOOR"})
    m.add_text("D1", dxfattribs={"layer": "A-ANNO-TEXT", "height": d.u(0.1), "insert": d.u(5.45, 0.6)})
    door = d.doc.blocks.new("DOOR")
    door.add_line((0, 0), (0, 1), dxfattribs={"layer": "0"})
    door.add_arc((0, 0), 1, 0, 90, dxfattribs={"layer": "0"})
    s = d.u(0.8)
    m.add_blockref("DOOR", d.u(20, 0), dxfattribs={"xscale": s, "yscale": s, "layer": "A-WALL"})
    m.add_blockref("DOOR", d.u(30, 0), dxfattribs={"xscale": -s, "yscale": s, "layer": "A-WALL"})
    m.add_blockref("DOOR", d.u(40, 0), dxfattribs={"xscale": s, "yscale": s, "rotation": 90, "layer": "A-WALL"})
    m.add_arc(d.u(50, 0), d.u(1.0), 0, 90, dxfattribs={"layer": "0"})
    m.add_line(d.u(50, 0), d.u(50, 1), dxfattribs={"layer": "0"})
    m.add_line(d.u(60, 0), d.u(61.2, 0), dxfattribs={"layer": "Tueren"})
    return d.save(path)


def write_roles_sample(path: Path, version: str = "R2000", unit: str = "m") -> Path:
    """Layer-name conventions: a 1 m LINE on each of A-WALL, xref-HOUSE$0$A-WALL, Wand,
    墙, A-DIMS-1, Defpoints, GRIDLINES, Flooring, A-ANNO-NOTE, A21----, MYSTERY; a CHAIR
    block and a WC block (layer 0 content) inserted on layer A-FURN."""
    d = new_drawing(version, unit)
    names = ["A-WALL", "xref-HOUSE$0$A-WALL", "Wand", "墙", "A-DIMS-1", "Defpoints", "GRIDLINES",
             "Flooring", "A-ANNO-NOTE", "A21----", "MYSTERY"]
    for k, name in enumerate(names):
        if name not in d.doc.layers:
            d.doc.layers.add(name)
        d.msp.add_line(d.u(0, k), d.u(1, k), dxfattribs={"layer": name})
    for bname in ("CHAIR", "WC"):
        b = d.doc.blocks.new(bname)
        _polyline(d, b, [d.u(0, 0), d.u(0.5, 0), d.u(0.5, 0.5), d.u(0, 0.5)], closed=True, layer="0")
    if "A-FURN" not in d.doc.layers:
        d.doc.layers.add("A-FURN")
    d.msp.add_blockref("CHAIR", d.u(5, 0), dxfattribs={"layer": "A-FURN"})
    d.msp.add_blockref("WC", d.u(7, 0), dxfattribs={"layer": "A-FURN"})
    return d.save(path)


def write_vehicle_outline(path: Path, unit: str = "mm") -> Path:
    """Vehicle outlines: on layer OUTLINE a closed polyline (0,0)-(1,0)-(1,0.6)-(0,0.6) whose
    edge (1,0)-(1,0.6) bulges out (bulge 1: half circle r 0.3 to x = 1.3); block AGV holds
    the plain rectangle (-0.45,-0.3)-(0.45,0.3); layer TWO holds two closed polylines."""
    d = new_drawing("R2000", unit)
    d.doc.layers.add("OUTLINE")
    d.doc.layers.add("TWO")
    _polyline(d, d.msp, [d.u(0, 0), d.u(1, 0), d.u(1, 0.6), d.u(0, 0.6)], closed=True, layer="OUTLINE",
              bulges=[0.0, 1.0, 0.0, 0.0])
    agv = d.doc.blocks.new("AGV")
    _polyline(d, agv, [d.u(-0.45, -0.3), d.u(0.45, -0.3), d.u(0.45, 0.3), d.u(-0.45, 0.3)], closed=True)
    for x in (0, 5):
        _polyline(d, d.msp, [d.u(x, 0), d.u(x + 1, 0), d.u(x + 1, 1)], closed=True, layer="TWO")
    return d.save(path)


# --------------------------------------------------------------------------------------
# hostile and broken drawings
# --------------------------------------------------------------------------------------

def write_self_reference(path: Path) -> Path:
    """Block A inserts itself; model space inserts A."""
    d = new_drawing("R2000", "m")
    a = d.doc.blocks.new("A")
    a.add_line((0, 0), (1, 0))
    a.add_blockref("A", (1, 0))
    d.msp.add_blockref("A", (0, 0))
    return d.save(path)


def write_reference_chain(path: Path) -> Path:
    """Blocks A -> B -> C -> A (a cycle through a chain); model space inserts A."""
    d = new_drawing("R2000", "m")
    for name, child in (("A", "B"), ("B", "C"), ("C", "A")):
        blk = d.doc.blocks.new(name)
        blk.add_line((0, 0), (1, 0))
        blk.add_blockref(child, (1, 0))
    d.msp.add_blockref("A", (0, 0))
    return d.save(path)


def write_deep_nesting(path: Path, depth: int = 10_000) -> Path:
    """Blocks N0 -> N1 -> ... -> N{depth-1}, each inserting the next; the last holds a LINE."""
    d = new_drawing("R2000", "m")
    for i in range(depth):
        blk = d.doc.blocks.new(f"N{i}")
        if i < depth - 1:
            blk.add_blockref(f"N{i + 1}", (0, 0))
        else:
            blk.add_line((0, 0), (1, 0))
    d.msp.add_blockref("N0", (0, 0))
    return d.save(path)


def write_minsert_bomb(path: Path) -> Path:
    """LEAF holds one LINE; L1 is a 1000 x 1000 MINSERT of LEAF; L2 a 1000 x 1000 MINSERT of
    L1; model space inserts L2 once: 10^12 lines after expansion."""
    d = new_drawing("R2000", "m")
    d.doc.blocks.new("LEAF").add_line((0, 0), (1, 0))
    grid = {"row_count": 1000, "column_count": 1000, "row_spacing": 1.0, "column_spacing": 1.0}
    d.doc.blocks.new("L1").add_blockref("LEAF", (0, 0), dxfattribs=grid)
    d.doc.blocks.new("L2").add_blockref("L1", (0, 0), dxfattribs=grid)
    d.msp.add_blockref("L2", (0, 0))
    return d.save(path)


def write_big_polyline(path: Path, vertices: int = 1_000_000) -> Path:
    """One LWPOLYLINE with ``vertices`` vertices (written as text: ezdxf would take minutes)."""
    d = new_drawing("R2000", "m")
    d.msp.add_lwpolyline([(0, 0), (1, 0), (2, 0)], dxfattribs={"layer": "A-WALL"})
    d.save(path)
    text = path.read_text(encoding="utf-8")
    old = " 90\n3\n 70\n0\n 10\n0.0\n 20\n0.0\n 10\n1.0\n 20\n0.0\n 10\n2.0\n 20\n0.0\n"
    assert old in text, "ezdxf changed its LWPOLYLINE output format"
    body = f" 90\n{vertices}\n 70\n0\n" + "".join(f" 10\n{i * 0.001:.3f}\n 20\n0.0\n" for i in range(vertices))
    path.write_text(text.replace(old, body), encoding="utf-8")
    return path


def write_huge_coordinate(path: Path) -> Path:
    """A LINE from (0,0) to (1e300, 0) on A-WALL next to a normal one."""
    d = new_drawing("R2000", "m")
    d.msp.add_line((0, 0), (1, 0), dxfattribs={"layer": "A-WALL"})
    d.msp.add_line((0, 0), (1e300, 0), dxfattribs={"layer": "A-WALL"})
    return d.save(path)


def write_nan_coordinate(path: Path) -> Path:
    """A LINE whose end x is the text "nan" (patched into the file)."""
    d = new_drawing("R2000", "m")
    d.msp.add_line((0, 0), (1, 0), dxfattribs={"layer": "A-WALL"})
    d.msp.add_line((0, 0), (123.25, 0), dxfattribs={"layer": "A-WALL"})
    d.save(path)
    text = path.read_text(encoding="utf-8")
    assert text.count("\n123.25\n") == 1
    path.write_text(text.replace("\n123.25\n", "\nnan\n"), encoding="utf-8")
    return path


def write_empty_modelspace(path: Path) -> Path:
    """Nothing in model space; one LINE in paper space."""
    d = new_drawing("R2000", "m")
    d.doc.paperspace().add_line((0, 0), (1, 0))
    return d.save(path)


def write_truncated(path: Path, keep_fraction: float) -> Path:
    """A valid drawing of 200 wall lines cut after ``keep_fraction`` of its bytes."""
    d = new_drawing("R2000", "m")
    for i in range(200):
        d.msp.add_line((i, 0), (i, 10), dxfattribs={"layer": "A-WALL"})
    d.save(path)
    data = path.read_bytes()
    path.write_bytes(data[: int(len(data) * keep_fraction)])
    return path


def write_not_dxf(path: Path) -> Path:
    """A PNG signature followed by bytes: not a drawing."""
    path.write_bytes(b"\x89PNG\r\n\x1a\n" + bytes(range(256)) * 4)
    return path
