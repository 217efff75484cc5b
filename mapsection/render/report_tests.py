"""The body of each test's section of report.html: its figures, then its tables.

:func:`topography_html`, :func:`restoration_html`, :func:`area_balance_html` and
:func:`kinematics_html` each turn one test's result (and the draft, where its
faults or line are needed) into HTML; :mod:`mapsection.render.report` puts them
on the page under the test's verdict.
"""

from __future__ import annotations

from html import escape

import numpy as np

from ..checks import CheckReport
from ..checks.summary import concealed_text
from ..draft import Draft
from .report_parts import DASH, badge, compass, figures_table, fmt, table

__all__ = ["area_balance_html", "kinematics_html", "restoration_html", "topography_html"]


def topography_html(report: CheckReport) -> str:
    """The topography test: its figures, the likely causes, then its misfits."""
    topo = report.topography
    t = report.thresholds
    parts = [figures_table([
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
    if topo.diagnosis is not None:
        parts += _diagnosis(topo.diagnosis)
    parts += _contacts(topo)
    parts += _concealed(topo)
    parts.append("<h3>Where the section and the map disagree on the unit</h3>")
    parts.append(table(
        ("From (m)", "To (m)", "Length (m)", "Map unit", "Section unit"),
        [(fmt(d.from_m), fmt(d.to_m), fmt(d.to_m - d.from_m), d.map_unit,
          d.section_unit or "none") for d in topo.disagreements], numeric=(0, 1, 2)))
    parts.append("<h3>Dips: section against measured (apparent dips, + descending toward "
                 "increasing distance)</h3>")
    parts.append(table(
        ("Attitude", "At (m)", "Measured (°)", "Section (°)", "Misfit (°)", "Nearest horizon",
         "Horizon distance (m)", "Poorly constrained"),
        [(d.id, fmt(d.distance_m), fmt(d.measured_deg, 1), fmt(d.section_deg, 1),
          fmt(d.misfit_deg, 1), f"top of {d.top_of}", fmt(d.horizon_distance_m),
          "yes" if d.poorly_constrained else "no") for d in topo.dip_misfits],
        numeric=(1, 2, 3, 4, 6)))
    return "\n".join(parts)


def _diagnosis(diag) -> list[str]:
    """The likely causes of a topography misfit and the unit thicknesses that fit best."""
    parts = ["<h3>Likely causes, strongest first</h3>"]
    if diag.causes:
        parts.append("<ol>" + "".join(f"<li>{escape(c.text)}</li>" for c in diag.causes)
                     + "</ol>")
    else:
        parts.append(f"<p>{escape(diag.lines()[0])}</p>")
    fits = [f for f in diag.thicknesses if f.status != "not_tested"]
    if fits:
        parts.append("<h3>Unit thicknesses that best fit the map contacts and the dips</h3>")
        parts.append(table(
            ("Unit", "Best fit (m)", "± (m)", "Column (m)", "Difference (m)",
             "Contact pairs", "Result"),
            [(f.unit, fmt(f.fitted_m), fmt(f.standard_error_m), fmt(f.column_m),
              fmt(f.difference_m), fmt(f.n_pairs),
              (badge("fail") + " a likely cause" if f.status == "fail" else "agrees", ""))
             for f in fits], numeric=(1, 2, 3, 4, 5)))
    return parts


def _contacts(topo) -> list[str]:
    """The contact misfits, the contacts without a partner and those at faults."""
    parts = ["<h3>Contact misfits</h3>", table(
        ("Top of", "Map contact at (m)", "Section contact at (m)", "Misfit (m)",
         "Ground elevation (m)", "Kind"),
        [(m.top_of, fmt(m.map_distance_m, 1), fmt(m.section_distance_m, 1),
          fmt(m.misfit_m, 1), fmt(m.elevation_m), m.kind) for m in topo.contact_misfits],
        numeric=(1, 2, 3, 4))]
    unpaired = ([("map", c) for c in topo.unpaired_map_contacts]
                + [("section", c) for c in topo.unpaired_section_contacts])
    if unpaired:
        parts.append("<h3>Contacts without a partner</h3>")
        parts.append(table(
            ("Shown by", "Top of", "At (m)", "Ground elevation (m)", "Units either side"),
            [(who, c.top_of, fmt(c.distance_m), fmt(c.elevation_m), c.units or DASH)
             for who, c in unpaired], numeric=(2, 3)))
    if topo.fault_contacts:
        parts.append("<h3>Contacts at faults (not paired)</h3>")
        parts.append(table(("Units either side", "At (m)", "Ground elevation (m)"),
                           [(c.units or c.top_of, fmt(c.distance_m), fmt(c.elevation_m))
                            for c in topo.fault_contacts], numeric=(1, 2)))
    return parts


def _concealed(topo) -> list[str]:
    """The stretches of cover and intrusive units at the ground, not compared."""
    concealed = getattr(topo, "concealed", [])
    if not concealed:
        return []
    return ["<h3>Concealed ground: cover and intrusive units (not compared)</h3>",
            f"<p>{escape(concealed_text(topo))}</p>",
            table(("From (m)", "To (m)", "Length (m)", "Map unit", "Kind"),
                  [(fmt(c.from_m), fmt(c.to_m), fmt(c.to_m - c.from_m), c.unit,
                    "cover (bedrock concealed)" if c.kind == "cover"
                    else "intrusive (in the section by construction)") for c in concealed],
                  numeric=(0, 1, 2))]


def restoration_html(report: CheckReport, draft: Draft) -> str:
    """The restoration test: its figures, each fault's cutoffs, the line lengths, the gaps."""
    r = report.restoration
    t = report.thresholds
    parts = [figures_table([
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
        parts += _at_faults(fr)
    parts.append("<h3>Line lengths per horizon</h3>")
    parts.append(table(
        ("Top of", "Restored elevation (m)", "Deformed length (m)", "Bed length (m)",
         "Restored length (m)", "Shortening (m)", "Shortening (%)", "Reaches the loose line"),
        [(h.top_of, fmt(h.restored_elevation_m), fmt(h.deformed_length_m),
          fmt(h.bed_length_m), fmt(h.restored_length_m), fmt(h.shortening_m),
          fmt(h.shortening_pct, 1), "yes" if h.reaches_loose else "no")
         for h in r.horizons], numeric=(1, 2, 3, 4, 5, 6)))
    if r.gaps:
        parts.append("<h3>Gaps and overlaps between fault blocks in the restored state "
                     "(+ gap, − overlap)</h3>")
        parts.append(table(
            ("Unit", "Between blocks", "At its top (m)", "At its base (m)", "Gap area (m²)",
             "Overlap area (m²)"),
            [(g.unit, f"{g.blocks[0]} and {g.blocks[1]}", fmt(g.top_gap_m),
              fmt(g.base_gap_m), fmt(g.gap_area_m2), fmt(g.overlap_area_m2)) for g in r.gaps],
            numeric=(2, 3, 4, 5)))
    return "\n".join(parts)


_SEQUENCE_TESTS = {"restoration": "Restoration (line lengths)", "area_balance": "Area balance"}


def _sequences(report: CheckReport) -> str:
    """Each sequence restored to its own datum, and what was eroded of the older ones."""
    rows, eroded = [], []
    for q in report.sequences:
        for test in ("restoration", "area_balance"):
            d = q.get(test, {})
            st = d.get("status", "not_tested")
            rows.append((q["sequence"], _SEQUENCE_TESTS[test], q["datum"], (badge(st), ""),
                         "; ".join(d.get("reasons", [])) or DASH))
        for h in q.get("eroded", {}).get("horizons", []):
            eroded.append((q["sequence"], h["top_of"], fmt(h["eroded_length_m"]),
                           fmt(h["restored_length_m"])))
    out = ["<h3>Per sequence (unconformities): each restored to its own datum; the figures "
           "above are the oldest sequence's</h3>",
           table(("Sequence", "Test", "Datum", "Result", "Why"), rows)]
    if eroded:
        out += ["<h3>Eroded above the unconformity or the ground (reported, not drawn as "
                "restored rock)</h3>",
                table(("Sequence", "Top of", "Eroded bed length (m)", "Restored length (m)"),
                      eroded, numeric=(2, 3))]
    return "\n".join(out)


def _at_faults(fr) -> list[str]:
    """Each fault's restored cutoffs, per fault and per horizon, and its separations."""
    parts = []
    parts.append("<h3>At each fault: the hanging wall restored by the fault's slip</h3>")
    parts.append(table(
        ("Fault", "Meets the ground at (m)", "Slip (m)", "Slip from",
         "Worst cutoff mismatch (m)", "At the top of", "Allowed (m)", "Result"),
        [(f.fault, fmt(f.distance_m), fmt(f.slip_m), f.slip_source or DASH,
          fmt(f.worst_m), f.worst_top_of or DASH, fmt(f.threshold_m),
          (badge(f.status), "")) for f in fr.cutoffs.faults], numeric=(1, 2, 4, 6)))
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
    parts.append(table(
        ("Fault", "Top of", "Separation (m)", "Recorded separation (m)", "Mismatch (m)",
         "Gap or overlap", "Along the bed (m)", "Cutoff angle (°)", "Cut", "Too large"),
        rows, numeric=(2, 3, 4, 6, 7)))
    parts.append("<h3>Separation consistency along each fault</h3>")
    parts.append(table(
        ("Fault", "Horizons compared", "Mean separation (m)", "Spread (m)",
         "Spread (% of the mean)", "Allowed (m)", "Result", "Why"),
        [(s.fault, ", ".join(f"{k} {fmt(v)} m" for k, v in s.separations_m.items())
          or DASH, fmt(s.mean_m), fmt(s.spread_m), fmt(s.spread_pct, 1),
          fmt(s.threshold_m), (badge(s.status), ""), "; ".join(s.reasons) or DASH)
         for s in fr.separations.faults], numeric=(2, 3, 4, 5)))
    return parts


def area_balance_html(report: CheckReport) -> str:
    """The area-balance test: each unit's areas, then the depth-to-detachment fit."""
    a = report.area_balance
    parts = [table(
        ("Unit", "Deformed area (km²)", "Restored area (km²)", "Mismatch (%)",
         "Allowed (%)", "Fault blocks", "Result"),
        [(u.unit, fmt(u.deformed_area_m2 / 1e6, 3), fmt(u.restored_area_m2 / 1e6, 3),
          fmt(u.mismatch_pct, 2), fmt(a.threshold_pct, 1), ", ".join(str(b) for b in u.blocks),
          (badge("pass" if u.passed else "fail"), "")) for u in a.units],
        numeric=(1, 2, 3, 4))]
    fit = a.detachment
    if fit is not None:
        cav = "".join(f"<li>{escape(str(c))}</li>" for c in fit.caveats)
        parts.append(f'<div class="note"><b>Depth to detachment:</b> {escape(fit.summary)}'
                     + (f"<ul>{cav}</ul>" if cav else "") + "</div>")
        parts.append(figures_table([
            ("Displacement (m)", fmt(fit.displacement_m)),
            ("Detachment elevation (m)", fmt(fit.detachment_elevation_m)),
            (f"Depth to detachment below {fit.datum} (m)", fmt(fit.depth_to_detachment_m)),
            ("R²", fmt(fit.r_squared, 3)),
            ("Detachment shift per 10 m of error in the regional level (m)",
             fmt(fit.shift_per_10m_regional_m)),
        ]))
        parts.append("<h3>Excess area against depth</h3>")
        parts.append(table(
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


def kinematics_html(report: CheckReport, draft: Draft) -> str:
    """The kinematics test: the faults and their separations, then what failed."""
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
        parts.append(table(("Fault", "Sense", "Upper end at (m)", "Dip (°)", "Dip direction",
                            "Apparent dip in the section (°)", "Transports its hanging wall"),
                           rows, numeric=(2, 3, 5)))
        seps = k.separations.get("faults", {})
        rows = [(name, top, fmt(v), "measured" if top in e.get("measured", ()) else "recorded")
                for name, e in seps.items() for top, v in e["separations_m"].items()]
        parts.append("<h3>Separations (+ hanging wall up)</h3>")
        parts.append(table(("Fault", "Top of", "Separation (m)", "Source"), rows, numeric=(2,)))
    if k.cut_up_section.get("failures"):
        parts.append("<h3>Cutting down-section in the transport direction</h3>")
        parts.append(table(("Fault", "Top of", "At (m)", "Elevation (m)", "Cutoff angle (°)"),
                           [(c["fault"], c["top_of"], fmt(c["distance_m"]),
                             fmt(c["elevation_m"]), fmt(c["cutoff_angle_deg"], 1))
                            for c in k.cut_up_section["failures"]], numeric=(2, 3, 4)))
    if k.crossings.get("where"):
        parts.append("<h3>Horizons crossing</h3>")
        parts.append(table(("Top of", "Crosses", "Fault block", "At (m)", "Elevation (m)"),
                           [(c["top_of"], "itself" if c["kind"] == "self" else
                             f"top of {c['other']}", fmt(c["block"]), fmt(c["distance_m"]),
                             fmt(c["elevation_m"])) for c in k.crossings["where"]],
                           numeric=(2, 3, 4)))
    if k.fault_bend_folds:
        rows = []
        for e in k.fault_bend_folds:
            mis = e.get("misfit") or {}
            rows.append((e["fault"], fmt(e["distance_m"]), (badge(e["status"]), ""),
                         fmt(mis.get("rms_m")), fmt(mis.get("hinge_offset_m")),
                         fmt(e.get("tolerance_m")), "; ".join(e.get("reasons", [])) or DASH))
        parts.append("<h3>Fault-bend fold model (Suppe 1983) against the draft</h3>")
        parts.append(table(("Fault", "At (m)", "Result", "RMS misfit (m)",
                            "Hinge offset (m)", "Tolerance (m)", "Why"), rows,
                           numeric=(1, 3, 4, 5)))
    return "\n".join(parts)

