"""The (site × vehicle) matrix of a batch as files: ``batch.html``, ``batch.csv``, ``batch.json``.

``batch.html`` is one self-contained summary page: a matrix with a row per site and a
column per vehicle; each cell shows the verdict, the findings by kind, the sizing margin
and links to that cell's own report (``<site>__<vehicle>/report.html``). ``batch.json``
(stable: sorted keys, rounded, no timestamps) is written last, so the folder holds a
complete batch exactly when it is there.
"""

from __future__ import annotations

import html
import os
from pathlib import Path
from typing import Any

from floorfit import __version__
from floorfit.analysis.findings import pairs_text
from floorfit.report.compare_html import stable_json, write_bytes_atomic
from floorfit.report.kinds import KIND_STYLES

__all__ = ["render_batch_html", "write_batch", "BATCH_FILES"]

#: Output file names.
BATCH_FILES = {"html": "batch.html", "csv": "batch.csv", "json": "batch.json"}

_EXTRA_CSS = """
table.matrix td, table.matrix th { vertical-align: top; }
table.matrix td.cell { min-width: 11rem; }
.v { font-weight: 800; letter-spacing: .03em; }
td.pass { background: var(--ok-bg); } td.pass .v { color: var(--ok); }
td.fail { background: var(--bad-bg); } td.fail .v { color: var(--bad); }
td.error { background: #eeeeee; } td.error .v { color: #444; }
.small { font-size: .8rem; color: var(--muted); }
"""


def _e(value: Any) -> str:
    return html.escape("" if value is None else str(value), quote=True)


def _margin_text(sizing: dict | None) -> str:
    if not sizing:
        return ""
    if sizing.get("sizing_margin_m") is None:
        return f'<div class="small">sizing ({_e(sizing.get("vary"))}): {_e(sizing.get("status"))}</div>'
    m = sizing["sizing_margin_m"]
    word = "room to grow" if m >= 0 else "too large by"
    b = sizing.get("binding") or {}
    where = f"; limited at {_e(b.get('label') or '')} ({b['x']:.2f}, {b['y']:.2f}) m" if b else ""
    return (f'<div class="small">{_e(sizing["vary"])}: largest {sizing["largest_m"]:.3f} m, '
            f"{word} {abs(m):.3f} m{where}</div>")


def _cell_html(c: dict) -> str:
    status = c["status"]
    parts = [f'<div class="v">{_e(status.upper())}</div>']
    if c["error"]:
        parts.append(f'<div class="small">{_e(c["error"])}</div>')
    if c["findings"] is not None:
        chips = ", ".join(f'<span style="color:{KIND_STYLES[k].colour}">{n} {_e(KIND_STYLES[k].title.lower())}</span>'
                          for k, n in c["findings"].items() if k in KIND_STYLES and n)
        parts.append(f"<div>{chips or 'no findings'}</div>")
        if c["unreachable_pairs"]:
            n = c["stations"] or 0
            parts.append(f'<div class="small">{_e(pairs_text(c["unreachable_pairs"], n * (n - 1) // 2))}</div>')
    parts.append(_margin_text(c.get("sizing")))
    if c["report"]:
        parts.append(f'<div><a href="{_e(c["report"])}">report</a></div>')
    return f'<td class="cell {_e(status)}">{"".join(parts)}</td>'


def render_batch_html(data: dict[str, Any]) -> str:
    """The summary page from batch.json's data (:meth:`floorfit.fleet.batch.BatchResult.to_dict`)."""
    from floorfit.report.cautions import CAUTIONS
    from floorfit.report.html import CSS

    by = {(c["site"], c["vehicle"]): c for c in data["cells"]}
    head = "".join(f"<th>{_e(v)}</th>" for v in data["vehicles"])
    rows = []
    for s in data["sites"]:
        cells = "".join(_cell_html(by[(s, v)]) for v in data["vehicles"])
        rows.append(f'<tr><th class="row">{_e(s)}</th>{cells}</tr>')
    counts = data["counts"]
    failed = counts["fail"] + counts["error"]
    size = data.get("size")
    size_line = (f"Sizing margin: largest {_e(size['vary'])} for which every station pair stays connected, minus "
                 f"the vehicle's own (precision {size['precision_m']:g} m; a safe lower bound)."
                 if size else "No sizing was asked for.")
    cautions = "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS)
    title = f"floorfit batch — {data['manifest']}"
    parts = [
        "<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f'<meta name="generator" content="floorfit {_e(__version__)}">',
        f"<title>{_e(title)}</title><style>{CSS}{_EXTRA_CSS}</style></head><body><div class=\"page\">",
        '<header class="top"><div class="kicker">floorfit batch</div>'
        f"<h1>{len(data['sites'])} sites × {len(data['vehicles'])} vehicles</h1>"
        f'<div class="meta">manifest <code>{_e(data["manifest"])}</code></div></header><main>',
        f'<section class="verdict {"fail" if failed else "pass"}"><div class="word">'
        f'{counts["pass"]} pass, {counts["fail"]} fail, {counts["error"]} error</div>'
        f"<p>{_e(size_line)}</p></section>",
        '<section id="matrix"><h2>1. Sites × vehicles</h2><div class="scroll"><table class="matrix">'
        f'<thead><tr><th class="row">site \\ vehicle</th>{head}</tr></thead><tbody>{"".join(rows)}</tbody>'
        "</table></div></section>",
        f'<section id="cautions"><h2>2. Cautions</h2><div class="caution"><ul>{cautions}</ul></div></section>',
        "</main>",
        f"<footer>Made with floorfit {_e(__version__)}. Machine-readable: batch.json, batch.csv.</footer>",
        "</div></body></html>",
    ]
    return "\n".join(parts) + "\n"


def write_batch(result: Any, out_dir: str | os.PathLike) -> dict[str, Path]:
    """Write batch.html, batch.csv and (last) batch.json for a :class:`floorfit.fleet.batch.BatchResult`."""
    from floorfit.fleet.batch import batch_csv

    out_dir = Path(out_dir)
    data = result.to_dict()
    page = render_batch_html(data).encode("utf-8")
    table = batch_csv(result)
    (out_dir / BATCH_FILES["json"]).unlink(missing_ok=True)
    written = {"html": write_bytes_atomic(out_dir / BATCH_FILES["html"], page),
               "csv": write_bytes_atomic(out_dir / BATCH_FILES["csv"], table)}
    written["json"] = write_bytes_atomic(out_dir / BATCH_FILES["json"], stable_json(data))
    return written
