"""Test fixture: an invented, hand-made site check for previews and tests of the report.

Nothing here is computed by the engine: the plan, findings, turnability areas and
reachability are made up to exercise every part of the report (invented data, for
demos and tests only). Build a preview with::

    python tests/report_fixtures.py /tmp/floorfit-demo
"""

from __future__ import annotations

import sys
from dataclasses import dataclass
from typing import Any

import numpy as np
import shapely
from shapely.geometry import LineString, Polygon, box

from floorfit.analysis.findings import CheckResult, Finding, Station
from floorfit.plan.model import Doorway, Label, Plan

__all__ = ["DemoVehicle", "demo_vehicle", "demo_result"]


@dataclass
class DemoVehicle:
    """The vehicle attributes the report reads (vehicle frame: +x forward, +y left, metres)."""

    name: str
    outline: Polygon
    footprint: Polygon
    margin_m: float
    width_m: float
    length_m: float
    mode: str
    source: str | None = None


def demo_vehicle(name: str = "Tugger T-1 with cart", margin_m: float = 0.1) -> DemoVehicle:
    """A 1.2 m × 1.0 m base whose reference point is its centre."""
    outline = box(-0.6, -0.5, 0.6, 0.5)
    return DemoVehicle(name=name, outline=outline,
                       footprint=outline.buffer(margin_m, join_style="mitre"),
                       margin_m=margin_m, width_m=1.0, length_m=1.2, mode="differential",
                       source="vehicles/tugger-t1.toml")


def _walls(o: np.ndarray) -> list[Any]:
    """Walls of the invented hall, drawing frame metres (offset by ``o``)."""
    lines = [
        [(0, 0), (30, 0), (30, 18), (0, 18), (0, 0)],          # outer walls
        [(12, 0), (12, 8)], [(12, 8.9), (12, 14)], [(12, 16), (12, 18)],   # hall divider, two doors
        [(0, 6), (4.5, 6)], [(5.5, 6), (8, 6)], [(8, 6), (8, 0)],           # QA lab, 1.0 m door
        [(12, 11), (6, 11)], [(6, 11), (6, 9.8)],                            # dead-end bay
    ]
    return [LineString(np.asarray(c, dtype=float) + o) for c in lines]


def _solids(o: np.ndarray) -> list[Any]:
    racks = [box(16, y, 28, y + 1.0) for y in (2.0, 5.4, 8.8)]
    column = [box(13.8, 13.8, 14.2, 14.2), box(20, 13.8, 20.4, 14.2)]
    return [shapely.transform(g, lambda c: c + o) for g in racks + column]


def demo_result(origin: tuple[float, float] = (250.0, 80.0), *, units: str = "mm",
                metres_per_unit: float = 0.001, source: str = "drawings/hall-3.dxf",
                hostile_label: str | None = None, routes: bool = True) -> CheckResult:
    """A complete invented CheckResult of a 30 m × 18 m hall whose lower-left wall corner
    sits at ``origin`` (drawing frame, metres). ``hostile_label`` replaces the label of
    finding 1 and one drawing label (for escaping tests)."""
    o = np.asarray(origin, dtype=float)
    ox, oy = origin
    plan = Plan.from_geometries(
        _walls(o), _solids(o), origin=origin, source=source, units=units,
        metres_per_unit=metres_per_unit,
        labels=[Label("Goods in", 3.0, 14.0), Label("Assembly", 22.0, 16.5),
                Label(hostile_label or "QA lab", 2.5, 2.5), Label("Dead-end bay", 9.0, 10.2),
                Label("D-12", 12.5, 8.45)],
        doors=[Doorway(12.0, 8.45, 0.9, source="swing", label="D-12"),
               Doorway(12.0, 15.0, 2.0, source="gap"), Doorway(5.0, 6.0, 1.0, source="block")],
    )
    local = lambda g: shapely.transform(g, lambda c: c - o)  # noqa: E731
    floor = box(0, 0, 30, 18).difference(
        shapely.union_all([g.buffer(0.05) for g in _walls(np.zeros(2))] + _solids(np.zeros(2))))
    fits = floor.buffer(-0.6)
    turns = floor.buffer(-0.85)
    rotates = floor.buffer(-1.3)

    stations = [Station("Dock 1", ox + 3.0, oy + 15.5, 0.0), Station("Line A", ox + 22.0, oy + 4.2),
                Station("Store", ox + 26.0, oy + 15.5, 90.0), Station("QA lab", ox + 4.0, oy + 3.0)]
    names = [s.name for s in stations]
    reachable = {a: {b: "QA lab" not in (a, b) for b in names if b != a} for a in names}
    cuts = {(a, b): ["F-1"] for a in names for b in names if a != b and "QA lab" in (a, b)}
    findings = [
        Finding("tight", ox + 22.0, oy + 4.2, "Aisle between racks R1 and R2: 0.28 m each side, "
                "0.45 m asked.", label="Assembly", clearance_m=0.28, required_clearance_m=0.45,
                id="F-3", geometry=box(16, 3.0, 28, 5.4).buffer(-0.01)),
        Finding("blocked", ox + 12.0, oy + 8.45, "Door D-12 is 0.90 m clear; the vehicle needs "
                "1.20 m at its best heading.", label=hostile_label or "D-12", cause="width",
                clear_width_m=0.9, needed_width_m=1.2, cuts_off=[], id="F-2",
                geometry=LineString([(12, 8.0), (12, 8.9)])),
        Finding("blocked", ox + 5.0, oy + 6.0, "QA lab door is 1.00 m clear; the vehicle needs "
                "1.20 m.", label="QA lab", clear_width_m=1.0, needed_width_m=1.2,
                cuts_off=["QA lab"], id="F-1", geometry=LineString([(4.5, 6.0), (5.5, 6.0)])),
        Finding("no-turn", ox + 9.0, oy + 10.4, "Dead-end bay 1.15 m wide: the vehicle can enter "
                "but must back out.", label="Dead-end bay", clear_width_m=1.15, needed_width_m=1.56,
                heading_ranges_deg=[(-10.0, 10.0), (170.0, 190.0)], id="F-4",
                geometry=box(6.05, 9.85, 11.95, 10.95).buffer(-0.05)),
        Finding("maneuver", ox + 15.0, oy + 15.0, "Turn from door into the aisle needs a stop and "
                "a turn in place.", label="Assembly", cause="maneuver", id="F-5"),
    ]
    cell = 0.25
    nx, ny = 120, 72
    cx, cy = np.meshgrid((np.arange(nx) + 0.5) * cell, (np.arange(ny) + 0.5) * cell)
    counts = (shapely.contains_xy(fits, cx, cy).astype(int) * 10
              + shapely.contains_xy(turns, cx, cy).astype(int) * 40
              + shapely.contains_xy(rotates, cx, cy).astype(int) * 22)
    result = CheckResult(
        plan=plan, vehicle=demo_vehicle(),
        settings={"heading_step_deg": 5.0, "headings": 72, "tolerance_m": 0.02, "margin_m": 0.1,
                  "required_clearance_m": 0.45,
                  "clearance_reference": "ANSI/ITSDF B56.5 §4.7.4 (450 mm)",
                  "motion": "differential", "curve_tolerance_m": 0.005},
        stations=stations, reachable=reachable, findings=findings, cuts=cuts,
        turnability={"fits": fits, "turns_around": turns, "rotates": rotates,
                     "heading_count": {"x0": 0.0, "y0": 0.0, "cell_m": cell, "counts": counts,
                                       "n_headings": 72}},
        notes=["Door D-12 recognised from a swing arc and leaf; width is the leaf length.",
               "Labels on layer A-ANNO-NOTE were used to name findings."],
    )
    if routes:
        path = np.array([[ox + 3.0, oy + 15.5, 0.0], [ox + 10.0, oy + 15.0, 0.0],
                         [ox + 14.0, oy + 15.0, 0.0], [ox + 20.0, oy + 15.5, 0.0],
                         [ox + 26.0, oy + 15.5, 90.0]])
        swept = local(LineString(path[:, :2])).buffer(0.78)
        result.routes = [{"from": "Dock 1", "to": "Store", "path": path, "swept": swept}]
    return result


if __name__ == "__main__":  # pragma: no cover - preview helper
    from floorfit.report.writer import write_report

    out = sys.argv[1] if len(sys.argv) > 1 else "floorfit-demo-report"
    print(write_report(demo_result(), out, force=True))
