"""report.html: one self-contained page with the four tests of a section, for people.

Each test opens with its verdict (PASS, FAIL or NOT TESTED), one summary line and the
verdict of each of its parts with the reasons; then its tables, every column labelled
with its unit. Lengths are in metres, angles to 0.1 degree, directions as compass
bearings; a figure not measured is a dash, and no value reads ``-0``.

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
from collections.abc import Iterable, Sequence
from html import escape
from pathlib import Path
from typing import Any

import numpy as np

from .._atomic import atomic_file
from ..caution import CAUTION
from ..checks import TESTS, CheckReport, key_figures
from ..checks.status import BY_CONSTRUCTION, Part, label
from ..checks.summary import concealed_text
from ..draft import Draft

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
BADGES = {"pass": ("pass", "PASS"), "fail": ("fail", "FAIL"),
          "not_tested": ("nottested", "NOT TESTED")}
DASH = "–"

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


# ---------------------------------------------------------------------------
# formatting


def fmt(value: Any, decimals: int = 0) -> str:
    """A number to ``decimals`` places; a dash when missing or not finite; never ``-0``."""
    if value is None or isinstance(value, bool):
        return DASH if value is None else ("yes" if value else "no")
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if not math.isfinite(v):
        return DASH
    text = f"{v:.{decimals}f}"
    if text.startswith("-") and not any(c in "123456789" for c in text):
        text = text[1:]  # a negative value that rounds to zero
    return text


_POINTS = ("N", "NNE", "NE", "ENE", "E", "ESE", "SE", "SSE",
           "S", "SSW", "SW", "WSW", "W", "WNW", "NW", "NNW")


def compass(azimuth: float) -> str:
    """A bearing as three digits and its point of the compass, e.g. ``062° (ENE)``."""
    if azimuth is None or not math.isfinite(azimuth):
        return DASH
    az = float(azimuth) % 360.0
    whole = int(round(az)) % 360
    return f"{whole:03d}° ({_POINTS[int((az + 11.25) // 22.5) % 16]})"


def _badge(status: str) -> str:
    cls, text = BADGES.get(status, ("nottested", status.upper()))
    return f'<span class="{cls}">{text}</span>'


def _table(head: Sequence[str], rows: Iterable[Sequence[Any]], numeric: Sequence[int] = ()
           ) -> str:
    """A table of formatted cells (strings, or (html, raw) for markup already escaped)."""
    rows = list(rows)
    if not rows:
        return "<p class='meta'>none</p>"
    out = ["<table><tr>" + "".join(f"<th>{escape(h)}</th>" for h in head) + "</tr>"]
    for r in rows:
        cells = []
        for i, c in enumerate(r):
            cls = ' class="num"' if i in numeric else ""
            html = c[0] if isinstance(c, tuple) else escape(str(c))
            cells.append(f"<td{cls}>{html}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    return "".join(out) + "</table>"


def _figures_table(rows: Iterable[tuple[str, ...]]) -> str:
    """What was measured (with its unit), its value and, where there is one, what the test
    requires of it."""
    out = ["<table><tr><th>Figure</th><th>Value</th><th>Required</th></tr>"]
    for label_, value, *need in rows:
        num = ' class="num"' if _looks_numeric(value) else ""
        out.append(f"<tr><td>{escape(label_)}</td><td{num}>{escape(value)}</td>"
                   f"<td>{escape(need[0]) if need else ''}</td></tr>")
    return "".join(out) + "</table>"


def _looks_numeric(text: str) -> bool:
    return text == DASH or text.lstrip("-").replace(".", "", 1).isdigit()


def _parts_table(parts: dict[str, Part]) -> str:
    rows = []
    for name, p in parts.items():
        why = "; ".join(p.reasons)
        if p.status == "pass" and BY_CONSTRUCTION in why:
            why_html = f'<span class="construction">{escape(why)}</span>'
        else:
            why_html = escape(why) if why else DASH
        rows.append((label(name).capitalize(), (_badge(p.status), ""), (why_html, "")))
    return _table(("Part", "Result", "Why"), rows)


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


def _topography(report: CheckReport) -> str:
    topo = report.topography
    t = report.thresholds
    parts = [_figures_table([
        ("Contact misfit RMS (m)", fmt(topo.contact_rms_m, 1),
         f"at most {fmt(topo.contact_threshold_m, 1)} m"),
        ("Worst contact misfit (m)", fmt(topo.contact_worst_m, 1)),
        ("Worst contact misfit: map contact at (m)", fmt(topo.contact_worst_distance_m)),
        ("Map contacts on the line", fmt(topo.n_map_contacts)),
        ("Contacts left without a partner", fmt(len(topo.unpaired_map_contacts)
                                                + len(topo.unpaired_section_contacts)),
         f"at most {fmt(topo.max_unpaired)}"),
        ("Pairing radius (m)", fmt(topo.pairing_radius_m)),
        ("Unit agreement (% of the compared length)", fmt(100 * topo.unit_agreement, 1),
         f"at least {fmt(100 * t.unit_agreement, 1)} %"),
        ("Compared length (m)", fmt(topo.compared_length_m)),
        ("Dip misfit RMS (°)", fmt(topo.dip_rms_deg, 1), f"at most {fmt(t.dip_rms_deg, 1)}°"),
        ("Worst dip misfit (°)", fmt(topo.dip_worst_deg, 1)),
        ("Worst dip misfit: attitude", topo.dip_worst_id or DASH),
    ])]
    diag = topo.diagnosis
    if diag is not None:
        parts.append("<h3>Likely causes, strongest first</h3>")
        if diag.causes:
            parts.append("<ol>" + "".join(f"<li>{escape(c.text)}</li>" for c in diag.causes)
                         + "</ol>")
        else:
            parts.append(f"<p>{escape(diag.lines()[0])}</p>")
        fits = [f for f in diag.thicknesses if f.status != "not_tested"]
        if fits:
            parts.append("<h3>Unit thicknesses that best fit the map contacts and the dips</h3>")
            parts.append(_table(
                ("Unit", "Best fit (m)", "± (m)", "Column (m)", "Difference (m)",
                 "Contact pairs", "Result"),
                [(f.unit, fmt(f.fitted_m), fmt(f.standard_error_m), fmt(f.column_m),
                  fmt(f.difference_m), fmt(f.n_pairs),
                  (_badge("fail") + " a likely cause" if f.status == "fail" else "agrees", ""))
                 for f in fits], numeric=(1, 2, 3, 4, 5)))
    parts.append("<h3>Contact misfits</h3>")
    parts.append(_table(
        ("Top of", "Map contact at (m)", "Section contact at (m)", "Misfit (m)",
         "Ground elevation (m)", "Kind"),
        [(m.top_of, fmt(m.map_distance_m, 1), fmt(m.section_distance_m, 1),
          fmt(m.misfit_m, 1), fmt(m.elevation_m), m.kind) for m in topo.contact_misfits],
        numeric=(1, 2, 3, 4)))
    unpaired = ([("map", c) for c in topo.unpaired_map_contacts]
                + [("section", c) for c in topo.unpaired_section_contacts])
    if unpaired:
        parts.append("<h3>Contacts without a partner</h3>")
        parts.append(_table(
            ("Shown by", "Top of", "At (m)", "Ground elevation (m)", "Units either side"),
            [(who, c.top_of, fmt(c.distance_m), fmt(c.elevation_m), c.units or DASH)
             for who, c in unpaired], numeric=(2, 3)))
    if topo.fault_contacts:
        parts.append("<h3>Contacts at faults (not paired)</h3>")
        parts.append(_table(("Units either side", "At (m)", "Ground elevation (m)"),
                            [(c.units or c.top_of, fmt(c.distance_m), fmt(c.elevation_m))
                             for c in topo.fault_contacts], numeric=(1, 2)))
    concealed = getattr(topo, "concealed", [])
    if concealed:
        parts.append("<h3>Concealed ground: cover and intrusive units (not compared)</h3>")
        parts.append(f"<p>{escape(concealed_text(topo))}</p>")
        parts.append(_table(
            ("From (m)", "To (m)", "Length (m)", "Map unit", "Kind"),
            [(fmt(c.from_m), fmt(c.to_m), fmt(c.to_m - c.from_m), c.unit,
              "cover (bedrock concealed)" if c.kind == "cover"
              else "intrusive (in the section by construction)") for c in concealed],
            numeric=(0, 1, 2)))
    parts.append("<h3>Where the section and the map disagree on the unit</h3>")
    parts.append(_table(
        ("From (m)", "To (m)", "Length (m)", "Map unit", "Section unit"),
        [(fmt(d.from_m), fmt(d.to_m), fmt(d.to_m - d.from_m), d.map_unit,
          d.section_unit or "none") for d in topo.disagreements], numeric=(0, 1, 2)))
    parts.append("<h3>Dips: section against measured (apparent dips, + descending toward "
                 "increasing distance)</h3>")
    parts.append(_table(
        ("Attitude", "At (m)", "Measured (°)", "Section (°)", "Misfit (°)", "Nearest horizon",
         "Horizon distance (m)", "Poorly constrained"),
        [(d.id, fmt(d.distance_m), fmt(d.measured_deg, 1), fmt(d.section_deg, 1),
          fmt(d.misfit_deg, 1), f"top of {d.top_of}", fmt(d.horizon_distance_m),
          "yes" if d.poorly_constrained else "no") for d in topo.dip_misfits],
        numeric=(1, 2, 3, 4, 6)))
    return "\n".join(parts)


def _restoration(report: CheckReport, draft: Draft) -> str:
    r = report.restoration
    t = report.thresholds
    parts = [_figures_table([
        ("Pin line at (m)", fmt(r.pin_m), r.pin_source),
        ("Loose line at (m)", fmt(r.loose_m)),
        ("Shortening (%)", fmt(r.shortening_pct, 1)),
        ("Shortening (m)", fmt(r.shortening_m)),
        ("Spread of restored bed lengths (%)", fmt(r.line_length_mismatch_pct, 2),
         f"at most {fmt(t.line_length_spread_pct, 1)} %"),
        ("Restored loose line: spread (m)", fmt(r.loose_line_spread_m)),
        ("Restored loose line: angle from the vertical (°)", fmt(r.loose_line_angle_deg, 1)),
        ("Gaps and overlaps between fault blocks (% of the restored area)",
         fmt(r.gap_overlap_pct, 2), f"at most {fmt(t.line_length_spread_pct, 1)} %"),
    ])]
    if report.sequences:
        parts.append(_sequences(report))
    fr = r.at_faults
    if fr is not None:
        parts.append("<h3>At each fault: the hanging wall restored by the fault's slip</h3>")
        parts.append(_table(
            ("Fault", "Meets the ground at (m)", "Slip (m)", "Slip from",
             "Worst cutoff mismatch (m)", "At the top of", "Allowed (m)", "Result"),
            [(f.fault, fmt(f.distance_m), fmt(f.slip_m), f.slip_source or DASH,
              fmt(f.worst_m), f.worst_top_of or DASH, fmt(f.threshold_m),
              (_badge(f.status), "")) for f in fr.cutoffs.faults], numeric=(1, 2, 4, 6)))
        rows = []
        for f in fr.cutoffs.faults:
            for h in f.horizons:
                rows.append((f.fault, h.top_of, fmt(h.separation_m),
                             fmt(h.recorded_separation_m), fmt(abs(h.mismatch_m)),
                             h.kind, fmt(h.along_bed_m), fmt(h.cutoff_angle_deg, 1),
                             "eroded (above the ground)" if h.projected else "below the ground",
                             "yes" if h.exceeds else "no"))
        parts.append("<h3>Cutoffs per horizon (mismatch along the fault: overlap where the "
                     "hanging wall is carried too far, gap where it falls short)</h3>")
        parts.append(_table(
            ("Fault", "Top of", "Separation (m)", "Recorded separation (m)", "Mismatch (m)",
             "Gap or overlap", "Along the bed (m)", "Cutoff angle (°)", "Cut", "Too large"),
            rows, numeric=(2, 3, 4, 6, 7)))
        parts.append("<h3>Separation consistency along each fault</h3>")
        parts.append(_table(
            ("Fault", "Horizons compared", "Mean separation (m)", "Spread (m)",
             "Spread (% of the mean)", "Allowed (m)", "Result", "Why"),
            [(s.fault, ", ".join(f"{k} {fmt(v)} m" for k, v in s.separations_m.items())
              or DASH, fmt(s.mean_m), fmt(s.spread_m), fmt(s.spread_pct, 1),
              fmt(s.threshold_m), (_badge(s.status), ""), "; ".join(s.reasons) or DASH)
             for s in fr.separations.faults], numeric=(2, 3, 4, 5)))
    parts.append("<h3>Line lengths per horizon</h3>")
    parts.append(_table(
        ("Top of", "Restored elevation (m)", "Deformed length (m)", "Bed length (m)",
         "Restored length (m)", "Shortening (m)", "Shortening (%)", "Reaches the loose line"),
        [(h.top_of, fmt(h.restored_elevation_m), fmt(h.deformed_length_m),
          fmt(h.bed_length_m), fmt(h.restored_length_m), fmt(h.shortening_m),
          fmt(h.shortening_pct, 1), "yes" if h.reaches_loose else "no")
         for h in r.horizons], numeric=(1, 2, 3, 4, 5, 6)))
    if r.gaps:
        parts.append("<h3>Gaps and overlaps between fault blocks in the restored state "
                     "(+ gap, − overlap)</h3>")
        parts.append(_table(
            ("Unit", "Between blocks", "At its top (m)", "At its base (m)", "Gap area (m²)",
             "Overlap area (m²)"),
            [(g.unit, f"{g.blocks[0]} and {g.blocks[1]}", fmt(g.top_gap_m),
              fmt(g.base_gap_m), fmt(g.gap_area_m2), fmt(g.overlap_area_m2)) for g in r.gaps],
            numeric=(2, 3, 4, 5)))
    return "\n".join(parts)


def _sequences(report: CheckReport) -> str:
    """Each sequence restored to its own datum, and what was eroded of the older ones."""
    rows, eroded = [], []
    for q in report.sequences:
        for test in ("restoration", "area_balance"):
            d = q.get(test, {})
            st = d.get("status", "not_tested")
            rows.append((q["sequence"], TITLES.get(test, test), q["datum"], (_badge(st), ""),
                         "; ".join(d.get("reasons", [])) or DASH))
        for h in q.get("eroded", {}).get("horizons", []):
            eroded.append((q["sequence"], h["top_of"], fmt(h["eroded_length_m"]),
                           fmt(h["restored_length_m"])))
    out = ["<h3>Per sequence (unconformities): each restored to its own datum; the figures "
           "above are the oldest sequence's</h3>",
           _table(("Sequence", "Test", "Datum", "Result", "Why"), rows)]
    if eroded:
        out += ["<h3>Eroded above the unconformity or the ground (reported, not drawn as "
                "restored rock)</h3>",
                _table(("Sequence", "Top of", "Eroded bed length (m)", "Restored length (m)"),
                       eroded, numeric=(2, 3))]
    return "\n".join(out)


def _area_balance(report: CheckReport) -> str:
    a = report.area_balance
    parts = [_table(
        ("Unit", "Deformed area (km²)", "Restored area (km²)", "Mismatch (%)",
         "Allowed (%)", "Fault blocks", "Result"),
        [(u.unit, fmt(u.deformed_area_m2 / 1e6, 3), fmt(u.restored_area_m2 / 1e6, 3),
          fmt(u.mismatch_pct, 2), fmt(a.threshold_pct, 1), ", ".join(str(b) for b in u.blocks),
          (_badge("pass" if u.passed else "fail"), "")) for u in a.units],
        numeric=(1, 2, 3, 4))]
    fit = a.detachment
    if fit is not None:
        cav = "".join(f"<li>{escape(str(c))}</li>" for c in fit.caveats)
        parts.append(f'<div class="note"><b>Depth to detachment:</b> {escape(fit.summary)}'
                     + (f"<ul>{cav}</ul>" if cav else "") + "</div>")
        parts.append(_figures_table([
            ("Displacement (m)", fmt(fit.displacement_m)),
            ("Detachment elevation (m)", fmt(fit.detachment_elevation_m)),
            (f"Depth to detachment below {fit.datum} (m)", fmt(fit.depth_to_detachment_m)),
            ("R²", fmt(fit.r_squared, 3)),
            ("Detachment shift per 10 m of error in the regional level (m)",
             fmt(fit.shift_per_10m_regional_m)),
        ]))
        parts.append("<h3>Excess area against depth</h3>")
        parts.append(_table(
            ("Top of", "Regional elevation (m)", "Depth (m)", "Excess area (km²)"),
            [(p.top_of, fmt(p.regional_elevation_m), fmt(p.depth_m),
              fmt(p.excess_area_m2 / 1e6, 3))
             for p in fit.points], numeric=(1, 2, 3)))
    return "\n".join(parts)


def _bearing_at(draft: Draft, distance: float, sign: int) -> str:
    """The compass bearing of the direction toward increasing (+1) or decreasing (-1)
    distance, at a distance along the line."""
    try:
        az = float(np.asarray(draft.line.azimuth_at(np.array([distance])))[0])
    except Exception:  # a draft without a real line: no bearing to give
        return DASH
    return compass(az if sign > 0 else az + 180.0)


def _kinematics(report: CheckReport, draft: Draft) -> str:
    k = report.kinematics
    parts = []
    faults = draft.faults
    if faults:
        names = k.transport.get("faults", {})
        rows = []
        for f in faults:
            c = np.asarray(f.geometry.coords) if f.geometry is not None else np.empty((0, 2))
            x = float(c[np.argmax(c[:, 1]), 0]) if len(c) else float("nan")  # its upper end
            d = names.get(f.name)
            sign = 1 if d == "toward increasing distance" else -1 if d else 0
            rows.append((f.name, f.sense or DASH, fmt(x), fmt(f.dip, 1),
                         compass(f.dip_direction), fmt(f.apparent_dip, 1),
                         f"{d}, {_bearing_at(draft, x, sign)}" if sign else DASH))
        parts.append("<h3>Faults</h3>")
        parts.append(_table(("Fault", "Sense", "Upper end at (m)", "Dip (°)", "Dip direction",
                             "Apparent dip in the section (°)", "Transports its hanging wall"),
                            rows, numeric=(2, 3, 5)))
        seps = k.separations.get("faults", {})
        rows = [(name, top, fmt(v), "measured" if top in e.get("measured", ()) else "recorded")
                for name, e in seps.items() for top, v in e["separations_m"].items()]
        parts.append("<h3>Separations (+ hanging wall up)</h3>")
        parts.append(_table(("Fault", "Top of", "Separation (m)", "Source"), rows, numeric=(2,)))
    if k.cut_up_section.get("failures"):
        parts.append("<h3>Cutting down-section in the transport direction</h3>")
        parts.append(_table(("Fault", "Top of", "At (m)", "Elevation (m)", "Cutoff angle (°)"),
                            [(c["fault"], c["top_of"], fmt(c["distance_m"]),
                              fmt(c["elevation_m"]), fmt(c["cutoff_angle_deg"], 1))
                             for c in k.cut_up_section["failures"]], numeric=(2, 3, 4)))
    if k.crossings.get("where"):
        parts.append("<h3>Horizons crossing</h3>")
        parts.append(_table(("Top of", "Crosses", "Fault block", "At (m)", "Elevation (m)"),
                            [(c["top_of"], "itself" if c["kind"] == "self" else
                              f"top of {c['other']}", fmt(c["block"]), fmt(c["distance_m"]),
                              fmt(c["elevation_m"])) for c in k.crossings["where"]],
                            numeric=(2, 3, 4)))
    if k.fault_bend_folds:
        rows = []
        for e in k.fault_bend_folds:
            mis = e.get("misfit") or {}
            rows.append((e["fault"], fmt(e["distance_m"]), (_badge(e["status"]), ""),
                         fmt(mis.get("rms_m")), fmt(mis.get("hinge_offset_m")),
                         fmt(e.get("tolerance_m")), "; ".join(e.get("reasons", [])) or DASH))
        parts.append("<h3>Fault-bend fold model (Suppe 1983) against the draft</h3>")
        parts.append(_table(("Fault", "At (m)", "Result", "RMS misfit (m)",
                             "Hinge offset (m)", "Tolerance (m)", "Why"), rows,
                            numeric=(1, 3, 4, 5)))
    return "\n".join(parts)


def _test_section(name: str, report: CheckReport, draft: Draft, summary: str) -> str:
    test = getattr(report, name)
    body = {"topography": lambda: _topography(report),
            "restoration": lambda: _restoration(report, draft),
            "area_balance": lambda: _area_balance(report),
            "kinematics": lambda: _kinematics(report, draft)}[name]()
    return "\n".join([
        f'<h2 id="{escape(name)}">{escape(TITLES.get(name, name))} {_badge(test.status)}</h2>',
        f'<p class="summary">{escape(summary[:1].upper() + summary[1:])}.</p>',
        "<h3>Verdict of each part</h3>",
        _parts_table(test.parts),
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
            f"<td>{_badge(test.status)}</td><td>{escape(texts[k])}</td>"
            f"<td>{escape(why) if why else DASH}</td></tr>")
    fig_html = "".join(_image(n, p) for n, p in (figures or {}).items())
    line = draft.line
    html = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f"<title>Section {name}: checks</title><style>{_CSS}</style></head><body><main>",
        f"<h1>Section {name} {_badge(report.status)}</h1>",
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
