"""The comparison of two layouts as files: ``comparison.html`` and ``comparison.json``.

``write_comparison(comparison, out_dir)`` writes, into one folder:

- ``comparison.html``: both plans side by side (figures embedded, no network), the
  findings that appeared or got worse ringed on AFTER, those that disappeared ringed on
  BEFORE (and the ones that got better ringed on AFTER), with a legend, and tables of
  the changes and of the station pairs that lost or gained reachability;
- ``report.pdf``: a cover and one finding sheet per finding that appeared, got worse or
  disappeared (:mod:`floorfit.report.compare_pdf`), with the title block of a check's report;
- ``comparison.json``: the same for machines (stable: sorted keys, rounded, no
  timestamps), written last, so the folder is complete exactly when it is there;
- ``before/`` and ``after/``: the full site-check report of each layout
  (:func:`floorfit.report.write_report`), linked from the page (``reports=False`` skips).

Every file goes to a temporary file in the same folder and is renamed into place.
"""

from __future__ import annotations

import base64
import html
import json
import os
import secrets
from pathlib import Path
from typing import Any

from floorfit import __version__
from floorfit.errors import InputError
from floorfit.report.kinds import kind_style

__all__ = ["CHANGE_STYLES", "comparison_figures", "render_comparison_html", "write_comparison",
           "write_bytes_atomic", "stable_json", "COMPARISON_FILES"]

#: Output file names.
COMPARISON_FILES = {"html": "comparison.html", "pdf": "report.pdf", "json": "comparison.json"}

#: How each change is highlighted: (ring colour, line style, legend text, which plan).
#: Two hues far apart for the common colour-vision deficiencies, and a different line
#: style for each change, so colour is never the only cue.
CHANGE_STYLES: dict[str, tuple[str, Any, str, str]] = {
    "appeared": ("#c0117a", "solid", "appeared in AFTER", "after"),
    "worse": ("#c0117a", (0, (4, 2)), "got worse in AFTER", "after"),
    "disappeared": ("#0b8a80", "solid", "gone in AFTER (shown on BEFORE)", "before"),
    "better": ("#0b8a80", (0, (4, 2)), "got better in AFTER", "after"),
}


def _e(value: Any) -> str:
    return html.escape("" if value is None else str(value), quote=True)


def _name(path: Any) -> str:
    text = "" if path is None else str(path)
    return os.path.basename(text.rstrip("/\\")) or text


def stable_json(data: Any) -> bytes:
    """JSON bytes with sorted keys and a final newline (no NaN)."""
    return (json.dumps(data, indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False) + "\n").encode("utf-8")


def write_bytes_atomic(path: str | os.PathLike, data: bytes) -> Path:
    """Write ``data`` to a temporary file beside ``path``, flush it and rename it into place."""
    path = Path(path)
    tmp = path.parent / f".floorfit-partial-{path.name}.{secrets.token_hex(6)}"
    try:
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except OSError as exc:
        tmp.unlink(missing_ok=True)
        raise InputError(f"cannot write: {exc.strerror or exc}", str(path)) from exc
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return path


# -- figures ----------------------------------------------------------------------------------
def _ring_radius(result: Any) -> float:
    """Ring radius, metres: a thirtieth of the plan's larger extent, at least 0.25 m."""
    x0, y0, x1, y1 = result.plan.extent_m
    return max(0.035 * max(x1 - x0, y1 - y0), 0.25)


def _ring_handle(legend, orig_handle, xdescent, ydescent, width, height, fontsize):
    from matplotlib.patches import Circle

    r = 0.45 * min(width, height) + 0.5
    return Circle((width / 2 - xdescent, height / 2 - ydescent), r)


def _highlight(fig: Any, result: Any, rings: list[tuple[str, float, float]]) -> None:
    """Ring the changed findings on the plan figure and add a legend of the rings above it."""
    from matplotlib.legend_handler import HandlerPatch
    from matplotlib.patches import Circle

    ax = fig.axes[0]
    r = _ring_radius(result)
    for change, x, y in rings:
        colour, style, _, _ = CHANGE_STYLES[change]
        ax.add_patch(Circle((x, y), r, fill=False, edgecolor=colour, linewidth=2.6, linestyle=style, zorder=13))
    first = ax.get_legend()
    if first is not None:
        ax.add_artist(first)           # keep the plan legend below; the change legend goes on top
    handles = [Circle((0, 0), 1.0, fill=False, edgecolor=c, linestyle=s, linewidth=2.0, label=text)
               for c, s, text, _ in CHANGE_STYLES.values()]
    ax.legend(handles=handles, loc="lower center", bbox_to_anchor=(0.5, 1.01), ncol=4, fontsize=7.5,
              frameon=False, handler_map={Circle: HandlerPatch(patch_func=_ring_handle)},
              handlelength=1.4, handleheight=1.4)


def comparison_figures(comparison: Any, fmt: str | None = None) -> dict[str, Any]:
    """``{"before": FigureImage, "after": FigureImage}``: each plan with its changes ringed."""
    from floorfit.report.figures import FigureImage, choose_format, plan_figure, render_figure

    images = {}
    for side in ("before", "after"):
        result = getattr(comparison, side)
        rings = []
        for ch in comparison.changes:
            if ch.change in CHANGE_STYLES and CHANGE_STYLES[ch.change][3] == side:
                f = ch.after if side == "after" else ch.before
                rings.append((ch.change, float(f.x), float(f.y)))
        fig, _hidden = plan_figure(result)
        _highlight(fig, result, rings)
        use = fmt or choose_format(result)
        images[side] = FigureImage(
            f"fig-{side}", side.upper(), {"svg": "image/svg+xml", "png": "image/png"}[use],
            render_figure(fig, use), f"{side.upper()} plan with its findings and the changes ringed",
            f"{side.upper()}: {_name(result.plan.source)}. Findings numbered as in that layout's own report.")
    return images


# -- the page -----------------------------------------------------------------------------------
_EXTRA_CSS = """
.side { display: grid; grid-template-columns: 1fr 1fr; gap: 1rem; align-items: start; }
.side h3 { margin-top: .2rem; }
@media (max-width: 900px) { .side { grid-template-columns: 1fr; } }
.ring { display: inline-block; width: 1em; height: 1em; border-radius: 50%; border-width: 3px;
  vertical-align: -0.2em; margin-right: .35em; background: transparent; }
td.lost { color: var(--bad); font-weight: 700; }
td.gained { color: var(--ok); font-weight: 700; }
"""


def _img(img: Any) -> str:
    data = base64.b64encode(img.data).decode("ascii")
    return (f'<figure id="{_e(img.key)}"><img src="data:{img.mime};base64,{data}" alt="{_e(img.alt)}">'
            f"<figcaption>{_e(img.caption)}</figcaption></figure>")


def _legend() -> str:
    items = []
    for colour, style, text, _side in CHANGE_STYLES.values():
        border = "solid" if style == "solid" else "dashed"
        items.append(f'<span style="margin-right:1.2em"><span class="ring" style="border-style:{border};'
                     f'border-color:{colour}"></span>{_e(text)}</span>')
    return f'<p class="legend-line">{"".join(items)}</p>'


def _count(n: int, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"


def _finding_text(f: Any) -> str:
    if f is None:
        return "—"
    where = f" [{f.label}]" if f.label else ""
    return f"{f.id} at ({f.x:.2f}, {f.y:.2f}) m{where}: {f.summary}"


def _changes_table(comparison: Any) -> str:
    rows = []
    for ch in comparison.changes:
        if ch.change == "unchanged":
            continue
        colour = CHANGE_STYLES.get(ch.change, ("#555555",))[0]
        style = kind_style(ch.kind)
        moved = "—" if ch.distance_m is None else f"{ch.distance_m:.2f} m"
        rows.append(
            f'<tr><td style="color:{colour};font-weight:700">{_e(ch.change)}</td>'
            f'<td><span style="color:{style.colour}">{_e(style.title)}</span></td>'
            f"<td>{_e(_finding_text(ch.before))}</td><td>{_e(_finding_text(ch.after))}</td>"
            f'<td class="num">{moved}</td><td>{_e("; ".join(ch.what)) or "—"}</td></tr>')
    if not rows:
        return '<p class="muted">No finding appeared, disappeared or changed.</p>'
    return ('<div class="scroll"><table><thead><tr><th>change</th><th>kind</th><th>BEFORE</th><th>AFTER</th>'
            '<th class="num">moved</th><th>what changed</th></tr></thead><tbody>'
            + "".join(rows) + "</tbody></table></div>")


def _pairs_table(comparison: Any) -> str:
    rows = [f'<tr><td>{_e(a)} ↔ {_e(b)}</td><td class="lost">lost: reachable before, not after</td></tr>'
            for a, b in comparison.pairs_lost]
    rows += [f'<tr><td>{_e(a)} ↔ {_e(b)}</td><td class="gained">gained: reachable after, not before</td></tr>'
             for a, b in comparison.pairs_gained]
    rows += [f'<tr><td>{_e(a)} ↔ {_e(b)}</td><td>still not reachable</td></tr>'
             for a, b in comparison.pairs_still_cut]
    body = ('<table><thead><tr><th>station pair</th><th>change</th></tr></thead><tbody>' + "".join(rows)
            + "</tbody></table>") if rows else '<p class="muted">Every station pair is reachable in both layouts.</p>'
    extra = ""
    if comparison.stations_only_before or comparison.stations_only_after:
        extra = (f'<p class="muted">Stations only in BEFORE: '
                 f'{_e(", ".join(comparison.stations_only_before)) or "none"}; '
                 f'only in AFTER: {_e(", ".join(comparison.stations_only_after)) or "none"} (not compared).</p>')
    return body + extra


def _sizing_block(comparison: Any) -> str:
    s = comparison.sizing_dict()
    if s is None:
        return ""

    def cell(d):
        if d["largest_m"] is None:
            return f"— ({_e(d['status'])})"
        b = d.get("binding") or {}
        where = f"; binding at ({b['x']:.2f}, {b['y']:.2f}) m {_e(b.get('label') or '')}" if b else ""
        return f"{d['largest_m']:.3f} m ({d['largest_with_margin_m']:.3f} m with margin){where}"

    change = "—" if s["change_m"] is None else f"{s['change_m']:+.3f} m"
    return (f"<h3>Largest vehicle ({_e(s['vary'])}, precision {s['precision_m']:g} m, safe lower bound)</h3>"
            f'<table class="kv"><tbody><tr><th>BEFORE</th><td>{cell(s["before"])}</td></tr>'
            f'<tr><th>AFTER</th><td>{cell(s["after"])}</td></tr>'
            f"<tr><th>change</th><td>{change}</td></tr></tbody></table>")


def render_comparison_html(comparison: Any, images: dict[str, Any], links: dict[str, str] | None = None) -> str:
    """The comparison page as a string. ``links``: ``{"before": href, "after": href}`` of the full reports."""
    from floorfit.report.cautions import CAUTIONS
    from floorfit.report.html import CSS

    links = links or {}
    before, after = comparison.before, comparison.after
    worse = comparison.after_worse
    counts = comparison.counts()
    word = {"WORSE": "AFTER is worse", "WORSE IN PLACES": "AFTER is worse in places (no station pair lost)",
            "BETTER": "AFTER is better", "UNCHANGED": "AFTER is unchanged"}.get(comparison.headline,
                                                                               comparison.headline)
    line = (f"{_count(len(comparison.pairs_lost), 'station pair')} lost, {len(comparison.pairs_gained)} gained. "
            f"Findings: {counts['appeared']} appeared, {counts['worse']} got worse, {counts['disappeared']} "
            f"disappeared, {counts['better']} got better, {counts['unchanged']} unchanged.")
    side_parts = []
    for side, result in (("before", before), ("after", after)):
        link = f' — <a href="{_e(links[side])}">full report</a>' if side in links else ""
        verdict = "passes" if result.passed else "does not pass"
        side_parts.append(f"<div><h3>{side.upper()}: {_e(_name(result.plan.source))}{link}</h3>"
                          f'<p class="muted">{verdict}; {_count(len(result.findings), "finding")}</p>'
                          f"{_img(images[side])}</div>")
    title = (f"floorfit layout comparison — {before.vehicle.name}: "
             f"{_name(before.plan.source)} → {_name(after.plan.source)}")
    cautions = "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS)
    parts = [
        "<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f'<meta name="generator" content="floorfit {_e(__version__)}">',
        f"<title>{_e(title)}</title><style>{CSS}{_EXTRA_CSS}</style></head><body><div class=\"page\">",
        '<header class="top"><div class="kicker">floorfit layout comparison</div>'
        f"<h1>{_e(before.vehicle.name)}: {_e(_name(before.plan.source))} → {_e(_name(after.plan.source))}</h1>"
        f'<div class="meta">BEFORE <code>{_e(before.plan.source)}</code> · '
        f'AFTER <code>{_e(after.plan.source)}</code></div>'
        "</header><main>",
        f'<section class="verdict {"fail" if worse else "pass"}" id="verdict"><div class="word">{_e(word)}</div>'
        f"<p>{_e(line)}</p></section>",
        '<section id="plans"><h2>1. Both plans</h2>'
        f"<p>Findings are matched by kind and position (within {comparison.match_distance_m:g} m, drawing frame). "
        "Rings mark what changed:</p>" + _legend() + f'<div class="side">{"".join(side_parts)}</div></section>',
        f'<section id="pairs"><h2>2. Station pairs</h2>{_pairs_table(comparison)}{_sizing_block(comparison)}</section>',
        f'<section id="changes"><h2>3. Findings that changed</h2>{_changes_table(comparison)}</section>',
        f'<section id="cautions"><h2>4. Cautions</h2><div class="caution"><ul>{cautions}</ul></div></section>',
        "</main>",
        f"<footer>Made with floorfit {_e(__version__)}. Machine-readable: comparison.json. "
        "A geometric check of two drawings, not a risk assessment.</footer>",
        "</div></body></html>",
    ]
    return "\n".join(parts) + "\n"


def write_comparison(comparison: Any, out_dir: str | os.PathLike, *, reports: bool = True, force: bool = False,
                     quiet: bool = True, pdf: bool = True, project: Any = None, paper: str = "a4") -> dict[str, Path]:
    """Write the comparison files into ``out_dir`` (created if missing); return ``{name: path}``.

    ``pdf``: also ``report.pdf``, a sheet per finding that appeared, got worse or disappeared
    (:mod:`floorfit.report.compare_pdf`) with ``project`` fields (a ProjectInfo or a mapping) on
    ``paper``; the full reports of ``before/`` and ``after/`` get the same fields and paper."""
    from floorfit.report.compare_pdf import render_comparison_pdf
    from floorfit.report.project import ProjectInfo
    from floorfit.report.writer import write_report

    out_dir = Path(out_dir)
    if out_dir.exists() and not out_dir.is_dir():
        raise InputError("the output path exists and is not a folder", str(out_dir))
    images = comparison_figures(comparison)
    links = {"before": "before/report.html", "after": "after/report.html"} if reports else {}
    page = render_comparison_html(comparison, images, links).encode("utf-8")
    data = stable_json(comparison.to_dict())
    if project is not None and not isinstance(project, ProjectInfo):
        project = ProjectInfo.from_mapping(project)
    document = render_comparison_pdf(comparison, project=project, paper=paper) if pdf else None
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the folder: {exc.strerror or exc}", str(out_dir)) from exc
    (out_dir / COMPARISON_FILES["json"]).unlink(missing_ok=True)       # folder now marked incomplete
    written: dict[str, Path] = {}
    if reports:
        for side in ("before", "after"):
            files = write_report(getattr(comparison, side), out_dir / side, force=force, quiet=quiet,
                                 project=project, paper=paper)
            written[side] = files["html"] if "html" in files else out_dir / side
    written["html"] = write_bytes_atomic(out_dir / COMPARISON_FILES["html"], page)
    if document is not None:
        written["pdf"] = write_bytes_atomic(out_dir / COMPARISON_FILES["pdf"], document)
    written["json"] = write_bytes_atomic(out_dir / COMPARISON_FILES["json"], data)
    return written
