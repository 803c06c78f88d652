"""``report.pdf`` of a layout comparison: a cover, then one finding sheet per changed finding.

Pages (landscape, the paper of :func:`floorfit.report.pdf.page_layout`): a cover with the
headline (WORSE, WORSE IN PLACES, BETTER, UNCHANGED), the counts of changes, the station pairs
lost and gained and the list of sheets; then one sheet for every finding that appeared or got
worse (drawn on AFTER) and every finding that disappeared (drawn on BEFORE, as it was), in the
comparison's order. A sheet is the finding sheet of :mod:`floorfit.report.pdf` (close-up at a
standard scale, the vehicle at the deciding pose, dimension lines, bounding entities, remedy)
with the finding's number in its own layout's report, plus what changed. Every page carries the
same title block as a check's report (the sheet's own layout's drawing file and hash; the cover
names AFTER) and the cautions line. Findings that got better or stayed as they were get no sheet.
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from matplotlib import rc_context
from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.figure import Figure
from matplotlib.patches import Rectangle

from floorfit.report.bounding_entities import sheet_obstacles
from floorfit.report.kinds import kind_style
from floorfit.report.pdf import (
    _BAD,
    _INK,
    _MUTED,
    _OK,
    PageLayout,
    _finding_sheet,
    _fit,
    _footer,
    _header,
    _heading,
    _metadata,
    _page,
    _wrapped,
    page_layout,
)
from floorfit.report.project import ProjectInfo, TitleBlock, title_block
from floorfit.report.sheets import Sheet, build_sheets

__all__ = ["SHEET_CHANGES", "changed_findings", "render_comparison_pdf"]

#: The changes that get a sheet, and the layout each is drawn on.
SHEET_CHANGES = {"appeared": "after", "worse": "after", "disappeared": "before"}
_CHANGE_WORDS = {"appeared": "appeared in AFTER (not in BEFORE)", "worse": "worse in AFTER than in BEFORE",
                 "disappeared": "gone in AFTER (shown as it was in BEFORE)"}


def changed_findings(comparison: Any) -> list[Any]:
    """The changes that get a sheet (appeared, worse, disappeared), in the comparison's order."""
    return [c for c in comparison.changes if c.change in SHEET_CHANGES]


def _finding(change: Any) -> Any:
    return change.before if SHEET_CHANGES[change.change] == "before" else change.after


def _sheets(comparison: Any, changes: Sequence[Any], layout: PageLayout) -> dict[int, tuple[str, Sheet]]:
    """Sheet of each changed finding, keyed by the finding's id(): (side, sheet)."""
    out: dict[int, tuple[str, Sheet]] = {}
    for side in ("before", "after"):
        result = getattr(comparison, side)
        mine = [_finding(c) for c in changes if SHEET_CHANGES[c.change] == side]
        if mine:
            for sheet in build_sheets(result, viewport_mm=layout.viewport, only=mine):
                out[id(sheet.finding)] = (side, sheet)
    return out


def _name(path: Any) -> str:
    return Path(str(path)).name


def _change_lines(change: Any, comparison: Any) -> str:
    """What changed, in words (the sheet's extra line)."""
    text = f"Change: {_CHANGE_WORDS[change.change]}"
    if change.what:
        text += ": " + "; ".join(change.what)
    if change.before is not None and change.after is not None and change.distance_m:
        text += f" (matched {change.distance_m:.2f} m apart)"
    return text + "."


def _change_sheet(comparison: Any, change: Any, side: str, sheet: Sheet, layout: PageLayout, tb: TitleBlock,
                  obstacles: Any) -> Figure:
    result = getattr(comparison, side)
    fig = _finding_sheet(result, layout, tb, sheet, obstacles)
    ax = fig.axes[0]
    m = layout.margin
    top = layout.height - m
    colour = _OK if change.change == "disappeared" else _BAD
    ax.text(layout.width - m - 4, top - 3.6, f"{change.change.upper()} · {side.upper()} layout "
            f"({_name(result.plan.source)})", fontsize=7.5, color="#ffffff", va="center", ha="right",
            fontweight="bold", parse_math=False)
    ax.add_patch(Rectangle((layout.width - m - 3.0, top - layout.header), 3.0, layout.header, facecolor=colour,
                           edgecolor="none"))
    vy = layout.content_top - layout.viewport[1]
    ax.text(m, vy - 5.4, _fit(_change_lines(change, comparison), layout.viewport[0] + 40, 6.6), fontsize=6.6,
            color=colour, va="top", ha="left", fontweight="bold", parse_math=False)
    return fig


def _cover(comparison: Any, layout: PageLayout, tb: TitleBlock, listed: list[tuple[Any, str, Sheet]],
           pages: int) -> Figure:
    fig, ax = _page(layout)
    before, after = comparison.before, comparison.after
    project = tb.project
    title = project.name or (f"{after.vehicle.name}: {_name(before.plan.source)} → {_name(after.plan.source)}")
    kicker = "floorfit · layout comparison" + (f" · revision {project.revision}" if project.revision else "")
    _header(ax, layout, kicker, _fit(title, layout.width - 2 * layout.margin - 8, 12.5))
    m = layout.margin
    w = layout.width - 2 * m
    y = layout.content_top
    head = comparison.headline
    good = head in ("BETTER", "UNCHANGED")
    ax.add_patch(Rectangle((m, y - 14), w, 14, facecolor="#e3f3ee" if good else "#fbe9e3",
                           edgecolor=_OK if good else _BAD, linewidth=0.8))
    ax.text(m + 5, y - 4.8, head, fontsize=15, fontweight="bold", color=_OK if good else _BAD, va="center")
    c = comparison.counts()
    line = (f"BEFORE {_name(before.plan.source)} → AFTER {_name(after.plan.source)} for {after.vehicle.name}: "
            f"{len(comparison.pairs_lost)} station pairs lost, {len(comparison.pairs_gained)} gained; findings "
            f"{c['appeared']} appeared, {c['worse']} worse, {c['disappeared']} disappeared, {c['better']} better, "
            f"{c['unchanged']} unchanged")
    ax.text(m + 5, y - 10.6, _fit(line, w - 10, 7.4), fontsize=7.4, color=_INK, va="center", parse_math=False)
    y -= 19
    pairs = [f"lost: {a} ↔ {b}" for a, b in comparison.pairs_lost]
    pairs += [f"gained: {a} ↔ {b}" for a, b in comparison.pairs_gained]
    if pairs:
        y = _heading(ax, m, y, "station pairs", w)
        y = _wrapped(ax, m, y, w, "; ".join(pairs), size=7.0) - 1.6
    y = _heading(ax, m, y, "sheets", w)
    limit = max(int((y - layout.content_bottom) / 3.4) - 1, 3)
    for i, (change, side, sheet) in enumerate(listed):
        if i >= limit:
            ax.text(m, y, f"… and {len(listed) - i} more sheets", fontsize=6.8, va="top", color=_MUTED)
            break
        f = sheet.finding
        where = f.label or f"({f.x:.1f}, {f.y:.1f}) m"
        text = (f"{change.change} · {side.upper()} finding {sheet.number} ({f.id}) · "
                f"{kind_style(f.kind).title.lower()} ({f.cause}) · {where}")
        if change.what:
            text += " · " + "; ".join(change.what)
        ax.text(m, y, _fit(text, w - 20, 6.8), fontsize=6.8, va="top", color=_INK, parse_math=False)
        ax.text(m + w, y, f"sheet {i + 2}", fontsize=6.8, va="top", ha="right", color=_MUTED)
        y -= 3.4
    if not listed:
        ax.text(m, y, "No finding appeared, got worse or disappeared.", fontsize=7, va="top", color=_INK)
    return fig


def render_comparison_pdf(comparison: Any, *, project: ProjectInfo | None = None, paper: str = "a4") -> bytes:
    """The comparison's PDF as bytes (reproducible: no clock, fixed metadata)."""
    layout = page_layout(paper)
    changes = changed_findings(comparison)
    sheets = _sheets(comparison, changes, layout)
    listed = [(c, *sheets[id(_finding(c))]) for c in changes if id(_finding(c)) in sheets]
    pages = 1 + len(listed)
    blocks = {side: title_block(getattr(comparison, side), project) for side in ("before", "after")}
    obstacles = {side: sheet_obstacles(getattr(comparison, side)) for side in ("before", "after")
                 if any(s == side for _c, s, _sh in listed)}
    meta = _metadata(comparison.after, blocks["after"])
    meta["Title"] = (f"floorfit comparison: {_name(comparison.before.plan.source)} → "
                     f"{_name(comparison.after.plan.source)}")
    meta["Subject"] = "vehicle fit comparison of two floor plans"
    buf = io.BytesIO()
    with rc_context({"pdf.fonttype": 3, "pdf.compression": 6, "path.simplify": False,
                     "font.family": "DejaVu Sans", "hatch.linewidth": 0.4}):
        with PdfPages(buf, metadata=meta) as pdf:
            fig = _cover(comparison, layout, blocks["after"], listed, pages)
            _footer(fig.axes[0], layout, blocks["after"], 1, pages)
            pdf.savefig(fig)
            for i, (change, side, sheet) in enumerate(listed):
                fig = _change_sheet(comparison, change, side, sheet, layout, blocks[side], obstacles[side])
                _footer(fig.axes[0], layout, blocks[side], 2 + i, pages)
                pdf.savefig(fig)
    return buf.getvalue()

