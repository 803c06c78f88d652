"""The finding sheets in ``report.html``: the same close-ups as the PDF, one finding per printed page.

Each close-up is an SVG exactly the size of the PDF's close-up (no tight cropping), shown at that
size in print, so a printed page keeps the sheet's scale when printed at 100 %.
"""

from __future__ import annotations

import html
import io
from collections.abc import Sequence
from typing import Any

from matplotlib import rc_context

from floorfit.report.closeup import closeup_figure
from floorfit.report.figures import FigureImage, choose_format
from floorfit.report.kinds import kind_style
from floorfit.report.sheets import Sheet

__all__ = ["closeup_images", "sheets_section", "SHEETS_CSS"]

#: Style rules for the sheets (added to the page's style sheet).
SHEETS_CSS = """
section.sheet { border-top: 1px solid var(--rule); margin-top: 1.2rem; padding-top: .6rem; }
section.sheet h3 { margin-top: .2rem; }
section.sheet .cols { display: grid; grid-template-columns: 3fr 2fr; gap: 1.2rem; align-items: start; }
section.sheet figure img { width: 100%; }
section.sheet dl { margin: 0; font-size: .88rem; }
section.sheet dt { font-weight: 700; margin-top: .5rem; color: var(--muted); text-transform: uppercase;
  font-size: .72rem; letter-spacing: .06em; }
section.sheet dd { margin: .1rem 0 0; }
section.sheet table.kv th { width: 45%; }
@media (max-width: 760px) { section.sheet .cols { grid-template-columns: 1fr; } }
@media print {
  section.sheet { break-before: page; break-inside: avoid; border-top: none; }
  section.sheet .cols { display: block; }
  section.sheet figure img { width: var(--sheet-w); max-width: none; max-height: none; }
}
"""


def _e(value: Any) -> str:
    return html.escape("" if value is None else str(value), quote=True)


def _svg(fig: Any) -> bytes:
    buf = io.BytesIO()
    with rc_context({"svg.hashsalt": "floorfit", "svg.fonttype": "path"}):
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None})
    return buf.getvalue()


def _png(fig: Any) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=150, metadata={"Software": None})
    return buf.getvalue()


def closeup_images(result: Any, sheets: Sequence[Sheet] | None, viewport_mm: tuple[float, float],
                   obstacles: Any = None) -> list[FigureImage]:
    """One figure per sheet (key ``fig-sheet-N``), SVG unless the plan is very large (PNG)."""
    if not sheets:
        return []
    fmt = choose_format(result)
    out = []
    for sheet in sheets:
        fig = closeup_figure(result, sheet, viewport_mm, obstacles)
        data = _svg(fig) if fmt == "svg" else _png(fig)
        f = sheet.finding
        out.append(FigureImage(
            f"fig-sheet-{sheet.number}", f"Finding {sheet.number}", "image/svg+xml" if fmt == "svg" else "image/png",
            data, f"Close-up of finding {sheet.number} at {sheet.scale_text}",
            f"Finding {sheet.number} ({f.id}) at {sheet.scale_text}: {viewport_mm[0]:.0f} × {viewport_mm[1]:.0f} mm "
            f"when printed at 100 %, so 1 m is {1000 / sheet.scale:g} mm on paper."))
    return out


def _sheet_html(result: Any, sheet: Sheet, img: FigureImage | None, figure_html: Any) -> str:
    f = sheet.finding
    st = kind_style(f.kind)
    where = f.label or f"({f.x:.2f}, {f.y:.2f}) m"
    rows = "".join(f"<tr><th>{_e(k)}</th><td>{_e(v)}</td></tr>" for k, v in sheet.numbers)
    bounds = "".join(f"<li>{_e(b.text())}</li>" for b in sheet.bounds) or "<li>none found near the place</li>"
    cut = ", ".join(f.cuts_off) if f.cuts_off else "no station"
    pairs = "; ".join(f"{a} ↔ {b}" for a, b in sheet.pairs)
    pose = ""
    if sheet.pose is not None:
        p = sheet.pose
        pose = (f"<dt>Vehicle shown</dt><dd>{_e(p.note)}; reference point ({p.x:.2f}, {p.y:.2f}) m, heading "
                f"{p.heading_deg:.1f}°.</dd>")
    circles = ""
    if len(sheet.remedy.circles) > 1:
        circles = "<br><span class=\"muted\">Circle centres (m): " + _e(", ".join(
            f"({x:.2f}, {y:.2f})" for x, y, _ in sheet.remedy.circles)) + "</span>"
    fig = figure_html(img) if img is not None else ""
    return (
        f'<section class="sheet" id="sheet-{sheet.number}">'
        f'<h3><span class="badge" style="background:{st.colour}">{sheet.number}</span> '
        f"{_e(st.title)} ({_e(f.cause)}) · {_e(where)} <span class=\"muted\">{_e(f.id)}</span></h3>"
        f'<div class="cols"><div>{fig}</div><div><dl>'
        f"<dt>Finding</dt><dd>{_e(f.summary)}</dd>"
        + (f'<dt>Measured</dt><dd><table class="kv"><tbody>{rows}</tbody></table></dd>' if rows else "")
        + f"<dt>Remedy</dt><dd>{_e(sheet.remedy.text)}{circles}</dd>"
        f"<dt>Bounded by</dt><dd><ul>{bounds}</ul></dd>"
        f"<dt>Cuts off</dt><dd>Stations: {_e(cut)}."
        + (f" Pairs not connected because of it: {_e(pairs)}." if pairs else "") + "</dd>"
        + pose + f"<dt>Scale</dt><dd>{_e(sheet.scale_text)}"
        + (" (cropped round the finding)" if sheet.cropped else "") + "</dd></dl></div></div></section>")


def sheets_section(result: Any, sheets: Sequence[Sheet] | None, by_key: dict[str, FigureImage],
                   figure_html: Any, viewport_mm: tuple[float, float] | None = None) -> tuple[str, str, str] | None:
    """The "Finding sheets" section (anchor, title, inner HTML), or None without findings."""
    if not sheets:
        return None
    width = f"{viewport_mm[0]:.1f}mm" if viewport_mm else "100%"
    intro = (f'<p style="--sheet-w:{width}">One sheet per finding, numbered as in the findings table: a close-up '
             "at a standard scale with the vehicle at the pose that decides the finding, the widths measured, "
             "the remedy computed from the geometry and the drawing entities to change. Printed, each sheet "
             "starts a new page; the close-ups print at their stated scale at 100 %.</p>")
    body = "".join(_sheet_html(result, s, by_key.get(f"fig-sheet-{s.number}"), figure_html) for s in sheets)
    return "sheets", "Finding sheets", f'<div style="--sheet-w:{width}">{intro}{body}</div>'
