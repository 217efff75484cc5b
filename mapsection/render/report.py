"""report.html: one self-contained page with the four tests of a section.

Figures are embedded as base64 data URIs and the styling is inline, so the file
can be mailed or archived alone and opens with no network access. Every text
that comes from data (unit names, log lines, ids) is escaped.

Example::

    from mapsection.render.report import write_report
    write_report("out/A/report.html", draft, report,
                 {"section": "out/A/section.png", "restored": "out/A/restored.png"})
"""

from __future__ import annotations

import base64
import math
import os
from html import escape
from pathlib import Path
from typing import Any

from .._atomic import atomic_file
from ..caution import CAUTION
from ..checks import TESTS, CheckReport, key_figures
from ..checks.area import DetachmentFit
from ..checks.summary import KeyFigures
from ..draft import Draft

TITLES = {
    "topography": "Topography: the section against the ground, the map and the dips",
    "restoration": "Restoration and line-length balance (Dahlstrom 1969)",
    "area_balance": "Area balance and depth to detachment (Chamberlin 1910; "
    "Epard & Groshong 1993)",
    "kinematics": "Kinematics: fault-bend folding (Suppe 1983) and consistency",
}
FIGURE_TITLES = {
    "section": "Draft section",
    "restored": "Restored section",
    "area_depth": "Excess area against depth",
    "sequence_first": "Sequence: first step",
    "sequence_last": "Sequence: last step",
}
_MIME = {".png": "image/png", ".svg": "image/svg+xml", ".gif": "image/gif",
         ".jpg": "image/jpeg", ".jpeg": "image/jpeg"}

_CSS = """
body{font-family:Georgia,'Times New Roman',serif;margin:0;background:#f6f4ef;color:#222}
main{max-width:1100px;margin:0 auto;padding:1.2em 1.6em 3em}
h1{font-size:1.6em;margin:.4em 0 .1em}h2{font-size:1.2em;margin-top:1.6em;
border-bottom:2px solid #8a7f6a;padding-bottom:.2em}h3{font-size:1em;margin:1.1em 0 .3em}
.caution{background:#fff3cd;border:2px solid #b8860b;padding:.7em 1em;margin:1em 0;
font-weight:bold}
.note{background:#eef3f8;border-left:4px solid #5a7fa8;padding:.4em .8em;margin:.4em 0}
.pass{background:#2e7d32;color:#fff;padding:.1em .5em;border-radius:3px;font-family:sans-serif}
.fail{background:#b71c1c;color:#fff;padding:.1em .5em;border-radius:3px;font-family:sans-serif}
table{border-collapse:collapse;margin:.3em 0 .8em;font-size:.9em;background:#fff}
th,td{border:1px solid #c9c2b3;padding:.2em .5em;text-align:left;vertical-align:top}
th{background:#e9e4d8}td.num{text-align:right;font-family:monospace}
figure{margin:1em 0;background:#fff;padding:.5em;border:1px solid #c9c2b3}
figure img{max-width:100%;height:auto}figcaption{font-size:.9em;color:#555}
ul.log{font-family:monospace;font-size:.85em;background:#fff;border:1px solid #c9c2b3;
padding:.6em 1.8em}.meta{color:#555}
"""


# ---------------------------------------------------------------------------
# formatting


def format_value(key: str, value: Any) -> str:
    """A number formatted by what it measures (from the key's ending); text as is."""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if value is None:
        return "–"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            return "–"
        if key.endswith(("_m", "_m2")) or key in ("from", "to"):
            return f"{value:.1f}"
        if key.endswith(("_pct", "_deg")):
            return f"{value:.2f}"
        if key in ("unit_agreement", "r_squared", "r2") or key.endswith("agreement"):
            return f"{value:.3f}"
        return f"{value:.4g}"
    return str(value)


def _label(key: str) -> str:
    text = key.replace("_pct", " (%)").replace("_deg", " (deg)").replace("_m2", " (m²)")
    if text.endswith("_m"):
        text = text[:-2] + " (m)"
    return text.replace("_", " ")


def _cell(key: str, value: Any) -> str:
    if isinstance(value, dict):
        return _kv_table(value)
    if isinstance(value, list):
        return _list(key, value)
    cls = ' class="num"' if isinstance(value, int | float) and not isinstance(value, bool) else ""
    return f"<td{cls}>{escape(format_value(key, value))}</td>"


def _kv_table(d: dict) -> str:
    rows = []
    for k, v in d.items():
        inner = _cell(k, v)
        if not inner.startswith("<td"):
            inner = f"<td>{inner}</td>"
        rows.append(f"<tr><th>{escape(_label(str(k)))}</th>{inner}</tr>")
    return "<table>" + "".join(rows) + "</table>"


def _list(key: str, items: list) -> str:
    """A list of dicts as one table (a row each); a list of scalars as a line of text."""
    if not items:
        return "<p class='meta'>none</p>"
    if all(isinstance(i, dict) for i in items):
        cols: list[str] = []
        for i in items:
            cols += [k for k in i if k not in cols]
        head = "".join(f"<th>{escape(_label(c))}</th>" for c in cols)
        body = []
        for i in items:
            cells = []
            for c in cols:
                v = i.get(c)
                if isinstance(v, dict | list):
                    cells.append(f"<td>{escape(str(v))}</td>")
                else:
                    cells.append(_cell(c, v))
            body.append("<tr>" + "".join(cells) + "</tr>")
        return f"<table><tr>{head}</tr>{''.join(body)}</table>"
    return "<p>" + escape(", ".join(format_value(key, v) for v in items)) + "</p>"


def _badge(passed: bool) -> str:
    return '<span class="pass">PASS</span>' if passed else '<span class="fail">FAIL</span>'


def _image(name: str, path: str | os.PathLike) -> str:
    p = Path(path)
    if not p.is_file():
        return ""
    mime = _MIME.get(p.suffix.lower(), "application/octet-stream")
    data = base64.b64encode(p.read_bytes()).decode("ascii")
    title = FIGURE_TITLES.get(name, name.replace("_", " "))
    return (f'<figure><img alt="{escape(title)}" src="data:{mime};base64,{data}">'
            f"<figcaption>{escape(title)}</figcaption></figure>")


# ---------------------------------------------------------------------------
# the page


def _test_section(name: str, d: dict, passed: bool, failures: list[str],
                  fit: DetachmentFit | None = None) -> str:
    """One test's part of the page: its verdict, why it fails, and ``d`` (its part of
    checks.json) as tables; ``fit`` the area-depth verdict, in words before its numbers."""
    scalars = {k: v for k, v in d.items()
               if k not in ("passed", "failures", "thresholds") and not isinstance(v, list | dict)}
    nested = {k: v for k, v in d.items()
              if k != "thresholds" and isinstance(v, list | dict) and k != "failures"}
    parts = [f'<h2 id="{escape(name)}">{escape(TITLES.get(name, name))} '
             f'{_badge(passed)}</h2>']
    if failures:
        parts.append("<h3>Why it fails</h3><ul>"
                     + "".join(f"<li>{escape(str(f))}</li>" for f in failures) + "</ul>")
    if fit is not None and fit.summary:
        cav = "".join(f"<li>{escape(str(c))}</li>" for c in fit.caveats)
        parts.append(f'<div class="note"><b>Depth to detachment:</b> {escape(fit.summary)}'
                     + (f"<ul>{cav}</ul>" if cav else "") + "</div>")
    parts.append("<h3>Figures</h3>" + _kv_table(scalars))
    if isinstance(d.get("thresholds"), dict):
        parts.append("<h3>Pass thresholds</h3>" + _kv_table(d["thresholds"]))
    for k, v in nested.items():
        parts.append(f"<h3>{escape(_label(k))}</h3>")
        parts.append(_list(k, v) if isinstance(v, list) else _dict_block(k, v))
    return "\n".join(parts)


def _dict_block(key: str, d: dict) -> str:
    """A dict of dicts (e.g. per unit) as one table with the key as first column."""
    if d and all(isinstance(v, dict) for v in d.values()):
        return _list(key, [{"name": k, **v} for k, v in d.items()])
    return _kv_table(d)


def summary_texts(figures: KeyFigures) -> dict[str, str]:
    """The key figures of each test, as the report's summary table shows them."""

    def fig(key: str, value: Any) -> str:
        return f"{_label(key)} {format_value(key, value)}"

    topo, rest, area = figures.topography, figures.restoration, figures.area_balance
    area_text = ""
    if area.worst_mismatch_pct is not None:
        area_text = f"worst unit mismatch {area.worst_mismatch_pct:.2f} % ({area.worst_unit})"
    if area.detachment is not None and area.detachment.summary:
        area_text += f"; {area.detachment.summary}"
    return {
        "topography": "; ".join([fig("contact_rms_m", topo.contact_rms_m),
                                 fig("unit_agreement", topo.unit_agreement),
                                 fig("dip_rms_deg", topo.dip_rms_deg)]),
        "restoration": "; ".join([fig("shortening_pct", rest.shortening_pct),
                                  fig("line_length_mismatch_pct",
                                      rest.line_length_mismatch_pct)]),
        "area_balance": area_text,
        "kinematics": fig("transport_direction", figures.kinematics.transport_direction),
    }


def _test_sections(report: CheckReport) -> list[str]:
    details = report.to_dict()  # each test's part of checks.json, shown as tables
    results = report.results
    failures = {"topography": report.topography.failures,
                "restoration": report.restoration.failures,
                "area_balance": report.area_balance.failures,
                "kinematics": report.kinematics.failures}
    return [_test_section(k, details[k], results[k], failures[k],
                          report.area_balance.detachment if k == "area_balance" else None)
            for k in TESTS]


def render_report(draft: Draft, report: CheckReport,
                  figures: dict[str, str | os.PathLike] | None = None) -> str:
    """The report page as a string (see :func:`write_report`)."""
    key = key_figures(report)
    name = escape(str(draft.name or report.section or "section"))
    summary_rows = [f'<tr><td><a href="#{k}">{escape(k)}</a></td>'
                    f"<td>{_badge(key.results[k])}</td><td>{escape(text)}</td></tr>"
                    for k, text in summary_texts(key).items()]
    fig_html = "".join(_image(n, p) for n, p in (figures or {}).items())
    line = draft.line
    html = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f"<title>Section {name}: checks</title><style>{_CSS}</style></head><body><main>",
        f"<h1>Section {name} {_badge(key.passed)}</h1>",
        f'<p class="meta">Method: {escape(str(draft.method))} · vertical exaggeration '
        f"{float(draft.ve):g} (checks are measured at true scale) · length {line.length:.1f} m · "
        f"bearing {line.start_bearing:.1f}°</p>",
        f'<div class="caution">Caution: {escape(CAUTION)}</div>',
        *(f'<div class="note">{escape(n)}</div>' for n in report.notes),
        "<table><tr><th>Test</th><th>Result</th><th>Key figures</th></tr>",
        *summary_rows,
        "</table>",
        fig_html,
        *_test_sections(report),
        "<h2>Construction log</h2>",
        ("<ul class='log'>" + "".join(f"<li>{escape(str(m))}</li>" for m in draft.log) + "</ul>")
        if draft.log else "<p class='meta'>empty</p>",
        f'<div class="caution">Caution: {escape(CAUTION)}</div>',
        "</main></body></html>",
    ]
    return "\n".join(html)


def write_report(path: str | os.PathLike, draft: Draft, report: CheckReport,
                 figures: dict[str, str | os.PathLike] | None = None) -> Path:
    """Write a self-contained report.html for one section, all-or-nothing.

    ``figures`` maps a name (``section``, ``restored``, ``area_depth``,
    ``sequence_first``, ``sequence_last``, or any other) to a PNG path; missing
    files are left out.
    """
    path = Path(path)
    text = render_report(draft, report, figures)
    with atomic_file(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return path
