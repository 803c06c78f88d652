"""The close-up of a finding sheet, drawn true to scale into a matplotlib axes.

This module owns the drawing of a :class:`floorfit.report.sheets.Sheet` (whose contents
:func:`floorfit.report.sheets.build_sheets` computes): :func:`draw_closeup` draws the plan
around the finding, the vehicle at the deciding pose, dimension lines, circles, stations, finding
markers, a scale bar and, for a height finding, a side view into an axes that is ``viewport_mm``
on paper, so that 1 m in the drawing is ``1000 / scale`` mm on the sheet; :func:`closeup_figure`
makes the same close-up as a figure of its own for the HTML report. Drawing frame, metres.
"""

from __future__ import annotations

import math
from typing import Any

import matplotlib

matplotlib.use("Agg")  # noqa: E402

import numpy as np
import shapely
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure
from matplotlib.patches import Circle, PathPatch, Rectangle

from floorfit.report.bounding_entities import _Obstacles
from floorfit.report.geometry import add_polygon_patch, line_segments, parts, polygon_path
from floorfit.report.kinds import kind_style, numbered_findings, plain_text
from floorfit.report.sheets import _CIRCLE_NEED, VIEWPORT_MM, Dimension, Pose, Sheet, _placed, _unit

__all__ = ["draw_closeup", "closeup_figure", "view_box"]

_WALL = "#20262c"
_SOLID_FACE = "#b9bec4"
_OVERHEAD = "#7d8790"
_DOOR = "#13876a"
_POSE_FACE = "#dfe9f3"
_POSE_EDGE = "#1b3d5c"
_DIM = "#22313f"


# -- drawing ------------------------------------------------------------------------------------------
def view_box(sheet: Sheet, viewport_mm: tuple[float, float] = VIEWPORT_MM) -> tuple[float, float, float, float]:
    """The drawing-frame box (m) the viewport shows at the sheet's scale."""
    w = viewport_mm[0] * sheet.scale / 1000.0
    h = viewport_mm[1] * sheet.scale / 1000.0
    cx, cy = sheet.centre
    return cx - w / 2, cy - h / 2, cx + w / 2, cy + h / 2


def _nice_bar(span_m: float) -> float:
    target = span_m / 4.0
    for v in (10.0, 5.0, 2.0, 1.0, 0.5, 0.25):
        if v <= target:
            return v
    return 0.25


def _scale_bar(ax: Any, box: tuple[float, float, float, float], scale: int) -> None:
    """A bar of alternating blocks in drawing metres at the lower left of the close-up."""
    x0, y0, x1, y1 = box
    length = _nice_bar(x1 - x0)
    n = 4 if length >= 1 else 2
    step = length / n
    pad = 0.04 * (y1 - y0)
    bx, by = x0 + pad, y0 + pad
    h = 1.6 * scale / 1000.0          # 1.6 mm on paper
    add_polygon_patch(ax, Rectangle((bx - 0.3 * pad, by - 0.3 * pad), length + 0.6 * pad + 0.3 * (x1 - x0) * 0.0,
                                    h + 3.2 * scale / 1000.0 + 0.6 * pad, facecolor="#ffffff", edgecolor="none",
                                    alpha=0.9, zorder=20))
    for i in range(n):
        add_polygon_patch(ax, Rectangle((bx + i * step, by), step, h, facecolor=_DIM if i % 2 == 0 else "#ffffff",
                                        edgecolor=_DIM, linewidth=0.5, zorder=21))
    label = f"{length:g} m" if length >= 1 else f"{length * 1000:g} mm"
    ax.text(bx, by + h + 0.6 * scale / 1000.0, "0", fontsize=6, ha="center", va="bottom", color=_DIM, zorder=22)
    ax.text(bx + length, by + h + 0.6 * scale / 1000.0, label, fontsize=6, ha="center", va="bottom",
            color=_DIM, zorder=22)
    ax.text(bx + length + 2.5 * scale / 1000.0, by, f"scale 1:{scale}", fontsize=6.5, ha="left", va="bottom",
            color=_DIM, zorder=22, fontweight="bold")


def _draw_dimension(ax: Any, dim: Dimension, scale: int) -> None:
    a, b = np.asarray(dim.a, float), np.asarray(dim.b, float)
    u = _unit(b - a)
    n = np.array([-u[1], u[0]])
    total = dim.offset_mm * scale / 1000.0 + dim.offset_m
    off = n * total
    pa, pb = a + off, b + off
    if abs(total) > 1e-9:              # extension lines from the measured points
        ext = n * (0.8 * scale / 1000.0) * np.sign(total)
        ax.plot([a[0], pa[0] + ext[0]], [a[1], pa[1] + ext[1]], color=_DIM, linewidth=0.4, zorder=15)
        ax.plot([b[0], pb[0] + ext[0]], [b[1], pb[1] + ext[1]], color=_DIM, linewidth=0.4, zorder=15)
    colour = "#b3261e" if dim.emphasis else _DIM
    ax.annotate("", xy=tuple(pb), xytext=tuple(pa), zorder=16,
                arrowprops={"arrowstyle": "<|-|>,head_length=0.5,head_width=0.18", "color": colour,
                            "lw": 0.8, "shrinkA": 0, "shrinkB": 0})
    mid = 0.5 * (pa + pb)
    angle = math.degrees(math.atan2(u[1], u[0]))
    if angle > 90:
        angle -= 180
    elif angle < -90:
        angle += 180
    tn = n if total >= 0 else -n
    pos = mid + tn * (1.8 * scale / 1000.0)
    ax.text(pos[0], pos[1], dim.text, fontsize=7, rotation=angle, rotation_mode="anchor", ha="center",
            va="center", color=colour, zorder=17, fontweight="bold" if dim.emphasis else "normal",
            bbox={"boxstyle": "square,pad=0.12", "facecolor": "#ffffff", "edgecolor": "none", "alpha": 0.85},
            parse_math=False)


def draw_closeup(ax: Any, result: Any, sheet: Sheet,  # noqa: C901  (one drawing, layer by layer, in order)
                 viewport_mm: tuple[float, float] = VIEWPORT_MM, obstacles: Any = None) -> None:
    """Draw the close-up of ``sheet`` into ``ax``; the axes must be ``viewport_mm`` on paper, so that
    the drawing is at the sheet's scale."""
    plan = result.plan
    box = view_box(sheet, viewport_mm)
    x0, y0, x1, y1 = box
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("auto")
    ax.set_xticks([])
    ax.set_yticks([])
    for side in ax.spines.values():
        side.set_color("#6b7680")
        side.set_linewidth(0.6)
    ox, oy = plan.origin
    shift = np.array([ox, oy])
    obst = obstacles or _Obstacles(plan)
    pad = 0.05 * max(x1 - x0, y1 - y0)
    local_box = (x0 - ox - pad, y0 - oy - pad, x1 - ox + pad, y1 - oy + pad)
    solids, walls, over = obst.clipped(local_box)
    path = polygon_path(solids, shift)
    if path is not None:
        add_polygon_patch(ax, PathPatch(path, facecolor=_SOLID_FACE, edgecolor=_WALL, linewidth=0.6, zorder=2))
    segs = line_segments(walls, shift)
    if segs:
        ax.add_collection(LineCollection(segs, colors=_WALL, linewidths=1.1, zorder=3, capstyle="butt"))
    osegs = line_segments(over, shift)
    if osegs:
        ax.add_collection(LineCollection(osegs, colors=_OVERHEAD, linewidths=0.8, linestyles=(0, (6, 2, 1, 2)),
                                         zorder=3))
    for door in plan.doors:
        dx, dy = door.x + ox, door.y + oy
        if x0 - 2 <= dx <= x1 + 2 and y0 - 2 <= dy <= y1 + 2:
            ax.add_patch(Circle((dx, dy), max(door.width_m, 1e-3) / 2, facecolor="none", edgecolor=_DOOR,
                                linewidth=0.6, linestyle=(0, (2, 2)), zorder=4))
    for lab in plan.labels:
        lx, ly = lab.x + ox, lab.y + oy
        if x0 <= lx <= x1 and y0 <= ly <= y1:
            ax.text(lx, ly, plain_text(lab.text), fontsize=6, color="#6a6a6a", style="italic", ha="center",
                    va="center", zorder=5, parse_math=False, clip_on=True)
    f = sheet.finding
    style = kind_style(f.kind)
    if isinstance(f.geometry, shapely.Geometry) and not f.geometry.is_empty:
        g = f.geometry
        polys = [p for p in parts(g) if isinstance(p, shapely.Polygon)]
        p = polygon_path(polys, shift)
        if p is not None:
            add_polygon_patch(ax, PathPatch(p, facecolor=style.colour, alpha=0.18, edgecolor=style.colour,
                                            linewidth=0.6, zorder=5))
    for x, y, dia, label, colour in sheet.circles:
        ax.add_patch(Circle((x, y), dia / 2, facecolor="none", edgecolor=colour, linewidth=1.0,
                            linestyle=(0, (5, 2)) if colour == _CIRCLE_NEED else "-", zorder=9))
        ang = math.radians(35 if colour == _CIRCLE_NEED else -35)
        ax.text(x + dia / 2 * math.cos(ang), y + dia / 2 * math.sin(ang), " " + label, fontsize=6.5, color=colour,
                ha="left", va="center", zorder=18, parse_math=False,
                bbox={"boxstyle": "square,pad=0.1", "facecolor": "#ffffff", "edgecolor": "none", "alpha": 0.8})
    if sheet.pose is not None:
        _draw_pose(ax, result.vehicle, sheet.pose)
    for dim in sheet.dims:
        _draw_dimension(ax, dim, sheet.scale)
    for s in result.stations:
        if x0 <= s.x <= x1 and y0 <= s.y <= y1:
            ax.plot([s.x], [s.y], marker="h", markersize=8, markerfacecolor="#ffffff", markeredgecolor="#111111",
                    markeredgewidth=1.3, linestyle="none", zorder=12)
            ax.annotate(plain_text(s.name), (s.x, s.y), xytext=(6, 6), textcoords="offset points", fontsize=7,
                        fontweight="bold", zorder=13, parse_math=False)
    _draw_markers(ax, result, f, box, sheet.scale)
    _scale_bar(ax, box, sheet.scale)
    if sheet.side_view is not None:
        _side_view(ax, result.vehicle, sheet.side_view)


def _draw_markers(ax: Any, result: Any, f: Any, box: tuple[float, float, float, float], scale: int) -> None:
    """Numbered markers of the findings in view; this sheet's finding sits 9 mm up and right of its
    place, with a leader, so that it does not hide the dimensions."""
    x0, y0, x1, y1 = box
    lead = 9.0 * scale / 1000.0
    for number, other in numbered_findings(result.findings):
        if not (x0 <= other.x <= x1 and y0 <= other.y <= y1):
            continue
        st = kind_style(other.kind)
        big = other is f
        mx, my = (other.x + lead, other.y + lead) if big else (other.x, other.y)
        if big:
            ax.plot([other.x, mx], [other.y, my], color=st.colour, linewidth=0.7, zorder=19)
            ax.plot([other.x], [other.y], marker="o", markersize=2.5, color=st.colour, zorder=19)
        ax.plot([mx], [my], marker=st.marker, markersize=13 if big else 9, linestyle="none",
                markerfacecolor=st.colour if big else "#ffffff", markeredgecolor=st.colour,
                markeredgewidth=1.2, zorder=19)
        ax.annotate(str(number), (mx, my), xytext=(0, -1.2 if st.marker == "^" else 0),
                    textcoords="offset points", ha="center", va="center", fontsize=6.5 if big else 5.5,
                    fontweight="bold", color="#ffffff" if big else st.colour, zorder=20)


def _draw_pose(ax: Any, vehicle: Any, pose: Pose) -> None:
    if pose.envelope_m > 0:
        env = _placed(vehicle.outline.buffer(pose.envelope_m, join_style="mitre", mitre_limit=10.0),
                      pose.x, pose.y, pose.heading_deg)
        p = polygon_path([env], np.zeros(2))
        if p is not None:
            add_polygon_patch(ax, PathPatch(p, facecolor="none", edgecolor=kind_style("tight").colour, linewidth=0.9,
                                            linestyle=(0, (4, 2)), zorder=10))
    fp = _placed(vehicle.footprint, pose.x, pose.y, pose.heading_deg)
    body = _placed(vehicle.outline, pose.x, pose.y, pose.heading_deg)
    p = polygon_path([fp], np.zeros(2))
    if p is not None:
        add_polygon_patch(ax, PathPatch(p, facecolor=_POSE_FACE, edgecolor=_POSE_EDGE, linewidth=0.6,
                                        linestyle=(0, (2, 1.5)), alpha=0.9, zorder=10))
    p = polygon_path([body], np.zeros(2))
    if p is not None:
        add_polygon_patch(ax, PathPatch(p, facecolor="#a9c3dc", edgecolor=_POSE_EDGE, linewidth=1.0, alpha=0.85,
                                        zorder=11))
    h = math.radians(pose.heading_deg)
    length = 0.45 * max(float(getattr(vehicle, "length_m", 1.0)), 0.2)
    ax.annotate("", xy=(pose.x + length * math.cos(h), pose.y + length * math.sin(h)), xytext=(pose.x, pose.y),
                zorder=12, arrowprops={"arrowstyle": "-|>", "color": _POSE_EDGE, "lw": 1.0})
    ax.plot([pose.x], [pose.y], marker="+", markersize=7, color=_POSE_EDGE, markeredgewidth=1.0, zorder=12)


def _side_view(ax: Any, vehicle: Any, heights: tuple[float, float]) -> None:
    """A small side view (not to the plan's scale) of the clear height and the vehicle height."""
    clear, need = heights
    inset = ax.inset_axes([0.70, 0.62, 0.27, 0.34])
    top = max(clear, need if math.isfinite(need) else clear) * 1.25
    length = float(getattr(vehicle, "length_m", 1.0))
    inset.set_xlim(-0.2 * length, 1.8 * length)
    inset.set_ylim(0, top)
    inset.add_patch(Rectangle((0.2 * length, 0), length, need if math.isfinite(need) else 0.0,
                              facecolor="#a9c3dc", edgecolor=_POSE_EDGE, linewidth=0.8))
    inset.add_patch(Rectangle((-0.2 * length, clear), 2.0 * length, top - clear, facecolor=_SOLID_FACE,
                              edgecolor=_WALL, linewidth=0.8, hatch="///"))
    inset.axhline(0, color=_WALL, linewidth=1.0)
    inset.text(1.45 * length, clear / 2, f"clear\n{clear:.2f} m", fontsize=6, ha="center", va="center", color=_DIM)
    if math.isfinite(need):
        inset.text(0.7 * length, need / 2, f"vehicle\n{need:.2f} m", fontsize=6, ha="center", va="center",
                   color=_POSE_EDGE)
    inset.set_xticks([])
    inset.set_yticks([0, clear])
    inset.tick_params(labelsize=5)
    inset.set_title("side view (not to scale)", fontsize=6)


def closeup_figure(result: Any, sheet: Sheet, viewport_mm: tuple[float, float] = VIEWPORT_MM,
                   obstacles: Any = None) -> Figure:
    """The close-up of ``sheet`` alone, as a figure exactly ``viewport_mm`` in size (to scale when
    printed at 100 %)."""
    fig = Figure(figsize=(viewport_mm[0] / 25.4, viewport_mm[1] / 25.4))
    ax = fig.add_axes((0.0, 0.0, 1.0, 1.0))
    draw_closeup(ax, result, sheet, viewport_mm, obstacles)
    return fig
