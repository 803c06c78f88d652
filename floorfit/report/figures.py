"""The drawings of the report, made with matplotlib (Agg/SVG, no screen needed).

Every figure is drawn in the **drawing frame**, metres, so the axis numbers match the
findings table and the overlay. Local-frame geometries (``plan.walls``, finding
geometry, turnability) are shifted by ``plan.origin`` here.

Figures are built on :class:`matplotlib.figure.Figure` directly (no pyplot state) and
rendered by :func:`render_figure` to SVG (default; no date and a fixed hash salt, so the
same input gives the same bytes) or PNG (for very large plans, where SVG would be heavy).
"""

from __future__ import annotations

import io
import math
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

import matplotlib

matplotlib.use("Agg")  # noqa: E402  (before anything draws; harmless when already set)

import numpy as np
import shapely
from matplotlib import rc_context
from matplotlib.collections import LineCollection, PatchCollection
from matplotlib.colors import ListedColormap
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Circle, Patch, PathPatch, Rectangle
from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar

from floorfit.report.geometry import add_polygon_patch, line_segments, parts, polygon_path
from floorfit.report.kinds import kind_style, numbered_findings, plain_text

__all__ = [
    "FigureImage", "TURN_CLASSES", "shown_turn_classes", "plan_figure", "turnability_figure", "heading_count_figure",
    "routes_figure", "vehicle_figure", "render_figure", "choose_format", "draw_report_figures",
]

#: Turnability classes from least to most freedom: (key in result.turnability, legend text, colour).
#: Light to dark so the order survives greyscale print; orange vs blue stays apart for
#: red-green colour-vision deficiencies.
TURN_CLASSES: tuple[tuple[str | None, str, str], ...] = (
    (None, "vehicle cannot be here", "#ffffff"),
    ("fits", "fits at some headings", "#f3cf94"),
    ("turns_around", "can turn around", "#86bfdf"),
    ("rotates", "can spin in place", "#27608f"),
)



def shown_turn_classes(result: Any) -> tuple[tuple[str | None, str, str], ...]:
    """The classes of :data:`TURN_CLASSES` a legend shows: "can spin in place" only when the check
    has a spin area for the vehicle (a car-steered vehicle never spins, however much room)."""
    spins = isinstance((getattr(result, "turnability", None) or {}).get("rotates"), shapely.Geometry)
    return tuple(c for c in TURN_CLASSES if c[0] != "rotates" or spins)


#: Free-heading counts: one hue, light (few) to dark (all), like the turning map; the
#: lightest tenth of the ramp is cut off so that "one heading" never looks like white "none".
_COUNT_CMAP = ListedColormap(matplotlib.colormaps["Blues"](np.linspace(0.22, 1.0, 256)),
                             name="floorfit-counts")
_WALL = "#2b2b2b"
_SOLID = "#9a9a9a"
_DOOR = "#13876a"
_LABEL = "#6a6a6a"
_STATION_EDGE = "#111111"
_MAX_LABELS = 400            # more than this many drawing labels are left off the figure
_PNG_THRESHOLD = 150_000     # coordinates; above this the figures are PNG instead of SVG
_PNG_DPI = 160


@dataclass(frozen=True)
class FigureImage:
    """One rendered figure: ``key`` (anchor name), ``mime``, raw ``data`` bytes,
    ``alt`` text and ``caption`` (plain text; the HTML escapes both)."""

    key: str
    title: str
    mime: str
    data: bytes
    alt: str
    caption: str


# -- geometry helpers -------------------------------------------------------------------
_parts = parts




def _origin(plan: Any) -> np.ndarray:
    return np.asarray(plan.origin, dtype=float)


def _coordinate_count(result: Any) -> int:
    plan = result.plan
    geoms = [*plan.walls, *plan.solids]
    geoms += [g for g in result.turnability.values() if isinstance(g, shapely.Geometry)]
    geoms += [f.geometry for f in result.findings if f.geometry is not None]
    return int(sum(shapely.get_num_coordinates(g) for g in geoms)) if geoms else 0


def choose_format(result: Any) -> str:
    """``"svg"`` for ordinary plans, ``"png"`` when the figures would hold more than
    150 000 coordinates (an SVG that size loads slowly and prints poorly)."""
    return "png" if _coordinate_count(result) > _PNG_THRESHOLD else "svg"


# -- frame of a plan figure ---------------------------------------------------------------
def _view_box(result: Any) -> tuple[float, float, float, float]:
    """Drawing-frame box (m) holding obstacles, stations and findings, with a small pad."""
    xs, ys = [], []
    x0, y0, x1, y1 = result.plan.extent_m
    if len(result.plan.walls) + len(result.plan.solids):
        xs += [x0, x1]
        ys += [y0, y1]
    xs += [s.x for s in result.stations] + [f.x for f in result.findings]
    ys += [s.y for s in result.stations] + [f.y for f in result.findings]
    if not xs:
        xs, ys = [0.0, 1.0], [0.0, 1.0]
    x0, x1, y0, y1 = min(xs), max(xs), min(ys), max(ys)
    span = max(x1 - x0, y1 - y0, 1.0)
    pad = 0.04 * span
    return x0 - pad, y0 - pad, x1 + pad, y1 + pad


def _new_plan_axes(box: tuple[float, float, float, float], width_in: float = 10.0):
    x0, y0, x1, y1 = box
    aspect = (y1 - y0) / max(x1 - x0, 1e-9)
    height = width_in * aspect
    if height > 12.0:                       # tall plan: narrower figure, still readable
        height = 12.0
        width_in = max(5.0, height / aspect)
    height = max(height, 3.0)
    fig = Figure(figsize=(width_in, height + 1.2))
    ax = fig.add_subplot()
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel("x (m, drawing frame)", fontsize=8)
    ax.set_ylabel("y (m, drawing frame)", fontsize=8)
    ax.tick_params(labelsize=7, colors="#555555")
    ax.ticklabel_format(useOffset=False, style="plain")
    for side in ax.spines.values():
        side.set_color("#bbbbbb")
    return fig, ax


def _nice_length(span: float) -> float:
    """A round scale-bar length near a fifth of ``span`` metres (1, 2 or 5 × 10^k)."""
    target = max(span / 5.0, 1e-6)
    k = math.floor(math.log10(target))
    for m in (5, 2, 1):
        if m * 10 ** k <= target:
            return m * 10 ** k
    return 10 ** k


def _scale_bar(ax: Any, box: tuple[float, float, float, float]) -> None:
    length = _nice_length(box[2] - box[0])
    text = f"{length:g} m" if length >= 1 else f"{length * 1000:g} mm"
    bar = AnchoredSizeBar(ax.transData, length, text, "lower right", pad=0.4, borderpad=0.6,
                          sep=3, frameon=True, size_vertical=0, color="#222222",
                          fontproperties={"size": 7})
    bar.patch.set_alpha(0.85)
    bar.patch.set_edgecolor("#cccccc")
    ax.add_artist(bar)


def _clip_to_drawing(ax: Any, plan: Any, artist: Any) -> None:
    """Show ``artist`` only inside the drawing's extent: free space the engine found outside
    the outermost obstacles (around the building) is not floor the report should colour."""
    if len(plan.walls) + len(plan.solids) == 0:
        return
    x0, y0, x1, y1 = plan.extent_m
    artist.set_clip_path(Rectangle((x0, y0), x1 - x0, y1 - y0, transform=ax.transData))


def _draw_obstacles(ax: Any, plan: Any, *, faint: bool = False) -> None:
    shift = _origin(plan)
    path = polygon_path(plan.solids, shift)
    if path is not None:
        add_polygon_patch(ax, PathPatch(path, facecolor="#c9c9c9" if faint else _SOLID,
                                        edgecolor=_WALL, linewidth=0.4, zorder=2))
    segments = line_segments(plan.walls, shift)
    if segments:
        ax.add_collection(LineCollection(segments, colors=_WALL, linewidths=0.5 if faint else 0.8,
                                         zorder=3, capstyle="round"))


def _draw_doors(ax: Any, plan: Any) -> None:
    if not plan.doors:
        return
    ox, oy = plan.origin
    circles = [Circle((d.x + ox, d.y + oy), max(d.width_m, 1e-3) / 2) for d in plan.doors]
    ax.add_collection(PatchCollection(circles, facecolor="none", edgecolor=_DOOR, linewidth=1.0,
                                      linestyle=(0, (3, 1.5)), zorder=4))


def _draw_labels(ax: Any, plan: Any) -> int:
    """Draw up to _MAX_LABELS drawing texts; return how many were left off."""
    ox, oy = plan.origin
    shown = plan.labels[:_MAX_LABELS]
    for lab in shown:
        ax.text(lab.x + ox, lab.y + oy, plain_text(lab.text), fontsize=6.5, color=_LABEL,
                ha="center", va="center", style="italic", zorder=5, clip_on=True,
                parse_math=False)
    return len(plan.labels) - len(shown)


def _draw_stations(ax: Any, stations: Iterable[Any], arrow_len: float) -> None:
    for s in stations:
        ax.plot([s.x], [s.y], marker="h", markersize=9, markerfacecolor="#ffffff",
                markeredgecolor=_STATION_EDGE, markeredgewidth=1.6, zorder=9, linestyle="none")
        if s.heading_deg is not None:
            h = math.radians(s.heading_deg)
            ax.annotate("", xy=(s.x + arrow_len * math.cos(h), s.y + arrow_len * math.sin(h)),
                        xytext=(s.x, s.y), zorder=9,
                        arrowprops={"arrowstyle": "-|>", "color": _STATION_EDGE, "lw": 1.2})
        ax.annotate(plain_text(s.name), (s.x, s.y), xytext=(7, 7), textcoords="offset points",
                    parse_math=False, fontsize=7.5, fontweight="bold", color="#111111", zorder=10,
                    bbox={"boxstyle": "round,pad=0.25", "facecolor": "#ffffff",
                          "edgecolor": "#111111", "linewidth": 0.6, "alpha": 0.9})


def _draw_finding_geometry(ax: Any, result: Any) -> None:
    shift = _origin(result.plan)
    for _, f in numbered_findings(result.findings):
        if f.geometry is None:
            continue
        style = kind_style(f.kind)
        path = polygon_path([f.geometry], shift)
        if path is not None:
            add_polygon_patch(ax, PathPatch(path, facecolor=style.colour, alpha=0.35, edgecolor=style.colour,
                                            linewidth=1.0, zorder=6))
        lines = [ln for part in _parts(f.geometry) if not isinstance(part, shapely.Polygon)
                 for ln in line_segments([part], shift)]
        if lines:
            ax.add_collection(LineCollection(lines, colors=style.colour, linewidths=3.0, zorder=6,
                                             capstyle="round"))


def _draw_finding_markers(ax: Any, result: Any) -> None:
    for number, f in numbered_findings(result.findings):
        style = kind_style(f.kind)
        ax.plot([f.x], [f.y], marker=style.marker, markersize=15, markerfacecolor=style.colour,
                markeredgecolor="#ffffff", markeredgewidth=1.2, linestyle="none", zorder=11)
        dy = -1.5 if style.marker == "^" else 0.0   # sit inside the triangle's body
        ax.annotate(str(number), (f.x, f.y), xytext=(0, dy), textcoords="offset points",
                    ha="center", va="center", fontsize=7, fontweight="bold", color="#ffffff",
                    zorder=12)


def _kinds_present(result: Any) -> list[str]:
    seen: list[str] = []
    for _, f in numbered_findings(result.findings):
        if f.kind not in seen:
            seen.append(f.kind)
    return seen


def _legend_below(ax: Any, handles: list[Any], ncol: int = 4) -> None:
    if handles:
        ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, -0.09), ncol=ncol,
                  fontsize=7.5, frameon=False, handlelength=1.6, columnspacing=1.4)


def _obstacle_handles(plan: Any) -> list[Any]:
    handles: list[Any] = []
    if len(plan.walls):
        handles.append(Line2D([], [], color=_WALL, linewidth=1.2, label="wall / linework"))
    if len(plan.solids):
        handles.append(Patch(facecolor=_SOLID, edgecolor=_WALL, label="solid obstacle"))
    return handles


def _station_handle() -> Line2D:
    return Line2D([], [], marker="h", markersize=8, markerfacecolor="#ffffff", linestyle="none",
                  markeredgecolor=_STATION_EDGE, markeredgewidth=1.4, label="station")


# -- the figures ----------------------------------------------------------------------------
def plan_figure(result: Any) -> tuple[Figure, int]:
    """The plan with obstacles, doorways, labels, stations and numbered findings.

    Returns the figure and the number of drawing labels left off (more than 400).
    """
    box = _view_box(result)
    fig, ax = _new_plan_axes(box)
    _draw_obstacles(ax, result.plan)
    _draw_doors(ax, result.plan)
    hidden = _draw_labels(ax, result.plan)
    _draw_finding_geometry(ax, result)
    _draw_stations(ax, result.stations, 0.05 * (box[2] - box[0]))
    _draw_finding_markers(ax, result)
    _scale_bar(ax, box)
    handles = _obstacle_handles(result.plan)
    if result.plan.doors:
        handles.append(Line2D([], [], marker="o", markersize=8, markerfacecolor="none",
                              markeredgecolor=_DOOR, linestyle="none",
                              label="doorway (circle = opening width)"))
    handles.append(_station_handle())
    for kind in _kinds_present(result):
        style = kind_style(kind)
        handles.append(Line2D([], [], marker=style.marker, markersize=9, linestyle="none",
                              markerfacecolor=style.colour, markeredgecolor="#ffffff",
                              label="finding: " + style.title.lower().replace("$", r"\$")))
    _legend_below(ax, handles)
    return fig, hidden


def turnability_figure(result: Any) -> Figure | None:
    """Where the vehicle's reference point can be, and how freely it can turn there.

    None when ``result.turnability`` holds none of ``fits``, ``turns_around``, ``rotates``.
    """
    present = [(key, text, colour) for key, text, colour in TURN_CLASSES
               if key is not None and isinstance(result.turnability.get(key), shapely.Geometry)]
    if not present:
        return None
    box = _view_box(result)
    fig, ax = _new_plan_axes(box)
    shift = _origin(result.plan)
    for key, _text, colour in present:
        path = polygon_path([result.turnability[key]], shift)
        if path is not None:
            patch = add_polygon_patch(ax, PathPatch(path, facecolor=colour, edgecolor="none", zorder=1))
            _clip_to_drawing(ax, result.plan, patch)
    _draw_obstacles(ax, result.plan, faint=True)
    _draw_stations(ax, result.stations, 0.05 * (box[2] - box[0]))
    _scale_bar(ax, box)
    handles: list[Any] = [Patch(facecolor=TURN_CLASSES[0][2], edgecolor="#999999",
                                label=TURN_CLASSES[0][1])]
    handles += [Patch(facecolor=colour, edgecolor="#999999", label=text)
                for _key, text, colour in present]
    handles += _obstacle_handles(result.plan) + [_station_handle()]
    _legend_below(ax, handles, ncol=4)
    return fig


def heading_count_figure(result: Any) -> Figure | None:
    """How many of the checked headings are free at each raster cell (None if not given)."""
    hc = result.turnability.get("heading_count")
    if not isinstance(hc, dict) or "counts" not in hc:
        return None
    counts = np.asarray(hc["counts"])
    if counts.ndim != 2 or counts.size == 0:
        return None
    n = int(hc.get("n_headings", int(counts.max()) or 1))
    ox, oy = result.plan.origin
    x0, y0, cell = float(hc["x0"]) + ox, float(hc["y0"]) + oy, float(hc["cell_m"])
    ny, nx = counts.shape
    box = _view_box(result)
    fig, ax = _new_plan_axes(box)
    shown = np.ma.masked_less_equal(counts.astype(float), 0)
    image = ax.imshow(shown, origin="lower", extent=(x0, x0 + nx * cell, y0, y0 + ny * cell),
                      cmap=_COUNT_CMAP, vmin=0.5, vmax=max(n, 1) + 0.5, interpolation="nearest",
                      zorder=1)
    _clip_to_drawing(ax, result.plan, image)
    _draw_obstacles(ax, result.plan, faint=True)
    _draw_stations(ax, result.stations, 0.05 * (box[2] - box[0]))
    _scale_bar(ax, box)
    ax.set_xlim(box[0], box[2])
    ax.set_ylim(box[1], box[3])
    bar = fig.colorbar(image, ax=ax, shrink=0.7, pad=0.02)
    bar.set_label(f"free headings (of {n}); white: none", fontsize=8)
    bar.ax.tick_params(labelsize=7)
    return fig


def _pose_outline(outline: Any, x: float, y: float, heading_deg: float) -> np.ndarray:
    c, s = math.cos(math.radians(heading_deg)), math.sin(math.radians(heading_deg))
    xy = np.asarray(outline.exterior.coords)[:, :2]
    return np.column_stack([x + c * xy[:, 0] - s * xy[:, 1], y + s * xy[:, 0] + c * xy[:, 1]])


def routes_figure(result: Any, routes: list[dict]) -> Figure | None:
    """Swept areas and centre lines of the routes (None when there are none)."""
    if not routes:
        return None
    box = _view_box(result)
    fig, ax = _new_plan_axes(box)
    _draw_obstacles(ax, result.plan)
    shift = _origin(result.plan)
    outline = result.vehicle.outline
    for route in routes:
        swept = route.get("swept")
        path = polygon_path([swept], shift) if swept is not None else None
        if path is not None:
            add_polygon_patch(ax, PathPatch(path, facecolor="#86bfdf", alpha=0.5, edgecolor="#27608f",
                                            linewidth=0.6, zorder=4))
        pts = np.asarray(route.get("path", np.empty((0, 3))), dtype=float).reshape(-1, 3)
        if len(pts):
            ax.plot(pts[:, 0], pts[:, 1], color="#27608f", linewidth=1.2, zorder=7)
            for i in np.unique(np.linspace(0, len(pts) - 1, min(len(pts), 9)).round().astype(int)):
                xy = _pose_outline(outline, *pts[i])
                ax.plot(xy[:, 0], xy[:, 1], color="#1b3d5c", linewidth=0.6, zorder=8)
    _draw_stations(ax, result.stations, 0.05 * (box[2] - box[0]))
    _scale_bar(ax, box)
    handles = _obstacle_handles(result.plan) + [
        Patch(facecolor="#86bfdf", edgecolor="#27608f", label="swept area"),
        Line2D([], [], color="#27608f", linewidth=1.2, label="reference point path"),
        Line2D([], [], color="#1b3d5c", linewidth=0.6, label="vehicle outline along the path"),
        _station_handle(),
    ]
    _legend_below(ax, handles)
    return fig


_PASS_FILL, _PASS_EDGE = "#cfe8d8", "#3d7a55"


def traffic_figure(result: Any) -> Figure | None:
    """Fleet traffic on the plan: passing places (hatched green), single-lane stretches (in the
    single-lane colour) with their narrowest cross-section, and their numbers (None without traffic)."""
    traffic = getattr(result, "traffic", None)
    if traffic is None:
        return None
    box = _view_box(result)
    fig, ax = _new_plan_axes(box)
    _draw_obstacles(ax, result.plan)
    _draw_doors(ax, result.plan)
    shift = _origin(result.plan)
    style = kind_style("single-lane")
    places, stretches = traffic.get("passing_places", []), traffic.get("stretches", [])
    path = polygon_path([p["geometry"] for p in places], shift)
    if path is not None:
        add_polygon_patch(ax, PathPatch(path, facecolor=_PASS_FILL, edgecolor=_PASS_EDGE, hatch="///", linewidth=0.7,
                                        zorder=4))
    path = polygon_path([s["geometry"] for s in stretches], shift)
    if path is not None:
        add_polygon_patch(ax, PathPatch(path, facecolor=style.colour, alpha=0.45, edgecolor=style.colour, linewidth=1.0,
                                        zorder=5))
    for s in stretches:
        (ax0, ay0), (ax1, ay1) = s["narrowest"]
        ax.plot([ax0, ax1], [ay0, ay1], color="#111111", linewidth=1.4, zorder=6, solid_capstyle="butt")
    for item, colour in [(p, _PASS_EDGE) for p in places] + [(s, style.colour) for s in stretches]:
        ax.annotate(plain_text(item["id"]), (item["x"], item["y"]), ha="center", va="center", fontsize=7.5,
                    fontweight="bold", color="#ffffff", zorder=12,
                    bbox={"boxstyle": "round,pad=0.25", "facecolor": colour, "edgecolor": "#ffffff",
                          "linewidth": 0.6})
    _draw_stations(ax, result.stations, 0.05 * (box[2] - box[0]))
    _scale_bar(ax, box)
    handles = _obstacle_handles(result.plan) + [
        Patch(facecolor=_PASS_FILL, edgecolor=_PASS_EDGE, hatch="///", label="passing place (P)"),
        Patch(facecolor=style.colour, alpha=0.45, edgecolor=style.colour, label="single-lane stretch (S)"),
        Line2D([], [], color="#111111", linewidth=1.4, label="narrowest cross-section"),
        _station_handle(),
    ]
    _legend_below(ax, handles)
    return fig


def vehicle_figure(vehicle: Any) -> Figure:
    """The vehicle outline and its footprint with margin, vehicle frame (+x forward), metres."""
    fig = Figure(figsize=(4.2, 3.2))
    ax = fig.add_subplot()
    shift = np.zeros(2)
    foot = polygon_path([vehicle.footprint], shift)
    if foot is not None:
        add_polygon_patch(ax, PathPatch(foot, facecolor="#f3cf94", edgecolor="#a8741a", linewidth=0.8,
                                        linestyle=(0, (4, 2)), label=f"with margin {vehicle.margin_m:g} m"))
    body = polygon_path([vehicle.outline], shift)
    if body is not None:
        add_polygon_patch(ax, PathPatch(body, facecolor="#27608f", alpha=0.85, edgecolor="#1b3d5c",
                                        linewidth=1.0, label="outline"))
    ax.plot([0], [0], marker="+", markersize=12, color="#ffffff", markeredgewidth=2, zorder=5)
    ax.plot([0], [0], marker="+", markersize=10, color="#111111", markeredgewidth=1, zorder=6,
            linestyle="none", label="reference point")
    b = (vehicle.footprint if vehicle.footprint is not None else vehicle.outline).bounds
    span = max(b[2] - b[0], b[3] - b[1], 0.1)
    ax.annotate("forward", xy=(b[2] + 0.15 * span, 0), xytext=(b[2] + 0.02 * span, 0),
                fontsize=7, va="center", ha="left", color="#333333",
                arrowprops={"arrowstyle": "-|>", "color": "#333333"})
    ax.set_xlim(b[0] - 0.1 * span, b[2] + 0.45 * span)
    ax.set_ylim(b[1] - 0.1 * span, b[3] + 0.1 * span)
    ax.set_aspect("equal", adjustable="box")
    ax.tick_params(labelsize=7, colors="#555555")
    ax.set_xlabel("x (m, forward)", fontsize=8)
    ax.set_ylabel("y (m, left)", fontsize=8)
    ax.grid(color="#eeeeee", linewidth=0.5)
    ax.legend(fontsize=7, loc="upper center", bbox_to_anchor=(0.5, -0.2), ncol=3, frameon=False)
    return fig


# -- rendering --------------------------------------------------------------------------------
def render_figure(fig: Figure, fmt: str = "svg") -> bytes:
    """``fig`` as SVG or PNG bytes. SVG carries no date and uses a fixed hash salt, and
    text is drawn as paths, so the output is stable and holds no markup from labels."""
    buf = io.BytesIO()
    with rc_context({"svg.hashsalt": "floorfit", "svg.fonttype": "path"}):
        if fmt == "svg":
            fig.savefig(buf, format="svg", bbox_inches="tight", pad_inches=0.1,
                        metadata={"Date": None, "Creator": None})
        elif fmt == "png":
            fig.savefig(buf, format="png", bbox_inches="tight", pad_inches=0.1, dpi=_PNG_DPI,
                        metadata={"Software": None})
        else:
            raise ValueError(f"figure format must be 'svg' or 'png', not {fmt!r}")
    return buf.getvalue()


_MIME = {"svg": "image/svg+xml", "png": "image/png"}


def draw_report_figures(result: Any, fmt: str | None = None) -> list[FigureImage]:
    """All figures of the report, rendered; absent data leaves its figure out.

    ``fmt`` is ``"svg"``, ``"png"`` or None for :func:`choose_format`.
    """
    fmt = fmt or choose_format(result)
    mime = _MIME[fmt]
    images: list[FigureImage] = []
    fig, hidden = plan_figure(result)
    caption = ("The plan in the drawing frame: obstacles as read from the drawing, doorways, "
               "stations (hexagons) and findings (numbered as in the findings table).")
    if hidden:
        caption += f" {hidden} of {len(result.plan.labels)} drawing labels are not shown."
    images.append(FigureImage("fig-plan", "Plan and findings", mime, render_figure(fig, fmt),
                              "Plan with stations and numbered findings", caption))
    fig = turnability_figure(result)
    if fig is not None:
        images.append(FigureImage(
            "fig-turn", "Where the vehicle can turn", mime, render_figure(fig, fmt),
            "Map of where the vehicle fits, can turn around, or can spin in place",
            "Each colour shows where the vehicle's reference point can be, and how freely the "
            "vehicle can change heading there. Darker means more freedom."))
    fig = heading_count_figure(result)
    if fig is not None:
        images.append(FigureImage(
            "fig-headings", "Free headings per cell", mime, render_figure(fig, fmt),
            "Raster of how many checked headings are free at each cell",
            "How many of the checked headings the vehicle fits at, per raster cell (reference "
            "point in the cell)."))
    routes = list(getattr(result, "routes", None) or [])
    fig = routes_figure(result, routes)
    if fig is not None:
        images.append(FigureImage(
            "fig-routes", "Swept paths", mime, render_figure(fig, fmt),
            "Swept areas of the planned routes",
            "The area the vehicle outline sweeps along each route, with the outline drawn at "
            "a few poses."))
    fig = traffic_figure(result)
    if fig is not None:
        images.append(FigureImage(
            "fig-traffic", "Fleet traffic", mime, render_figure(fig, fmt),
            "Passing places and single-lane stretches on the plan",
            "Floor along the routes between stations where two vehicles can pass each other "
            "(passing places, P) and where they cannot (single-lane stretches, S), with the "
            "narrowest cross-section of each stretch."))
    images.append(FigureImage(
        "fig-vehicle", "Vehicle", mime, render_figure(vehicle_figure(result.vehicle), fmt),
        "Vehicle outline and footprint with margin",
        "Outline in the vehicle frame (+x forward, +y left, origin at the reference point) "
        "and the footprint grown by the safety margin that the check uses."))
    return images
