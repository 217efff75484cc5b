"""report.html: one self-contained page with the four tests of a section, for people.

Each test opens with its verdict (PASS, FAIL or NOT TESTED), one summary line and the
verdict of each of its parts with the reasons; then its tables, every column labelled
with its unit. Lengths are in metres, angles to 0.1 degree, directions as compass
bearings; a figure not measured is a dash, and no value reads ``-0``
(:mod:`mapsection.render.report_parts`). Each test's tables are made in
:mod:`mapsection.render.report_tests`.

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
import os
from html import escape
from pathlib import Path

from .._atomic import atomic_file
from ..caution import CAUTION
from ..checks import TESTS, CheckReport, key_figures
from ..checks.status import BY_CONSTRUCTION, Part, label
from ..draft import Draft
from .report_parts import DASH, badge, compass, fmt, parts_table
from .report_tests import area_balance_html, kinematics_html, restoration_html, topography_html

__all__ = ["compass", "fmt", "render_report", "summary_texts", "write_report"]

TITLES = {
    "topography": "Topography: the section against the ground, the map and the dips",
    "restoration": "Restoration: line lengths (Dahlstrom 1969) and the cutoffs at each fault",
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
.summary{font-size:1.05em;margin:.3em 0 .6em}
.pass,.fail,.nottested{color:#fff;padding:.1em .5em;border-radius:3px;font-family:sans-serif;
font-size:.85em;white-space:nowrap}
.pass{background:#2e7d32}.fail{background:#b71c1c}.nottested{background:#6d6d6d}
.construction{color:#555;font-style:italic}
table{border-collapse:collapse;margin:.3em 0 .8em;font-size:.9em;background:#fff}
th,td{border:1px solid #c9c2b3;padding:.2em .5em;text-align:left;vertical-align:top}
th{background:#e9e4d8}td.num{text-align:right;font-family:monospace;white-space:nowrap}
figure{margin:1em 0;background:#fff;padding:.5em;border:1px solid #c9c2b3}
figure img{max-width:100%;height:auto}figcaption{font-size:.9em;color:#555}
ul.log{font-family:monospace;font-size:.85em;background:#fff;border:1px solid #c9c2b3;
padding:.6em 1.8em}.meta{color:#555}
"""


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
# one line per test


def summary_texts(report: CheckReport) -> dict[str, str]:
    """One plain sentence per test: what was measured against what it had to meet."""
    key = key_figures(report)
    t = key.thresholds
    topo, rest, area, kin = key.topography, key.restoration, key.area_balance, key.kinematics
    topo_text = (f"contacts miss the map by {fmt(topo.contact_rms_m, 1)} m RMS "
                 f"(at most {fmt(topo.contact_threshold_m, 1)} m); the section shows the map's "
                 f"unit along {fmt(100 * topo.unit_agreement, 1)} % of the line (at least "
                 f"{fmt(100 * t.unit_agreement, 1)} %); dips differ by "
                 f"{fmt(topo.dip_rms_deg, 1)}° RMS (at most {fmt(t.dip_rms_deg, 1)}°)")
    faults = []
    for f in rest.faults:
        if f.cutoff_status != "not_tested":
            faults.append(f"at {f.fault} the restored cutoffs miss by up to "
                          f"{fmt(f.worst_mismatch_m)} m (at most {fmt(f.mismatch_threshold_m)} m)")
        if f.separation_status != "not_tested":
            faults.append(f"its separations spread {fmt(f.spread_m)} m "
                          f"(at most {fmt(f.spread_threshold_m)} m)")
    rest_text = (f"shortening {fmt(rest.shortening_pct, 1)} % ({fmt(rest.shortening_m)} m); "
                 f"restored bed lengths spread {fmt(rest.line_length_mismatch_pct, 2)} % "
                 f"(at most {fmt(t.line_length_spread_pct, 1)} %)"
                 + ("; " + "; ".join(faults) if faults else ""))
    area_text = (f"worst unit {area.worst_unit}: deformed area {fmt(area.worst_mismatch_pct, 2)} % "
                 f"from restored (at most {fmt(t.area_mismatch_pct, 1)} %)"
                 if area.worst_unit else "no unit measured")
    if area.detachment is not None and area.detachment.summary:
        area_text += f"; {area.detachment.summary}"
    n = kin.inconsistencies
    kin_text = (f"{n} inconsistenc{'y' if n == 1 else 'ies'}; transport "
                f"{kin.transport_direction or 'not found'}")
    fb = kin.fault_bend
    if fb.get("compared"):
        kin_text += f"; {fb['compared']} fault-bend fold(s) compared"
    elif fb:
        kin_text += "; fault-bend fold comparison not tested"
    return {"topography": topo_text, "restoration": rest_text, "area_balance": area_text,
            "kinematics": kin_text}


# ---------------------------------------------------------------------------
# the tests


def _test_section(name: str, report: CheckReport, draft: Draft, summary: str) -> str:
    test = getattr(report, name)
    body = {"topography": lambda: topography_html(report),
            "restoration": lambda: restoration_html(report, draft),
            "area_balance": lambda: area_balance_html(report),
            "kinematics": lambda: kinematics_html(report, draft)}[name]()
    return "\n".join([
        f'<h2 id="{escape(name)}">{escape(TITLES.get(name, name))} {badge(test.status)}</h2>',
        f'<p class="summary">{escape(summary[:1].upper() + summary[1:])}.</p>',
        "<h3>Verdict of each part</h3>",
        parts_table(test.parts),
        body,
    ])


def _short_reasons(parts: dict[str, Part]) -> list[str]:
    """Per part not passed (or passed by construction): its first reason, and how many
    more the test's section lists."""
    out = []
    for name, p in parts.items():
        if p.status == "pass" and not any(BY_CONSTRUCTION in r for r in p.reasons):
            continue
        if p.status == "pass":
            out.append(f"{label(name)}: {BY_CONSTRUCTION}")
            continue
        first = p.reasons[0] if p.reasons else "failed"
        more = f" (and {len(p.reasons) - 1} more)" if len(p.reasons) > 1 else ""
        word = "not tested: " if p.status == "not_tested" else ""
        out.append(f"{label(name)}: {word}{first}{more}")
    return out


# ---------------------------------------------------------------------------
# the page


def render_report(draft: Draft, report: CheckReport,
                  figures: dict[str, str | os.PathLike] | None = None) -> str:
    """The report page as a string (see :func:`write_report`)."""
    name = escape(str(draft.name or report.section or "section"))
    texts = summary_texts(report)
    summary_rows = []
    for k in TESTS:
        test = getattr(report, k)
        why = "; ".join(_short_reasons(test.parts))
        summary_rows.append(
            f'<tr><td><a href="#{k}">{escape(label(k).capitalize())}</a></td>'
            f"<td>{badge(test.status)}</td><td>{escape(texts[k])}</td>"
            f"<td>{escape(why) if why else DASH}</td></tr>")
    fig_html = "".join(_image(n, p) for n, p in (figures or {}).items())
    line = draft.line
    html = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f"<title>Section {name}: checks</title><style>{_CSS}</style></head><body><main>",
        f"<h1>Section {name} {badge(report.status)}</h1>",
        f'<p class="meta">Method: {escape(str(draft.method))} · vertical exaggeration '
        f"{float(draft.ve):g} (checks are measured at true scale) · length {fmt(line.length)} m"
        f" · bearing {compass(line.start_bearing)}</p>",
        f'<div class="caution">Caution: {escape(CAUTION)}</div>',
        *(f'<div class="note">{escape(n)}</div>' for n in report.notes),
        "<table><tr><th>Test</th><th>Result</th><th>Measured (required)</th><th>Why</th></tr>",
        *summary_rows,
        "</table>",
        '<p class="meta">PASS: measured and within its threshold. FAIL: measured and beyond '
        "it. NOT TESTED: nothing to measure (the reason is given); never counted as a pass. "
        f"“{BY_CONSTRUCTION}”: measured, but a constant-thickness draft built by mapsection "
        "cannot fail it, so it is no evidence for the section.</p>",
        fig_html,
        *(_test_section(k, report, draft, texts[k]) for k in TESTS),
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
