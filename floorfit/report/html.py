"""``report.html``: one self-contained page a facility planner can read, print and share.

No network access is needed to view it: the style sheet is inline, figures are embedded
as ``data:`` URIs (SVG or PNG from :mod:`floorfit.report.figures`), no scripts, no web
fonts. Every text that comes from the user's files (labels, layer, file, station and
vehicle names, notes) passes through :func:`html.escape`.
"""

from __future__ import annotations

import base64
import html
import os
from collections.abc import Iterable, Sequence
from typing import Any

from floorfit import __version__
from floorfit.report.cautions import CAUTIONS, CLEARANCE_REFERENCES, tolerance_statement
from floorfit.report.figures import FigureImage, shown_turn_classes
from floorfit.report.kinds import KIND_STYLES, kind_style, numbered_findings
from floorfit.report.tables import report_kinds, station_names, unreachable_pairs
from floorfit.report.traffic_html import traffic_section

__all__ = ["render_html", "KIND_SYMBOLS"]

#: Text symbol of each marker shape, used in the table so it matches the figure.
KIND_SYMBOLS = {"o": "●", "s": "■", "D": "◆", "^": "▲", "v": "▼", "P": "✚"}


def _e(value: Any) -> str:
    return html.escape("" if value is None else str(value), quote=True)


def _name(path: Any) -> str:
    text = "" if path is None else str(path)
    return os.path.basename(text.rstrip("/\\")) or text


def _fmt(value: Any) -> str:
    """A setting value as short text."""
    if isinstance(value, bool) or value is None:
        return {True: "yes", False: "no", None: "—"}[value]
    if isinstance(value, float):
        return f"{value:.6g}"
    if isinstance(value, dict):
        return "; ".join(f"{k}: {_fmt(v)}" for k, v in sorted(value.items(), key=lambda kv: str(kv[0])))
    if hasattr(value, "tolist") and not isinstance(value, str):   # numpy scalars and arrays
        return _fmt(value.tolist())
    if isinstance(value, (list, tuple, set, frozenset)):
        items = sorted(value, key=str) if isinstance(value, (set, frozenset)) else list(value)
        return ", ".join(_fmt(v) for v in items)
    return str(value)


def _m(value: Any) -> str:
    """A length in metres with three decimals; text other than a number is shown as given."""
    if value is None:
        return "—"
    try:
        return f"{float(value):.3f} m"
    except (TypeError, ValueError):
        return str(value)


CSS = """
:root { --ink:#1b1f24; --muted:#5b6470; --rule:#d9dde2; --band:#1e3142; --paper:#ffffff;
  --soft:#f4f6f8; --ok:#13876a; --ok-bg:#e3f3ee; --bad:#c8441c; --bad-bg:#fbe9e3; }
* { box-sizing: border-box; }
html { font-size: 15px; }
body { margin: 0; color: var(--ink); background: #eef1f4;
  font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif;
  line-height: 1.45; }
.page { max-width: 1100px; margin: 0 auto; background: var(--paper); padding: 0 0 2rem; }
header.top { background: var(--band); color: #fff; padding: 1.4rem 2rem 1.2rem; }
header.top .kicker { text-transform: uppercase; letter-spacing: .12em; font-size: .75rem; opacity: .75; }
header.top h1 { margin: .25rem 0 .4rem; font-size: 1.7rem; line-height: 1.2; }
header.top .meta { font-size: .85rem; opacity: .9; overflow-wrap: anywhere; }
header.top code { background: rgba(255,255,255,.14); color: #fff; }
main { padding: 0 2rem; }
section { margin-top: 1.8rem; }
h2 { font-size: 1.25rem; border-bottom: 2px solid var(--band); padding-bottom: .2rem; margin: 0 0 .8rem; }
h3 { font-size: 1.02rem; margin: 1.1rem 0 .4rem; }
p { margin: .4rem 0 .7rem; }
.muted { color: var(--muted); }
.verdict { margin-top: 1.4rem; border: 1px solid var(--rule); border-left: 10px solid var(--bad);
  background: var(--bad-bg); padding: 1rem 1.3rem; border-radius: 4px; }
.verdict.pass { border-left-color: var(--ok); background: var(--ok-bg); }
.verdict .word { font-size: 1.6rem; font-weight: 800; letter-spacing: .02em; }
.verdict.fail .word { color: var(--bad); }
.verdict.pass .word { color: var(--ok); }
.verdict ul { margin: .3rem 0 0; padding-left: 1.2rem; }
.chips { display: flex; flex-wrap: wrap; gap: .5rem; margin: .6rem 0; }
.chip { background: #fff; border: 1px solid var(--rule); border-radius: 999px;
  padding: .15rem .7rem; font-size: .9rem; }
.chip .n { font-weight: 700; }
nav.toc { margin-top: 1rem; font-size: .9rem; display: flex; flex-wrap: wrap; gap: .2rem 1.1rem; }
nav.toc a { color: var(--band); white-space: nowrap; }
table { border-collapse: collapse; width: 100%; font-size: .88rem; }
th, td { border-bottom: 1px solid var(--rule); padding: .3rem .45rem; text-align: left; vertical-align: top; }
th { background: var(--soft); font-weight: 600; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
table.kv th { width: 30%; background: none; font-weight: 500; color: var(--muted); }
.two { display: grid; grid-template-columns: 1fr 1fr; gap: 1.5rem; align-items: start; }
figure { margin: .6rem 0 1rem; }
figure img { display: block; max-width: 100%; height: auto; margin: 0 auto; border: 1px solid var(--rule); }
figure.wide img { width: 100%; }
figcaption { font-size: .85rem; color: var(--muted); margin-top: .35rem; }
.badge { display: inline-block; min-width: 1.9em; padding: .05rem .35rem; border-radius: 4px; color: #fff;
  font-weight: 700; text-align: center; font-size: .85rem; white-space: nowrap; }
.kind { white-space: nowrap; }
table.reach { width: auto; min-width: 50%; }
table.reach td, table.reach th { text-align: center; min-width: 4.5rem; }
td.id { white-space: nowrap; }
.scroll { overflow-x: auto; }
table.reach th.row { text-align: left; }
table.reach td.yes { background: var(--ok-bg); color: var(--ok); font-weight: 700; }
table.reach td.no { background: var(--bad-bg); color: var(--bad); font-weight: 700; }
table.reach td.self { color: #aab; }
table.reach td.unknown { background: #f3f3f3; color: #666; }
.legend-line { font-size: .85rem; color: var(--muted); }
.swatch { display: inline-block; width: 1em; height: 1em; border: 1px solid #999;
  vertical-align: -0.15em; margin-right: .3em; }
dl.defs dt { font-weight: 700; margin-top: .6rem; }
dl.defs dd { margin: .15rem 0 0 0; }
.caution { border: 1px solid #e0c48a; background: #fff8e8; border-radius: 4px; padding: .6rem 1rem; }
.caution li { margin: .3rem 0; }
footer { margin: 2rem 2rem 0; padding-top: .6rem; border-top: 1px solid var(--rule);
  font-size: .8rem; color: var(--muted); }
code { font-size: .9em; background: var(--soft); padding: 0 .2em; border-radius: 3px;
  overflow-wrap: anywhere; }
@media (max-width: 760px) { .two { grid-template-columns: 1fr; } main { padding: 0 1rem; } }
@media print {
  html { font-size: 10.5pt; }
  body { background: #fff; }
  .page { max-width: none; padding: 0; }
  header.top, .verdict, .badge, table.reach td, .swatch, th {
    -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  header.top { padding: .8rem 1rem; }
  main { padding: 0; }
  nav.toc { display: none; }
  section { break-inside: auto; }
  h2, h3 { break-after: avoid; }
  figure { break-inside: avoid; }
  figure img { max-height: 185mm; width: auto; max-width: 100%; }
  figure.wide img { width: auto; }
  .keep { break-inside: avoid; }
  .scroll { overflow: visible; }
  tr { break-inside: avoid; }
  thead { display: table-header-group; }
  a { color: inherit; text-decoration: none; }
}
@page { margin: 12mm; }
"""


def _badge(number: int, kind: str) -> str:
    style = kind_style(kind)
    return (f'<span class="badge" style="background:{style.colour}">'
            f'{KIND_SYMBOLS.get(style.marker, "")} {number}</span>')


def _figure(img: FigureImage, wide: bool = True) -> str:
    data = base64.b64encode(img.data).decode("ascii")
    cls = ' class="wide"' if wide else ""
    return (f'<figure id="{_e(img.key)}"{cls}><img src="data:{img.mime};base64,{data}" '
            f'alt="{_e(img.alt)}"><figcaption>{_e(img.caption)}</figcaption></figure>')


# -- sections -----------------------------------------------------------------------------
def _header(result: Any) -> str:
    plan, vehicle = result.plan, result.vehicle
    title = f"{vehicle.name} in {_name(plan.source)}"
    vehicle_src = f" · vehicle file <code>{_e(vehicle.source)}</code>" if vehicle.source else ""
    return (
        '<header class="top"><div class="kicker">floorfit site check</div>'
        f"<h1>{_e(title)}</h1>"
        f'<div class="meta">drawing <code>{_e(plan.source)}</code> (units: {_e(plan.units)}, '
        f"1 unit = {plan.metres_per_unit:g} m){vehicle_src}</div></header>"
    )


_MAX_PAIRS_LISTED = 12


def _grouped_pairs(pairs: list[tuple[str, str, list[str]]]) -> list[tuple[str, str, str, list[str]]]:
    """Unreachable pairs with both directions merged: (a, "↔" or "→", b, finding ids)."""
    one_way = {(a, b): ids for a, b, ids in pairs}
    grouped, done = [], set()
    for a, b, ids in pairs:
        if (a, b) in done:
            continue
        if (b, a) in one_way:
            merged = list(dict.fromkeys([*ids, *one_way[(b, a)]]))
            grouped.append((a, "↔", b, merged))
            done.add((b, a))
        else:
            grouped.append((a, "→", b, ids))
        done.add((a, b))
    return grouped


def _cut_text(ids: list[str], numbers: dict[str, int]) -> str:
    refs = [f"#{numbers[i]}" if i in numbers else _e(i) for i in ids]
    return f" — cut by finding {', '.join(refs)}" if refs else ""


def _verdict(result: Any, numbers: dict[str, int]) -> str:
    passed = bool(result.passed)
    pairs = unreachable_pairs(result)
    counts = {k: 0 for k in report_kinds(result)}
    for f in result.findings:
        counts[f.kind] = counts.get(f.kind, 0) + 1
    n_stations = len(station_names(result))
    if passed:
        word = "Passes"
        line = (f"All {n_stations} stations can be reached from each other and nothing blocks "
                "the way." if n_stations else "No blocked place was found.")
    else:
        word = "Does not pass"
        reasons = []
        if pairs:
            from floorfit.analysis.findings import pairs_text, unconnected_station_pairs
            bad, total = unconnected_station_pairs(result.reachable)
            reasons.append(pairs_text(len(bad), total))
        if counts.get("blocked"):
            reasons.append(f"{counts['blocked']} blocked place{'s' if counts['blocked'] != 1 else ''}")
        line = "; ".join(reasons).capitalize() + "." if reasons else "See the findings below."
    chips = "".join(
        f'<span class="chip"><span style="color:{kind_style(k).colour}">'
        f'{KIND_SYMBOLS.get(kind_style(k).marker, "")}</span> '
        f'<span class="n">{n}</span> {_e(kind_style(k).title.lower())}</span>'
        for k, n in counts.items())
    pair_items = ""
    if pairs:
        items = [f"<li>{_e(a)} {arrow} {_e(b)}{_cut_text(ids, numbers)}</li>"
                 for a, arrow, b, ids in _grouped_pairs(pairs)]
        more = ""
        if len(items) > _MAX_PAIRS_LISTED:
            more = (f"<li>… and {len(items) - _MAX_PAIRS_LISTED} more: see "
                    '<a href="#reach">Reachability</a></li>')
            items = items[:_MAX_PAIRS_LISTED]
        pair_items = ("<p><strong>Cannot be reached</strong> (→ one way, ↔ both ways):</p><ul>"
                      + "".join(items) + more + "</ul>")
    cls = "pass" if passed else "fail"
    return (f'<section class="verdict {cls}" id="verdict"><div class="word">{word}</div>'
            f"<p>{_e(line)}</p><div class=\"chips\">{chips}</div>{pair_items}</section>")


def _toc(entries: Sequence[tuple[str, str]]) -> str:
    links = "".join(f'<a href="#{key}">{_e(text)}</a>' for key, text in entries)
    return f'<nav class="toc"><strong>Contents:</strong> {links}</nav>'


Section = tuple[str, str, str]   # (anchor, title, inner HTML)


def _settings(result: Any, vehicle_img: FigureImage | None) -> Section:
    rows = "".join(f"<tr><th>{_e(k)}</th><td>{_e(_fmt(v))}</td></tr>"
                   for k, v in sorted(result.settings.items(), key=lambda kv: str(kv[0])))
    v = result.vehicle
    vrows = [("name", v.name), ("motion", v.mode), ("length", _m(v.length_m)), ("width", _m(v.width_m)),
             ("safety margin", _m(v.margin_m)), ("file", v.source or "—")]
    vtable = "".join(f"<tr><th>{_e(k)}</th><td>{_e(val)}</td></tr>" for k, val in vrows)
    reference = result.settings.get("clearance_reference")
    ref_line = ""
    if "required_clearance_m" in result.settings:
        chosen = f" — chosen from: {_e(reference)}" if reference else ""
        ref_line = (f"<p>Clearance asked for: <strong>"
                    f"{_e(_m(result.settings.get('required_clearance_m')))}</strong>{chosen}. "
                    "See the cautions for common references.</p>")
    inner = (
        f"<p>{_e(tolerance_statement(result.settings))}</p>{ref_line}"
        '<div class="two"><div><h3>Check settings</h3>'
        f'<table class="kv"><tbody>{rows or "<tr><td>none recorded</td></tr>"}</tbody></table></div>'
        f'<div><h3>Vehicle</h3><table class="kv"><tbody>{vtable}</tbody></table>'
        f'{_figure(vehicle_img, wide=False) if vehicle_img else ""}</div></div>')
    return "settings", "Settings and tolerance", inner


_KEEP = '<div class="keep">'


def _figure_body(intro: str, images: Sequence[FigureImage | None], missing: str,
                 extra: str = "") -> str:
    """Intro, legend and first figure in one block that print keeps on one page (with the
    section heading, see :func:`_numbered`); further figures follow."""
    shown = [_figure(img) for img in images if img is not None]
    first = shown[0] if shown else f'<p class="muted">{_e(missing)}</p>'
    return f"{_KEEP}<p>{intro}</p>{extra}{first}</div>{''.join(shown[1:])}"


def _turn_legend(result: Any) -> str:
    items = "".join(f'<span style="margin-right:1.1em"><span class="swatch" style="background:{c}">'
                    f"</span>{_e(t)}</span>" for _k, t, c in shown_turn_classes(result))
    return f'<p class="legend-line">{items}</p>'


def _numbers_cell(f: Any) -> str:
    parts = []
    if f.clear_width_m is not None or f.needed_width_m is not None:
        parts.append(f"clear width {_m(f.clear_width_m)}, needs {_m(f.needed_width_m)}")
    if f.clearance_m is not None or f.required_clearance_m is not None:
        parts.append(f"clearance {_m(f.clearance_m)}, asked {_m(f.required_clearance_m)}")
    if f.heading_ranges_deg:
        from floorfit.analysis.turnability import format_heading_ranges
        parts.append(f"headings {format_heading_ranges(f.heading_ranges_deg)}")
    return "<br>".join(_e(p) for p in parts) or "—"


def _findings_table(result: Any) -> Section:
    rows = []
    for number, f in numbered_findings(result.findings):
        style = kind_style(f.kind)
        rows.append(
            f'<tr id="finding-{number}"><td>{_badge(number, f.kind)}</td>'
            f'<td class="id">{_e(f.id) or "—"}</td>'
            f'<td class="kind">{_e(style.title)}<br><span class="muted">cause: {_e(f.cause)}</span></td>'
            f"<td>{_e(f.label) if f.label else '—'}</td>"
            f'<td class="num">{f.x:.3f}</td><td class="num">{f.y:.3f}</td>'
            f"<td>{_numbers_cell(f)}</td><td>{_e(f.summary)}</td>"
            f"<td>{_e(', '.join(map(str, f.cuts_off))) or '—'}</td></tr>")
    if not rows:
        body = '<p class="muted">No findings: nothing blocked, tight or without a turn.</p>'
    else:
        body = (
            '<div class="scroll"><table class="findings"><thead><tr><th>#</th><th>id</th><th>kind</th>'
            '<th>where</th>'
            '<th class="num">x (m)</th><th class="num">y (m)</th><th>numbers</th><th>what</th>'
            "<th>stations cut off</th></tr></thead><tbody>" + "".join(rows) + "</tbody></table></div>")
    intro = ("<p>Numbered as on the plan. Positions in the drawing frame, metres. "
             "&ldquo;Where&rdquo; is the nearest label in the drawing.</p>")
    return "findings", "Findings", intro + body


def _reachability(result: Any, numbers: dict[str, int]) -> Section:
    names = station_names(result)
    if not names:
        return "reach", "Reachability", ('<p class="muted">No stations were given, so no '
                                         "connections were checked.</p>")
    head = "".join(f"<th>{_e(n)}</th>" for n in names)
    rows = []
    for a in names:
        row = result.reachable.get(a, {})
        cells = []
        for b in names:
            if a == b:
                cells.append('<td class="self" title="same station">·</td>')
            elif b not in row:
                cells.append('<td class="unknown" title="not checked">?</td>')
            elif row[b]:
                cells.append(f'<td class="yes" title="{_e(a)} → {_e(b)}: reachable">✓</td>')
            else:
                ids = [str(i) for i in result.cuts.get((a, b), [])]
                refs = ", ".join(f"#{numbers[i]}" if i in numbers else i for i in ids)
                tip = f"{a} → {b}: not reachable" + (f" (finding {refs})" if refs else "")
                cells.append(f'<td class="no" title="{_e(tip)}">✗</td>')
        rows.append(f'<tr><th class="row">{_e(a)}</th>{"".join(cells)}</tr>')
    inner = (
        "<p>Can the vehicle drive from the station in the row to the station in the column? "
        "✓ yes, ✗ no, ? not checked. The verdict box names the findings that cut each ✗.</p>"
        f'<div class="scroll"><table class="reach"><thead><tr><th class="row">from \\ to</th>{head}'
        f"</tr></thead><tbody>{''.join(rows)}</tbody></table></div>")
    return "reach", "Reachability", inner


def _notes(result: Any) -> Section | None:
    if not result.notes:
        return None
    items = "".join(f"<li>{_e(n)}</li>" for n in result.notes)
    return "notes", "Notes from the check", f"<ul>{items}</ul>"


def _definitions() -> Section:
    items = "".join(
        f'<dt><span style="color:{s.colour}">{KIND_SYMBOLS.get(s.marker, "")}</span> '
        f"{_e(s.title)} <span class=\"muted\">(<code>{_e(s.kind)}</code>)</span></dt>"
        f"<dd>{_e(s.definition)}</dd>" for s in KIND_STYLES.values())
    return "definitions", "What the findings mean", f'<dl class="defs">{items}</dl>'


def _cautions() -> Section:
    items = "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS)
    refs = "".join(f"<tr><td>{_e(r.topic)}</td><td>{_e(r.value)}</td><td>{_e(r.source)}</td></tr>"
                   for r in CLEARANCE_REFERENCES)
    inner = (
        f'<div class="caution"><ul>{items}</ul></div>'
        "<h3>Common clearance references (for choosing the setting; references, not law)</h3>"
        "<table><thead><tr><th>topic</th><th>figure</th><th>source</th></tr></thead>"
        f"<tbody>{refs}</tbody></table>"
        '<p class="muted">Check the edition adopted where the site is, and any stricter site or '
        "vehicle-maker rules.</p>")
    return "cautions", "Cautions", inner


def _numbered(sections: Iterable[Section | None]) -> tuple[str, list[tuple[str, str]]]:
    html_parts, toc = [], []
    for number, (key, title, inner) in enumerate((s for s in sections if s), start=1):
        heading = f"<h2>{number}. {_e(title)}</h2>"
        if inner.startswith(_KEEP):          # heading joins the block kept on one page
            body = _KEEP + heading + inner[len(_KEEP):]
        else:
            body = heading + inner
        html_parts.append(f'<section id="{key}">{body}</section>')
        toc.append((key, title))
    return "".join(html_parts), toc


def render_html(result: Any, images: Iterable[FigureImage], *, sheets: Sequence[Any] | None = None,
                sheet_viewport_mm: tuple[float, float] | None = None) -> str:
    """The whole report page as a string (UTF-8 when written). ``sheets`` (from
    :func:`floorfit.report.sheets.build_sheets`) add the finding sheets with their close-ups."""
    from floorfit.report.sheets_html import SHEETS_CSS, sheets_section

    by_key = {img.key: img for img in images}
    numbers = {str(f.id): n for n, f in numbered_findings(result.findings) if f.id}
    routes = list(getattr(result, "routes", None) or [])
    plan_section = ("plan", "Plan and findings", _figure_body(
        "The drawing as floorfit read it, with the stations and the findings. Check it against "
        "the building: anything missing here was not checked.",
        [by_key.get("fig-plan")], "No plan figure."))
    turn_section = ("turn", "Where the vehicle can turn", _figure_body(
        "Where the vehicle's reference point can be, coloured by how freely it can change heading "
        "there. Darker means more freedom; white means the vehicle cannot be there at any heading.",
        [by_key.get("fig-turn"), by_key.get("fig-headings")],
        "The check did not produce a turning map.", _turn_legend(result)))
    routes_section = None
    if routes:
        routes_section = ("routes", "Swept paths", _figure_body(
            "The area the vehicle covers along each route given with the check.",
            [by_key.get("fig-routes")], "No route geometry was given."))
    body, toc = _numbered([
        _settings(result, by_key.get("fig-vehicle")), plan_section, turn_section, routes_section,
        _findings_table(result),
        traffic_section(result, numbers, _figure(by_key["fig-traffic"]) if "fig-traffic" in by_key else "", _badge),
        sheets_section(result, sheets, by_key, _figure, sheet_viewport_mm),
        _reachability(result, numbers), _notes(result), _definitions(),
        _cautions()])
    title = f"floorfit site check — {result.vehicle.name} in {_name(result.plan.source)}"
    parts = [
        "<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f'<meta name="generator" content="floorfit {_e(__version__)}">',
        f"<title>{_e(title)}</title><style>{CSS}{SHEETS_CSS if sheets else ''}</style></head>"
        '<body><div class="page">',
        _header(result), "<main>", _verdict(result, numbers),
        _toc([("verdict", "Verdict"), *toc]), body, "</main>",
        f"<footer>Made with floorfit {_e(__version__)}. A geometric check of a drawing, not a risk "
        "assessment; see Cautions. The machine-readable results are in findings.json and "
        "findings.csv; overlay.dxf lines up with the drawing in CAD.</footer>",
        "</div></body></html>",
    ]
    return "\n".join(parts) + "\n"
