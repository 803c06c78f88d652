"""The bundled demo: an invented small distribution centre, drawn by code.

Nothing here is real data. The site ("Harbourside DC", invented) is a 42 × 24 m hall in
millimetres with AIA/NCS-style layers: outer walls, a partition with a wide opening to a
service area, a charging room behind a 0.70 m door (narrower than the demo robot with
its margin), double rack rows with 2.6 m aisles, a 1.0 m dead-end aisle, columns and
room labels. ``write_demo_site(folder)`` writes the drawing, the site file and the
vehicle file; the same files are kept in the repository's ``plans/`` folder.
"""

from __future__ import annotations

from pathlib import Path

import ezdxf

__all__ = ["write_demo_site", "DEMO_PLAN", "DEMO_SITE", "DEMO_VEHICLE", "DEMO_TUG", "DEMO_ROUTES", "STATIONS"]

DEMO_PLAN = "harbourside-dc.dxf"
DEMO_SITE = "harbourside-dc.site.toml"
DEMO_VEHICLE = "tote-robot.toml"
DEMO_TUG = "cart-tug.toml"

MM = 1000.0   # the drawing is in millimetres

#: Stations of the invented site: name → (x, y, heading or None), drawing frame, metres.
STATIONS = {
    "DOCK": (15.0, 2.2, -90.0),
    "PICK-A": (6.5, 11.0, None),
    "PICK-B": (24.9, 21.0, None),
    "SERVICE": (36.0, 7.0, None),
    "CHARGER": (36.0, 20.0, 90.0),
}

#: Route questions the demo asks before the full check: (from, to, start pose, goal pose).
DEMO_ROUTES = [
    ("DOCK", "PICK-A", (15.0, 2.2, -90.0), (6.5, 11.0, 90.0)),
    ("PICK-A", "SERVICE", (6.5, 11.0, 90.0), (36.0, 7.0, 0.0)),
    ("DOCK", "PICK-B (dead end, arrive facing in)", (15.0, 2.2, -90.0), (24.9, 21.0, 90.0)),
    ("PICK-B", "DOCK (must leave facing out)", (24.9, 21.0, -90.0), (15.0, 2.2, -90.0)),
    ("SERVICE", "CHARGER (0.70 m door)", (36.0, 7.0, 0.0), (36.0, 20.0, 90.0)),
]

_SITE_TOML = """\
# Site file for the invented demo site "Harbourside DC" (floorfit demo).
# Stations: drawing frame, metres; heading in degrees CCW from +x (optional: docking).

[layers]
"A-EQPM-RACK" = "solid"
"A-COLS" = "solid"
"A-WALL" = "wall"
"A-DOOR" = "door"
"A-ANNO-TEXT" = "label"

[report]
routes = [["DOCK", "PICK-A"], ["PICK-A", "SERVICE"]]   # the report draws these drivable paths

[traffic]                # the fleet: the tote robot meets another tote robot or the cart tug
vehicles = ["tote-robot.toml", "cart-tug.toml"]
reference = "b56.5"      # 0.45 m kept between two vehicles passing each other
one_way = false

[stations]
DOCK = { x = 15.0, y = 2.2, heading = -90.0 }
PICK-A = { x = 6.5, y = 11.0 }
PICK-B = { x = 24.9, y = 21.0 }
SERVICE = { x = 36.0, y = 7.0 }
CHARGER = { x = 36.0, y = 20.0, heading = 90.0 }
"""

_VEHICLE_TOML = """\
# Invented demo vehicle: a tote-carrying differential robot.
name = "tote robot"

[footprint]
# vehicle frame: +x forward, +y left, origin = midpoint of the drive axle (metres)
outline = [[0.55, -0.31], [0.55, 0.31], [-0.35, 0.31], [-0.35, -0.31]]
margin = 0.05

[motion]
mode = "differential"
"""

_TUG_TOML = """\
# Invented demo vehicle: a tug towing a short cart, treated as one rigid outline.
name = "cart tug"

[footprint]
width = 0.80
length = 1.40
reference_to_front = 0.45
margin = 0.05

[motion]
mode = "differential"
"""


def _rect(msp, x0, y0, x1, y1, layer):
    msp.add_lwpolyline([(x0 * MM, y0 * MM), (x1 * MM, y0 * MM), (x1 * MM, y1 * MM), (x0 * MM, y1 * MM)],
                       close=True, dxfattribs={"layer": layer})


def _line(msp, a, b, layer):
    msp.add_line((a[0] * MM, a[1] * MM), (b[0] * MM, b[1] * MM), dxfattribs={"layer": layer})


def _text(msp, text, x, y, height=0.35):
    msp.add_text(text, height=height * MM, dxfattribs={"layer": "A-ANNO-TEXT", "insert": (x * MM, y * MM)})


def build_demo_document() -> ezdxf.document.Drawing:
    """The demo drawing as an ezdxf document (millimetres, $INSUNITS = 4)."""
    doc = ezdxf.new("R2013", setup=False)
    doc.header["$INSUNITS"] = 4
    for name, colour in (("A-WALL", 7), ("A-DOOR", 3), ("A-COLS", 1), ("A-EQPM-RACK", 5), ("A-ANNO-TEXT", 2)):
        doc.layers.add(name, color=colour)
    msp = doc.modelspace()
    t = 0.25  # outer wall thickness, m
    W, H = 42.0, 24.0
    # outer wall: two faces
    _rect(msp, 0, 0, W, H, "A-WALL")
    _rect(msp, t, t, W - t, H - t, "A-WALL")
    # partition between hall and the right-hand rooms (x 30.0–30.2), with a 2.4 m opening at y 5.0–7.4
    px0, px1 = 30.0, 30.2
    for y0, y1 in ((t, 5.0), (7.4, H - t)):
        _rect(msp, px0, y0, px1, y1, "A-WALL")
    # wall between service area and charging room (y 14.0–14.2) with a 0.70 m door at x 35.0–35.7
    for x0, x1 in ((px1, 35.0), (35.7, W - t)):
        _rect(msp, x0, 14.0, x1, 14.2, "A-WALL")
    # the door: leaf open 90° into the charging room, and its swing arc
    _line(msp, (35.0, 14.2), (35.0, 14.9), "A-DOOR")
    msp.add_arc((35.0 * MM, 14.2 * MM), 0.7 * MM, 0, 90, dxfattribs={"layer": "A-DOOR"})
    # double rack rows (2.2 m deep, 12 m long) with 2.6 m aisles
    for x0 in (3.0, 7.8, 12.6, 17.4):
        _rect(msp, x0, 5.0, x0 + 2.2, 17.0, "A-EQPM-RACK")
    # two rows running to the back wall, leaving a 1.0 m dead-end aisle between them
    _rect(msp, 22.2, 5.0, 24.4, H - t, "A-EQPM-RACK")
    _rect(msp, 25.4, 5.0, 27.6, H - t, "A-EQPM-RACK")
    # columns 0.4 × 0.4 m
    for cx in (6.5, 11.3, 16.1, 20.9):
        for cy in (2.6, 20.5):
            _rect(msp, cx - 0.2, cy - 0.2, cx + 0.2, cy + 0.2, "A-COLS")
    for cx, cy in ((36.0, 3.0), (36.0, 11.0)):
        _rect(msp, cx - 0.2, cy - 0.2, cx + 0.2, cy + 0.2, "A-COLS")
    # labels
    _text(msp, "HALL A", 12.0, 19.0, 0.6)
    _text(msp, "AISLE 7", 24.5, 12.0, 0.25)
    _text(msp, "SERVICE AREA", 33.0, 9.0, 0.5)
    _text(msp, "CHARGING ROOM", 33.0, 17.0, 0.5)
    _text(msp, "D-03", 35.1, 13.3, 0.25)
    _text(msp, "DOCK", 14.5, 0.8, 0.4)
    return doc


def write_demo_site(folder: str | Path) -> dict[str, Path]:
    """Write the demo drawing, site file and vehicle file into ``folder``; return their paths."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    paths = {"plan": folder / DEMO_PLAN, "site": folder / DEMO_SITE, "vehicle": folder / DEMO_VEHICLE,
             "tug": folder / DEMO_TUG}
    # fixed header metadata (dates, GUIDs) so the demo drawing is byte-identical on every run
    old = ezdxf.options.write_fixed_meta_data_for_testing
    ezdxf.options.write_fixed_meta_data_for_testing = True
    try:
        doc = build_demo_document()
        doc.commit_pending_changes()
        doc.classes.add_required_classes(doc.dxfversion)
        # classes are registered in an order that varies between runs: fix it
        doc.classes.classes = type(doc.classes.classes)(sorted(doc.classes.classes.items()))
        doc.saveas(paths["plan"])
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = old
    paths["site"].write_text(_SITE_TOML, encoding="utf-8")
    paths["vehicle"].write_text(_VEHICLE_TOML, encoding="utf-8")
    paths["tug"].write_text(_TUG_TOML, encoding="utf-8")
    return paths


if __name__ == "__main__":  # regenerate the repository's plans/ folder
    import sys

    out = write_demo_site(sys.argv[1] if len(sys.argv) > 1 else "plans")
    print("\n".join(str(p) for p in out.values()))
