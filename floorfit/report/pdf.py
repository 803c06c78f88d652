"""``report.pdf``: a paged, vector document a planner can file, print and measure.

Pages (landscape): a cover with the verdict, the counts and a key plan with the numbered
findings; one sheet per finding in the findings table's order (close-up at a standard scale,
the vehicle at the deciding pose, dimension lines, bounding entities, what it cuts off, the
computed remedy); then an appendix with the turn-round map (the only raster image), the
settings, tolerances, notes and cautions. Every page carries a title block (project fields,
drawing and vehicle file with their SHA-256 prefixes, floorfit version, the settings that
change answers, "sheet n of N") and the cautions line in its footer.

Made with matplotlib's PDF backend (already a dependency; vector output; no browser). The
bytes are reproducible: fixed metadata, no clock (``SOURCE_DATE_EPOCH`` sets the creation
date when given), TrueType subsets named from their glyphs.
"""

from __future__ import annotations

import io
import math
import textwrap
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import matplotlib

matplotlib.use("Agg")  # noqa: E402

import numpy as np
from matplotlib import colors as mcolors
from matplotlib import rc_context
from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.figure import Figure
from matplotlib.patches import Rectangle

from floorfit import __version__
from floorfit.analysis.findings import FINDING_KINDS
from floorfit.report.bounding_entities import sheet_obstacles
from floorfit.report.cautions import CAUTIONS, CLEARANCE_REFERENCES, tolerance_statement
from floorfit.report.closeup import draw_closeup
from floorfit.report.figures import (
    TURN_CLASSES,
    _draw_finding_geometry,
    _draw_finding_markers,
    _draw_obstacles,
    _draw_stations,
    _view_box,
    shown_turn_classes,
)
from floorfit.report.geometry import add_polygon_patch
from floorfit.report.kinds import kind_style, plain_text
from floorfit.report.project import ProjectInfo, TitleBlock, source_datetime, title_block
from floorfit.report.sheets import Sheet, build_sheets
from floorfit.report.tables import station_names, unreachable_pairs

__all__ = ["PAPERS", "PageLayout", "page_layout", "render_pdf", "FOOTER_CAUTION", "appendix_page_count"]

#: Paper sizes, portrait width × height in millimetres; pages are printed landscape.
PAPERS: dict[str, tuple[float, float]] = {"a4": (210.0, 297.0), "letter": (215.9, 279.4), "a3": (297.0, 420.0)}

FOOTER_CAUTION = ("Geometric screening of the drawing only, not a risk assessment. Defer to the applicable "
                  "standards, local codes, the vehicle maker's instructions and licensed professional practice.")

_INK = "#1b1f24"
_MUTED = "#5b6470"
_RULE = "#9aa3ad"
_BAND = "#1e3142"
_OK = "#13876a"
_BAD = "#c8441c"
_MM = 1.0 / 25.4
_LINE = 3.3            # appendix line pitch, mm


@dataclass(frozen=True)
class PageLayout:
    """Landscape page geometry in millimetres."""

    paper: str
    width: float
    height: float
    margin: float = 10.0
    header: float = 13.0
    title_block: float = 21.0
    footer: float = 5.0
    panel: float = 100.0

    @property
    def content_top(self) -> float:
        return self.height - self.margin - self.header - 3.0

    @property
    def content_bottom(self) -> float:
        return self.margin + self.footer + self.title_block + 4.0

    @property
    def viewport(self) -> tuple[float, float]:
        """Size of the close-up on a finding sheet (mm)."""
        return (self.width - 2 * self.margin - self.panel - 6.0, self.content_top - self.content_bottom - 6.0)


def page_layout(paper: str = "a4") -> PageLayout:
    """The landscape layout for ``paper`` (``a4``, ``letter`` or ``a3``)."""
    key = str(paper).lower()
    if key not in PAPERS:
        raise ValueError(f"paper must be one of {', '.join(PAPERS)}, not {paper!r}")
    w, h = PAPERS[key]
    return PageLayout(key, h, w)


# -- page furniture -------------------------------------------------------------------------------
def _page(layout: PageLayout) -> tuple[Figure, Any]:
    fig = Figure(figsize=(layout.width * _MM, layout.height * _MM))
    ax = fig.add_axes((0.0, 0.0, 1.0, 1.0))
    ax.set_xlim(0, layout.width)
    ax.set_ylim(0, layout.height)
    ax.set_axis_off()
    return fig, ax


def _axes_mm(fig: Figure, layout: PageLayout, x: float, y: float, w: float, h: float) -> Any:
    return fig.add_axes((x / layout.width, y / layout.height, w / layout.width, h / layout.height))


def _header(ax: Any, layout: PageLayout, kicker: str, title: str, colour: str = _BAND) -> None:
    m = layout.margin
    top = layout.height - m
    add_polygon_patch(ax, Rectangle((m, top - layout.header), layout.width - 2 * m, layout.header, facecolor=colour,
                                    edgecolor="none"))
    ax.text(m + 5, top - 3.6, kicker, fontsize=7, color="#ffffff", va="center", ha="left", alpha=0.85,
            parse_math=False)
    ax.text(m + 5, top - 8.6, title, fontsize=12.5, color="#ffffff", va="center", ha="left", fontweight="bold",
            parse_math=False)


def _footer(ax: Any, layout: PageLayout, tb: TitleBlock, page: int, pages: int) -> None:
    m = layout.margin
    x0, x1 = m, layout.width - m
    y0 = m + layout.footer
    h = layout.title_block
    add_polygon_patch(ax, Rectangle((x0, y0), x1 - x0, h, facecolor="none", edgecolor=_INK, linewidth=0.8))
    cells = tb.cells()
    top_cells = cells[:6]
    low_cells = cells[6:]
    sheet_w = 28.0
    row_h = h / 2
    # upper row: the project fields, then the sheet number
    widths = np.array([3.0, 1.2, 2.0, 0.9, 1.5, 1.1])
    widths = widths / widths.sum() * (x1 - x0 - sheet_w)
    xs = x0 + np.concatenate([[0], np.cumsum(widths)])
    for (label, value), xa, xb in zip(top_cells, xs[:-1], xs[1:]):
        _cell(ax, xa, y0 + row_h, xb - xa, row_h, label, value)
    _cell(ax, x1 - sheet_w, y0, sheet_w, h, "sheet", f"{page} of {pages}", big=True)
    widths = np.array([2.6, 2.6, 2.0, 0.8])
    widths = widths / widths.sum() * (x1 - x0 - sheet_w)
    xs = x0 + np.concatenate([[0], np.cumsum(widths)])
    for (label, value), xa, xb in zip(low_cells, xs[:-1], xs[1:]):
        _cell(ax, xa, y0, xb - xa, row_h, label, value)
    ax.text(layout.width / 2, m + layout.footer / 2 - 0.5, FOOTER_CAUTION, fontsize=5.6, color=_MUTED,
            ha="center", va="center", parse_math=False)


def _fit(text: str, width_mm: float, size: float) -> str:
    limit = max(int(width_mm / (size * 0.19)), 4)
    text = plain_text(text)
    return text if len(text) <= limit else text[:limit - 1] + "…"


def _cell(ax: Any, x: float, y: float, w: float, h: float, label: str, value: str, big: bool = False) -> None:
    add_polygon_patch(ax, Rectangle((x, y), w, h, facecolor="none", edgecolor=_INK, linewidth=0.4))
    ax.text(x + 1.2, y + h - 1.6, label.upper(), fontsize=4.6, color=_MUTED, va="top", ha="left",
            parse_math=False)
    size = 11.0 if big else 6.6
    ax.text(x + 1.2, y + (h / 2 - 1.4 if big else 1.8), _fit(value or "—", w - 2.4, size), fontsize=size,
            color=_INK, va="bottom", ha="left", fontweight="bold" if big else "normal", parse_math=False)


def _wrapped(ax: Any, x: float, y: float, width_mm: float, text: str, size: float = 7.2, colour: str = _INK,
             bold: bool = False, gap: float = 1.32) -> float:
    """Draw ``text`` wrapped to ``width_mm`` from the top at ``y`` (one text object); return the y below it."""
    chars = max(int(width_mm / (size * 0.178)), 10)
    line_h = size * 0.3528 * gap
    lines = textwrap.wrap(plain_text(text), chars) or [""]
    ax.text(x, y, "\n".join(lines), fontsize=size, color=colour, va="top", ha="left", linespacing=gap,
            fontweight="bold" if bold else "normal", parse_math=False)
    return y - line_h * len(lines)


def _heading(ax: Any, x: float, y: float, text: str, width: float) -> float:
    ax.text(x, y, text.upper(), fontsize=6.2, color=_MUTED, va="top", ha="left", fontweight="bold",
            parse_math=False)
    ax.plot([x, x + width], [y - 3.0, y - 3.0], color=_RULE, linewidth=0.4)
    return y - 4.4


# -- cover ---------------------------------------------------------------------------------------------
def _cover(result: Any, layout: PageLayout, tb: TitleBlock, sheets: Sequence[Sheet], pages: int) -> Figure:
    fig, ax = _page(layout)
    project = tb.project
    title = project.name or f"{result.vehicle.name} in {tb.drawing}"
    kicker = "floorfit · vehicle fit report" + (f" · revision {project.revision}" if project.revision else "")
    _header(ax, layout, kicker, _fit(title, layout.width - 2 * layout.margin - 8, 12.5))
    m = layout.margin
    px = layout.width - m - layout.panel
    y = layout.content_top
    passed = bool(result.passed)
    add_polygon_patch(ax, Rectangle((px, y - 16), layout.panel, 16, facecolor="#e3f3ee" if passed else "#fbe9e3",
                                    edgecolor=_OK if passed else _BAD, linewidth=0.8))
    add_polygon_patch(ax, Rectangle((px, y - 16), 2.2, 16, facecolor=_OK if passed else _BAD, edgecolor="none"))
    ax.text(px + 5, y - 5.2, "PASSES" if passed else "DOES NOT PASS", fontsize=15, fontweight="bold",
            color=_OK if passed else _BAD, va="center", ha="left")
    pairs = unreachable_pairs(result)
    n_st = len(station_names(result))
    line = (f"{n_st} stations; {len(pairs)} station connection{'s' if len(pairs) != 1 else ''} cannot be driven"
            if n_st else "no stations given")
    ax.text(px + 5, y - 11.8, _fit(line, layout.panel - 8, 7.5), fontsize=7.5, color=_INK, va="center",
            ha="left", parse_math=False)
    y -= 20
    counts = {k: 0 for k in FINDING_KINDS}
    for f in result.findings:
        counts[f.kind] = counts.get(f.kind, 0) + 1
    y = _heading(ax, px, y, "findings by kind", layout.panel)
    for k, n in counts.items():
        st = kind_style(k)
        ax.plot([px + 2], [y - 1.4], marker=st.marker, markersize=5.5, color=st.colour, linestyle="none")
        ax.text(px + 5, y, f"{n}  {st.title.lower()}", fontsize=7.4, va="top", ha="left", color=_INK)
        y -= 3.7
    y -= 2
    y = _heading(ax, px, y, "sheets", layout.panel)
    shown = 0
    limit = max(int((y - layout.content_bottom - 22) / 3.4), 3)
    for sh in sheets:
        if shown >= limit:
            ax.text(px, y, f"… and {len(sheets) - shown} more finding sheets", fontsize=6.8, va="top", color=_MUTED)
            y -= 3.4
            break
        f = sh.finding
        st = kind_style(f.kind)
        where = f.label or f"({f.x:.1f}, {f.y:.1f}) m"
        text = f"{sh.number}  {st.title} ({f.cause}) · {where}"
        if f.clear_width_m is not None:
            text += f" · clear {f.clear_width_m:.2f} m"
        ax.text(px, y, _fit(text, layout.panel - 14, 6.8), fontsize=6.8, va="top", color=_INK, parse_math=False)
        ax.text(px + layout.panel, y, f"sheet {sh.number + 1}", fontsize=6.8, va="top", ha="right", color=_MUTED)
        y -= 3.4
        shown += 1
    if not sheets:
        ax.text(px, y, "No findings.", fontsize=7, va="top", color=_INK)
        y -= 3.4
    y -= 2
    y = _heading(ax, px, y, "project", layout.panel)
    for label, value in (("client", project.client), ("project no.", project.number),
                         ("prepared by", project.prepared_by), ("date", project.dated)):
        ax.text(px, y, f"{label}: {value or '—'}", fontsize=6.8, va="top", color=_INK, parse_math=False)
        y -= 3.3
    _key_plan(fig, result, layout)
    return fig


def _key_plan(fig: Figure, result: Any, layout: PageLayout) -> None:
    m = layout.margin
    w = layout.width - 2 * m - layout.panel - 6
    h = layout.content_top - layout.content_bottom - 4
    ax = _axes_mm(fig, layout, m, layout.content_bottom + 4, w, h)
    box = _view_box(result)
    # keep the plan's aspect inside the frame
    bw, bh = box[2] - box[0], box[3] - box[1]
    if bw / bh > w / h:
        extra = bw * h / w - bh
        box = (box[0], box[1] - extra / 2, box[2], box[3] + extra / 2)
    else:
        extra = bh * w / h - bw
        box = (box[0] - extra / 2, box[1], box[2] + extra / 2, box[3])
    ax.set_xlim(box[0], box[2])
    ax.set_ylim(box[1], box[3])
    ax.set_xticks([])
    ax.set_yticks([])
    for side in ax.spines.values():
        side.set_color(_RULE)
        side.set_linewidth(0.5)
    _draw_obstacles(ax, result.plan)
    _draw_finding_geometry(ax, result)
    _draw_stations(ax, result.stations, 0.04 * (box[2] - box[0]))
    _draw_finding_markers(ax, result)
    ax.text(0.01, 0.99, "KEY PLAN · findings numbered as their sheets · not to scale", transform=ax.transAxes,
            fontsize=6, color=_MUTED, va="top", ha="left")
    span = box[2] - box[0]
    length = next((v for v in (100, 50, 20, 10, 5, 2, 1) if v <= span / 5), 1)
    bx, by = box[0] + 0.02 * span, box[1] + 0.03 * (box[3] - box[1])
    ax.plot([bx, bx + length], [by, by], color=_INK, linewidth=1.6, solid_capstyle="butt")
    ax.text(bx + length / 2, by + 0.012 * (box[3] - box[1]), f"{length:g} m", fontsize=6, ha="center", va="bottom")


# -- finding sheets ------------------------------------------------------------------------------------
def _finding_sheet(result: Any, layout: PageLayout, tb: TitleBlock, sheet: Sheet, obstacles: Any) -> Figure:
    fig, ax = _page(layout)
    f = sheet.finding
    st = kind_style(f.kind)
    where = f.label or f"at ({f.x:.2f}, {f.y:.2f}) m"
    _header(ax, layout, f"finding sheet · {sheet.number} of {len(result.findings)} · {f.id}",
            _fit(f"{sheet.number}  {st.title} ({f.cause}) · {where}", layout.width - 2 * layout.margin - 8, 12.5),
            colour=_BAND)
    add_polygon_patch(ax, Rectangle((layout.margin, layout.height - layout.margin - layout.header), 3.0, layout.header,
                                    facecolor=st.colour, edgecolor="none"))
    m = layout.margin
    vw, vh = layout.viewport
    vy = layout.content_top - vh
    cax = _axes_mm(fig, layout, m, vy, vw, vh)
    draw_closeup(cax, result, sheet, (vw, vh), obstacles)
    scale_note = (f"Close-up at {sheet.scale_text} on {layout.paper.upper()} landscape: 1 m in the drawing is "
                  f"{1000 / sheet.scale:g} mm on this sheet when printed at 100 %."
                  + (" Cropped round the finding (its whole extent does not fit at 1:200)." if sheet.cropped else ""))
    ax.text(m, vy - 2.0, scale_note, fontsize=6.2, color=_MUTED, va="top", ha="left", parse_math=False)
    _panel(ax, result, layout, sheet)
    return fig


def _panel(ax: Any, result: Any, layout: PageLayout, sheet: Sheet) -> None:
    f = sheet.finding
    px = layout.width - layout.margin - layout.panel
    w = layout.panel
    y = layout.content_top
    y = _heading(ax, px, y, "finding", w)
    ax.text(px, y, f"Finding {sheet.number} ({f.id}) · {kind_style(f.kind).title.lower()} · cause {f.cause}",
            fontsize=7.6, va="top", fontweight="bold", color=_INK, parse_math=False)
    y -= 3.8
    y = _wrapped(ax, px, y, w, f"at ({f.x:.2f}, {f.y:.2f}) m in the drawing frame"
                 + (f", {f.label}" if f.label else ""), size=6.8, colour=_MUTED)
    y = _wrapped(ax, px, y - 0.6, w, f.summary, size=6.8)
    y -= 1.4
    if sheet.numbers:
        y = _heading(ax, px, y, "measured", w)
        labels = "\n".join(label for label, _ in sheet.numbers)
        values = "\n".join(value for _, value in sheet.numbers)
        ax.text(px, y, labels, fontsize=7.2, va="top", color=_MUTED, linespacing=1.32, parse_math=False)
        ax.text(px + 34, y, values, fontsize=7.2, va="top", color=_INK, fontweight="bold", linespacing=1.32,
                parse_math=False)
        y -= 7.2 * 0.3528 * 1.32 * len(sheet.numbers) + 1.0
    y = _heading(ax, px, y, "remedy", w)
    y = _wrapped(ax, px, y, w, sheet.remedy.text, size=7.0)
    circles = sheet.remedy.circles
    if len(circles) > 1:
        listed = ", ".join(f"({x:.2f}, {yy:.2f})" for x, yy, _ in circles[:8])
        more = f" and {len(circles) - 8} more" if len(circles) > 8 else ""
        y = _wrapped(ax, px, y, w, f"Circle centres (m): {listed}{more}.", size=6.6, colour=_MUTED)
    y -= 1.4
    y = _heading(ax, px, y, "bounded by", w)
    if sheet.bounds:
        for b in sheet.bounds[:4]:
            y = _wrapped(ax, px, y, w, b.text(), size=6.6)
    else:
        y = _wrapped(ax, px, y, w, "No bounding entity found near the place.", size=6.6, colour=_MUTED)
    y -= 1.4
    y = _heading(ax, px, y, "cuts off", w)
    cut = ", ".join(f.cuts_off) if f.cuts_off else "no station"
    pairs = sheet.pairs
    text = f"Stations: {cut}."
    if pairs:
        shown = "; ".join(f"{a} ↔ {b}" for a, b in pairs[:8])
        text += f" Station pairs not connected because of it: {shown}" + (
            f" and {len(pairs) - 8} more." if len(pairs) > 8 else ".")
    y = _wrapped(ax, px, y, w, text, size=6.8)
    if sheet.pose is not None:
        y -= 1.4
        y = _heading(ax, px, y, "vehicle shown", w)
        p = sheet.pose
        _wrapped(ax, px, y, w, f"{result.vehicle.name}: {p.note}; reference point ({p.x:.2f}, {p.y:.2f}) m, "
                 f"heading {p.heading_deg:.1f}°. Solid: outline; dotted: outline with its "
                 f"{float(getattr(result.vehicle, 'margin_m', 0.0)):.2f} m margin.", size=6.4, colour=_MUTED)


# -- appendix -------------------------------------------------------------------------------------------
def _appendix_blocks(result: Any) -> list[tuple[str, str]]:
    """(style, text) lines of the appendix text: 'h' headings, 'p' paragraphs, 'kv' settings."""
    out: list[tuple[str, str]] = [("h", "Tolerance"), ("p", tolerance_statement(result.settings or {}))]
    out.append(("h", "Settings of this check"))
    for k, v in sorted((result.settings or {}).items(), key=lambda kv: str(kv[0])):
        if isinstance(v, float):
            v = f"{v:.6g}"
        out.append(("kv", f"{k}\t{plain_text(v)}"))
    v = result.vehicle
    out.append(("h", "Vehicle"))
    for k, val in (("name", v.name), ("motion", getattr(v, "mode", "")), ("length", f"{v.length_m:.3f} m"),
                   ("width", f"{v.width_m:.3f} m"), ("margin", f"{v.margin_m:.3f} m"),
                   ("file", getattr(v, "source", None) or "—")):
        out.append(("kv", f"{k}\t{plain_text(val)}"))
    if result.notes:
        out.append(("h", "Notes from the check"))
        out += [("p", "• " + n) for n in result.notes]
    out.append(("h", "Cautions"))
    out += [("p", "• " + c) for c in CAUTIONS]
    out.append(("h", "Common clearance references (settings to choose from, not law)"))
    out += [("p", f"• {r.topic}: {r.value} ({r.source})") for r in CLEARANCE_REFERENCES]
    return out


def _appendix_lines(result: Any, layout: PageLayout) -> list[tuple[str, str]]:
    width = layout.width - 2 * layout.margin
    chars = max(int(width / (7.0 * 0.178)), 20)
    lines: list[tuple[str, str]] = []
    for style, text in _appendix_blocks(result):
        if style == "p":
            lines += [("p", ln) for ln in textwrap.wrap(plain_text(text), chars)]
        else:
            lines.append((style, text))
    return lines


def _has_turn_map(result: Any) -> bool:
    hc = (result.turnability or {}).get("heading_count")
    return isinstance(hc, dict) and "counts" in hc and np.asarray(hc["counts"]).ndim == 2


def appendix_page_count(result: Any, paper: str = "a4") -> int:
    """Pages after the finding sheets: the turn-round map (when the check made one) and the text."""
    layout = page_layout(paper)
    lines = _appendix_lines(result, layout)
    per = _lines_per_page(layout)
    return int(_has_turn_map(result)) + max(1, math.ceil(len(lines) / per))


def _lines_per_page(layout: PageLayout) -> int:
    return max(int((layout.content_top - layout.content_bottom) / _LINE) - 1, 10)


def _appendix_text_pages(result: Any, layout: PageLayout, tb: TitleBlock, first: int, pages: int) -> list[Figure]:
    lines = _appendix_lines(result, layout)
    per = _lines_per_page(layout)
    figs = []
    chunks = [lines[i:i + per] for i in range(0, max(len(lines), 1), per)] or [[]]
    for n, chunk in enumerate(chunks):
        fig, ax = _page(layout)
        _header(ax, layout, "appendix", "Settings, tolerances and cautions" + (" (continued)" if n else ""))
        y = layout.content_top
        x = layout.margin
        i = 0
        while i < len(chunk):           # runs of one style become one text object
            style = chunk[i][0]
            j = i
            while j < len(chunk) and chunk[j][0] == style and style != "h":
                j += 1
            run = [t for _, t in chunk[i:max(j, i + 1)]]
            if style == "h":
                ax.text(x, y - 0.8, run[0], fontsize=8, fontweight="bold", va="top", color=_INK, parse_math=False)
            elif style == "kv":
                pairs = [t.partition("\t") for t in run]
                ax.text(x + 2, y, "\n".join(k for k, _, _ in pairs), fontsize=6.8, va="top", color=_MUTED,
                        linespacing=_LINE / (6.8 * 0.3528), parse_math=False)
                ax.text(x + 52, y, "\n".join(_fit(v, layout.width - 2 * layout.margin - 54, 6.8) for _, _, v in pairs),
                        fontsize=6.8, va="top", color=_INK, linespacing=_LINE / (6.8 * 0.3528), parse_math=False)
            else:
                ax.text(x + 2, y, "\n".join(run), fontsize=7.0, va="top", color=_INK,
                        linespacing=_LINE / (7.0 * 0.3528), parse_math=False)
            y -= _LINE * len(run)
            i = max(j, i + 1)
        _footer(ax, layout, tb, first + n, pages)
        figs.append(fig)
    return figs


def _turn_map_page(result: Any, layout: PageLayout, tb: TitleBlock, page: int, pages: int) -> Figure:
    fig, ax = _page(layout)
    _header(ax, layout, "appendix", "Where the vehicle can turn")
    m = layout.margin
    w = layout.width - 2 * m - 70
    h = layout.content_top - layout.content_bottom - 2
    mx = _axes_mm(fig, layout, m, layout.content_bottom + 2, w, h)
    hc = result.turnability["heading_count"]
    counts = np.asarray(hc["counts"])
    ox, oy = result.plan.origin
    x0, y0, cell = float(hc["x0"]) + ox, float(hc["y0"]) + oy, float(hc["cell_m"])
    ny, nx = counts.shape
    n = int(hc.get("n_headings", int(counts.max()) or 1))
    # classes as in the HTML map: cannot be here / fits / can turn round / can spin in place
    klass = np.zeros(counts.shape, dtype=np.uint8)
    klass[counts > 0] = 1
    from floorfit.cspace.raster import fill_polygons
    from floorfit.report.geometry import parts

    turns = (result.turnability or {}).get("turns_around")
    if turns is not None and not getattr(turns, "is_empty", True):
        polys = [p for p in parts(turns) if p.geom_type == "Polygon"]
        if polys:
            klass[fill_polygons(polys, float(hc["x0"]), float(hc["y0"]), cell, nx, ny) & (counts > 0)] = 2
    classes = shown_turn_classes(result)
    if any(k == "rotates" for k, _t, _c in classes):       # only a base that turns on the spot spins
        klass[(counts >= n) & (counts > 0)] = 3
    colours = np.array([mcolors.to_rgb(c) for _k, _t, c in TURN_CLASSES])
    rgb = colours[klass]
    box = _view_box(result)
    bw, bh = box[2] - box[0], box[3] - box[1]
    if bw / bh > w / h:
        box = (box[0], box[1] - (bw * h / w - bh) / 2, box[2], box[3] + (bw * h / w - bh) / 2)
    else:
        box = (box[0] - (bh * w / h - bw) / 2, box[1], box[2] + (bh * w / h - bw) / 2, box[3])
    mx.imshow(rgb, origin="lower", extent=(x0, x0 + nx * cell, y0, y0 + ny * cell), interpolation="nearest",
              zorder=1)
    _draw_obstacles(mx, result.plan, faint=True)
    _draw_stations(mx, result.stations, 0.04 * (box[2] - box[0]))
    mx.set_xlim(box[0], box[2])
    mx.set_ylim(box[1], box[3])
    mx.set_xticks([])
    mx.set_yticks([])
    lx = layout.width - m - 64
    y = layout.content_top
    y = _heading(ax, lx, y, "legend", 64)
    for _k, text, colour in classes:
        add_polygon_patch(ax, Rectangle((lx, y - 3.0), 4, 3, facecolor=colour, edgecolor=_RULE, linewidth=0.4))
        ax.text(lx + 6, y - 0.2, text, fontsize=7, va="top", color=_INK)
        y -= 4.6
    _wrapped(ax, lx, y - 2, 64, f"Map cells of {cell * 100:.0f} cm (the only raster image in this report). "
             "Where the vehicle's reference point can be, and how freely it can change heading there.",
             size=6.6, colour=_MUTED)
    _footer(ax, layout, tb, page, pages)
    return fig


# -- the document -----------------------------------------------------------------------------------------
def _metadata(result: Any, tb: TitleBlock) -> dict[str, Any]:
    title = tb.project.name or f"{result.vehicle.name} in {tb.drawing}"
    meta: dict[str, Any] = {
        "Title": f"floorfit report: {plain_text(title)}",
        "Subject": "vehicle fit check of a floor plan",
        "Creator": f"floorfit {__version__}",
        "Producer": f"floorfit {__version__} (matplotlib {matplotlib.__version__} PDF backend)",
        "CreationDate": source_datetime(),
        "Keywords": "floorfit-report",
    }
    if tb.project.prepared_by:
        meta["Author"] = plain_text(tb.project.prepared_by)
    return meta


def render_pdf(result: Any, *, project: ProjectInfo | None = None, paper: str = "a4",
               sheets: Sequence[Sheet] | None = None, obstacles: Any = None) -> bytes:
    """The whole PDF as bytes. ``sheets`` (from :func:`build_sheets` with this paper's viewport)
    may be passed in when they were built already."""
    layout = page_layout(paper)
    tb = title_block(result, project)
    obstacles = obstacles or sheet_obstacles(result)
    if sheets is None:
        sheets = build_sheets(result, viewport_mm=layout.viewport)
    n_app = appendix_page_count(result, paper)
    pages = 1 + len(sheets) + n_app
    buf = io.BytesIO()
    with rc_context({"pdf.fonttype": 3, "pdf.compression": 6, "path.simplify": False,
                     "font.family": "DejaVu Sans", "hatch.linewidth": 0.4}):
        with PdfPages(buf, metadata=_metadata(result, tb)) as pdf:
            fig = _cover(result, layout, tb, sheets, pages)
            _footer(fig.axes[0], layout, tb, 1, pages)
            pdf.savefig(fig)
            for i, sheet in enumerate(sheets):
                fig = _finding_sheet(result, layout, tb, sheet, obstacles)
                _footer(fig.axes[0], layout, tb, 2 + i, pages)
                pdf.savefig(fig)
            page = 2 + len(sheets)
            if _has_turn_map(result):
                pdf.savefig(_turn_map_page(result, layout, tb, page, pages))
                page += 1
            for fig in _appendix_text_pages(result, layout, tb, page, pages):
                pdf.savefig(fig)
    return buf.getvalue()
