"""Kinematics: could the section have formed this way?

Consistency checks, each reported with where it fails (distance along the line):

* one transport direction across a contractional section: a thrust (or
  reverse fault) transports its hanging wall toward the side its trace rises
  to, i.e. away from the side it dips toward; the section's direction is the
  majority, the other faults are listed as exceptions;
* thrusts cut up-section in the transport direction: at each hanging-wall
  cutoff the fault climbs faster than the beds (a positive cutoff angle);
* separations agree with each fault's sense (positive, hanging wall up, for
  thrust and reverse faults; negative for normal faults);
* no horizon crosses itself or another horizon of the same fault block
  (touching at an end is allowed).

Where a thrust cuts horizons and carries a hanging-wall anticline, the fault-bend
fold forward model (Suppe 1983, Am. J. Sci. 283; :mod:`mapsection.checks.fbf`)
is run at the measured slip and compared with the draft: it passes when the RMS
elevation misfit and the largest offset of a model hinge from the draft's nearest
hinge are both within :func:`fbf_tolerance_m`. Where the model cannot run (no
first-mode solution, no anticline, no reverse slip) the comparison is
``not_tested`` with its reason and counts as nothing compared.

Every part, and the test as a whole, has a ``status`` ("pass", "fail" or
"not_tested") and ``reasons``: the test passes only when some part was measured
and none failed.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import shapely
from shapely.geometry import LineString, Point

from ..draft import Draft
from ..errors import ParameterError
from .fbf import compare_with_draft, fault_bend_fold
from .geometry import FaultBlocks, fault_blocks, joined_horizons, line_xy, snap_tolerance
from .restore import Restoration
from .status import Part

__all__ = ["Kinematics", "check_kinematics", "horizon_crossings", "fbf_tolerance_m"]


def _kind(sense: str | None) -> str | None:
    s = (sense or "").strip().lower()
    if "thrust" in s or "reverse" in s:
        return "contractional"
    if "normal" in s or "detachment" in s:
        return "extensional"
    return None


def _dir_name(d: int | None) -> str | None:
    return {1: "toward increasing distance", -1: "toward decreasing distance"}.get(d)


def fbf_tolerance_m(ramp_height_m: float) -> float:
    """Misfit tolerance of the fault-bend fold comparison (RMS elevation misfit and hinge
    offset): the larger of 50 m and 10 % of the ramp height (the tool's default for a
    draft, not a published rule)."""
    return max(50.0, 0.1 * ramp_height_m)


@dataclass
class Kinematics:
    passed: bool
    transport_direction: int | None
    # each part as checks.json gives it: "passed", "status", "reasons" and its figures
    transport: dict[str, Any]
    cut_up_section: dict[str, Any]
    separations: dict[str, Any]
    crossings: dict[str, Any]
    fault_bend_folds: list[dict[str, Any]] = field(default_factory=list)
    failures: list[str] = field(default_factory=list)
    # "pass" only when something was measured and nothing failed; "not_tested" when no
    # part could be measured (``passed`` is True only for "pass"; None in checks.json
    # when not tested).
    status: str = "pass"
    reasons: list[str] = field(default_factory=list)
    fault_bend: dict = field(default_factory=dict)  # status, reasons, compared (count)

    @property
    def parts(self) -> dict[str, Part]:
        """Each sub-test's verdict, as the other tests give theirs."""
        subs = {"transport": self.transport, "cut_up_section": self.cut_up_section,
                "separations": self.separations, "crossings": self.crossings,
                "fault_bend_fold": self.fault_bend}
        out = {}
        for k, d in subs.items():
            st = d.get("status", "not_tested")
            why = d.get("reasons") or []
            if st == "fail" and not why and k != "fault_bend_fold":
                why = [f for f in self.failures if _mentions(f, k)]
            out[k] = Part(st, tuple(why))
        return out

    @property
    def transport_name(self) -> str | None:
        """The section's transport direction in words (None when not found)."""
        return _dir_name(self.transport_direction)

    def to_dict(self) -> dict:
        return {
            "passed": None if self.status == "not_tested" else self.status == "pass",
            "transport_direction": self.transport_name,
            "status": self.status,
            "reasons": list(self.reasons),
            "parts": {k: p.to_dict() for k, p in self.parts.items()},
            "fault_bend": self.fault_bend,
            "transport": self.transport,
            "cut_up_section": self.cut_up_section,
            "separations": self.separations,
            "crossings": self.crossings,
            "fault_bend_folds": self.fault_bend_folds,
            "failures": list(self.failures),
        }


def _fault_dir_at(fault: LineString, p: Point, transport: int) -> np.ndarray:
    """Unit direction of the fault near a point, pointing in the transport direction."""
    s = fault.project(p)
    a = fault.interpolate(max(s - 5.0, 0.0))
    b = fault.interpolate(min(s + 5.0, fault.length))
    v = np.array([b.x - a.x, b.y - a.y])
    if v[0] * transport < 0 or (v[0] == 0 and v[1] < 0):
        v = -v
    return v / max(np.hypot(*v), 1e-12)


def _bed_dir_at_end(line: LineString, at_start: bool, transport: int) -> np.ndarray:
    c = line_xy(line)
    seg = c[1] - c[0] if at_start else c[-1] - c[-2]
    if seg[0] * transport < 0:
        seg = -seg
    return seg / max(np.hypot(*seg), 1e-12)


def _incl(v: np.ndarray, transport: int) -> float:
    """Inclination (degrees, positive rising) of a vector taken in the transport direction."""
    return float(np.degrees(np.arctan2(v[1], transport * v[0])))


def horizon_crossings(draft: Draft, limit: int = 200) -> list[dict]:
    """Where horizons cross themselves or another horizon of the same block.

    Each entry: kind ("self" or "pair"), top_of, other, block, distance_m,
    elevation_m. Points within 1 m of a line's end are touches, not crossings.
    """
    joined = joined_horizons(draft)
    tol = snap_tolerance(draft)
    out: list[dict] = []
    for (top_of, block), line in joined.items():
        if line.is_simple:
            continue
        c = line_xy(line)
        segs = shapely.linestrings(np.stack([c[:-1], c[1:]], axis=1))
        tree = shapely.STRtree(segs)
        i, j = tree.query(segs, predicate="intersects")
        keep = j > i + 1
        for a, b in zip(i[keep], j[keep], strict=True):
            pt = segs[a].intersection(segs[b])
            if pt.is_empty:
                continue
            p = pt.representative_point()
            out.append({"kind": "self", "top_of": top_of, "other": top_of, "block": block,
                        "distance_m": float(p.x), "elevation_m": float(p.y)})
    keys = sorted(joined)
    for n, ka in enumerate(keys):
        for kb in keys[n + 1:]:
            if ka[1] != kb[1]:
                continue
            la, lb = joined[ka], joined[kb]
            if not la.intersects(lb):
                continue
            inter = la.intersection(lb)
            pts = shapely.get_coordinates(inter)
            ends = np.vstack([line_xy(la)[[0, -1]], line_xy(lb)[[0, -1]]])
            for p in pts:
                if np.min(np.hypot(*(ends - p).T)) <= tol:
                    continue  # touching at an end is allowed
                out.append({"kind": "pair", "top_of": ka[0], "other": kb[0], "block": ka[1],
                            "distance_m": float(p[0]), "elevation_m": float(p[1])})
    out.sort(key=lambda d: d["distance_m"])
    return out[:limit] if limit else out


def _measured_separations(draft: Draft, fb: FaultBlocks) -> dict[str, float]:
    """Separation along the fault between the cutoffs of each horizon (+: hanging wall up)."""
    f = next(x for x in draft.faults if x.name == fb.name)
    out = {}
    for top_of, (hw, fw) in fb.cutoffs.items():
        if hw is None or fw is None:
            continue
        d = abs(f.geometry.project(Point(hw)) - f.geometry.project(Point(fw)))
        out[top_of] = float(d if hw[1] >= fw[1] else -d)
    return out


def _has_anticline(line: LineString) -> bool:
    y = line_xy(line)[:, 1]
    return bool(len(y) >= 3 and y.max() > max(y[0], y[-1]) + 1.0)


def _ramp(fault: LineString) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper ends of the fault's ramp: its run of segments steeper than 5 degrees
    (the whole trace when it has no flats)."""
    c = line_xy(fault)
    d = np.diff(c, axis=0)
    steep = np.degrees(np.arctan2(np.abs(d[:, 1]), np.abs(d[:, 0]))) > 5.0
    if not steep.any():
        return c[np.argmin(c[:, 1])], c[np.argmax(c[:, 1])]
    idx = np.nonzero(steep)[0]
    pts = np.vstack([c[idx], c[idx + 1]])
    return pts[np.argmin(pts[:, 1])], pts[np.argmax(pts[:, 1])]


def _run_fbf(draft: Draft, fault, fb: FaultBlocks, seps: dict[str, float],
             transport: int) -> dict:
    """One fault-bend fold comparison: ``status`` "pass" / "fail" when the model ran,
    "not_tested" with ``reasons`` (the model's own reason) when it did not."""
    entry = _fbf_entry(draft, fault, fb, seps, transport)
    if entry.get("run"):
        entry["status"] = "pass" if entry["within_tolerance"] else "fail"
        m, tol = entry["misfit"], entry["tolerance_m"]
        entry["reasons"] = [] if entry["within_tolerance"] else [
            f"fault-bend fold model misfits the hanging wall of {fault.name} by "
            f"{m['rms_m']:.0f} m RMS; a model hinge lies {m['hinge_offset_m']:.0f} m from the "
            f"draft's nearest, at {m['hinge_at_m']:.0f} m (tolerance {tol:.0f} m)"]
    else:
        entry["status"] = "not_tested"
        entry["reasons"] = [entry.get("reason", "the model was not run")]
    return entry


def _fbf_entry(draft: Draft, fault, fb: FaultBlocks, seps: dict[str, float],
               transport: int) -> dict:
    joined = joined_horizons(draft)
    bottom, top = _ramp(fault.geometry)
    entry: dict = {"fault": fault.name, "distance_m": float(fb.ground_x), "run": False}
    hw = {t: g for (t, b), g in joined.items() if b == fb.hanging_wall}
    if not hw:
        entry["reason"] = "no hanging-wall horizon"
        return entry
    anticline = any(_has_anticline(g) for g in hw.values())
    entry["hanging_wall_anticline"] = anticline
    if not anticline:
        entry["reason"] = "no hanging-wall anticline: the fault-bend fold model was not run"
        return entry
    slip = float(np.mean(list(seps.values())))
    if slip <= 0:
        entry["reason"] = "no reverse slip on the fault"
        return entry
    dy = float(top[1] - bottom[1])
    ramp_dip = float(np.degrees(np.arctan2(dy, abs(top[0] - bottom[0]))))
    flat = float(bottom[1])
    depths = {}
    for t, g in hw.items():
        gc = line_xy(g)
        # the regional level: the horizon's hinterland end, behind the fold
        far = gc[0] if transport > 0 else gc[-1]
        if far[1] - flat > 0:
            depths[t] = float(far[1] - flat)
    try:
        model = fault_bend_fold(dy, ramp_dip, slip, flat, depths, ramp_x=float(bottom[0]),
                                direction=int(transport))
    except ParameterError as exc:
        entry["reason"] = str(exc)
        return entry
    mis = compare_with_draft(draft, fault, model)
    tol = fbf_tolerance_m(dy)
    entry.update({"run": True, "model": model.to_dict(), "misfit": mis.to_dict(),
                  "tolerance_m": tol,
                  "within_tolerance": bool(np.isfinite(mis.rms_m) and mis.rms_m <= tol
                                           and not mis.hinge_offset_m > tol)})
    return entry


def _transport(draft: Draft, blocks: dict[str, FaultBlocks]
               ) -> tuple[int | None, dict[str, int], dict, list[str]]:
    """The section's transport direction (the contractional faults' majority), each such
    fault's own, the transport entry of the result and its failures."""
    votes: dict[int, float] = {1: 0.0, -1: 0.0}
    own: dict[str, int] = {}
    for f in draft.faults:
        fb = blocks[f.name]
        if _kind(f.sense) != "contractional" or fb.dips_toward == 0:
            continue
        own[f.name] = -fb.dips_toward
        votes[own[f.name]] += 1.0 + 1e-9 * sum(abs(v) for v in f.separations.values())
    direction = None
    if own:
        direction = 1 if votes[1] > votes[-1] else -1 if votes[-1] > votes[1] else None
    exceptions = [{"fault": n, "distance_m": blocks[n].ground_x, "transport": _dir_name(d)}
                  for n, d in own.items() if direction is not None and d != direction]
    if own and direction is None:
        exceptions = [{"fault": n, "distance_m": blocks[n].ground_x, "transport": _dir_name(d)}
                      for n, d in own.items()]
    failures = [f"fault {e['fault']} at {e['distance_m']:.0f} m transports "
                f"{e['transport']}, against the section's "
                f"{_dir_name(direction) or 'majority (tied)'}" for e in exceptions]
    transport = {"passed": not exceptions, "applicable": bool(own), "exceptions": exceptions,
                 "faults": {n: _dir_name(d) for n, d in own.items()}}
    return direction, own, transport, failures


def _cut_up_and_separations(draft: Draft, blocks: dict[str, FaultBlocks],
                            direction: int | None, own: dict[str, int]
                            ) -> tuple[dict, dict, list[str]]:
    """Thrusts cutting up-section in the transport direction, and every fault's separations
    agreeing with its sense: the two result entries and their failures."""
    failures: list[str] = []
    cut_fail, sep_fail, sep_all = [], [], {}
    joined = joined_horizons(draft)
    for f in draft.faults:
        fb = blocks[f.name]
        kind = _kind(f.sense)
        measured = _measured_separations(draft, fb)
        seps = {**{k: float(v) for k, v in f.separations.items()}, **measured}
        sep_all[f.name] = {"separations_m": seps, "sense": f.sense,
                           "measured": sorted(measured)}
        for t, s in seps.items():
            bad = (kind == "contractional" and s < -1e-6) or (kind == "extensional" and s > 1e-6)
            if bad:
                x = fb.cutoffs.get(t, (None, None))[0] or (fb.ground_x, float("nan"))
                sep_fail.append({"fault": f.name, "top_of": t, "separation_m": s,
                                 "sense": f.sense, "distance_m": float(x[0])})
                failures.append(f"fault {f.name} ({f.sense}): separation of top of {t} is "
                                f"{s:+.0f} m, against its sense, at {x[0]:.0f} m")
        if kind != "contractional" or f.name not in own:
            continue
        t_dir = direction or own[f.name]
        for t, (hw, _) in fb.cutoffs.items():
            line = joined.get((t, fb.hanging_wall))
            if hw is None or line is None:
                continue
            lc = line_xy(line)
            at_start = np.hypot(*(lc[0] - hw)) < np.hypot(*(lc[-1] - hw))
            bed = _bed_dir_at_end(line, at_start, t_dir)
            fdir = _fault_dir_at(f.geometry, Point(hw), t_dir)
            angle = _incl(fdir, t_dir) - _incl(bed, t_dir)
            if angle <= 0.0:
                cut_fail.append({"fault": f.name, "top_of": t, "distance_m": float(hw[0]),
                                 "elevation_m": float(hw[1]), "cutoff_angle_deg": angle})
                failures.append(f"fault {f.name} cuts down-section through the top of {t} in "
                                f"the transport direction at {hw[0]:.0f} m "
                                f"(cutoff angle {angle:.1f} degrees)")
    cut = {"passed": not cut_fail, "failures": cut_fail}
    separations = {"passed": not sep_fail, "failures": sep_fail, "faults": sep_all}
    return cut, separations, failures


def check_kinematics(draft: Draft, restoration: Restoration | None = None) -> Kinematics:
    """Run the kinematic consistency checks and the fault-bend fold comparison on a draft."""
    blocks = fault_blocks(draft)

    # 1. transport direction
    direction, own, transport, failures = _transport(draft, blocks)

    # 2. cut up-section, 3. separations
    cut, separations, more = _cut_up_and_separations(draft, blocks, direction, own)
    failures += more

    # 4. crossings
    crossings = _crossings(draft, failures)

    # 5. fault-bend folds
    fbfs = []
    for f in draft.faults:
        if f.name not in own:
            continue
        seps = _measured_separations(draft, blocks[f.name]) or dict(f.separations)
        if not seps:
            continue
        fbfs.append(_run_fbf(draft, f, blocks[f.name], seps, direction or own[f.name]))

    # Three states (issue 12): a part passes only when it measured something.
    n_cut = sum(1 for f in draft.faults if f.name in own
                for hw, _ in blocks[f.name].cutoffs.values() if hw is not None)
    parts = {
        "transport": _part(transport, transport["passed"], bool(own),
                           "no thrust or reverse fault on the section"),
        "cut_up_section": _part(cut, cut["passed"], n_cut > 0,
                                "no hanging-wall cutoff on a thrust or reverse fault"),
        "separations": _part(separations, separations["passed"],
                             any(_kind(f.sense) and separations["faults"][f.name]["separations_m"]
                                 for f in draft.faults),
                             "no fault with a mapped sense and a separation"),
        "crossings": _part(crossings, crossings["passed"], bool(draft.horizons),
                           "the section has no horizon"),
    }
    fault_bend = _fault_bend_part(fbfs, failures)
    statuses = [*parts.values(), fault_bend["status"]]
    status = ("fail" if "fail" in statuses else "pass" if "pass" in statuses
              else "not_tested")
    subs = {"transport": transport, "cut_up_section": cut, "separations": separations,
            "crossings": crossings}
    reasons = [f"{k.replace('_', ' ')}: not tested ({v['reasons'][0]})"
               for k, v in subs.items() if v["status"] == "not_tested"]
    if fault_bend["status"] == "not_tested":
        reasons.append("fault-bend fold comparison: not tested ("
                       + "; ".join(fault_bend["reasons"]) + ")")
    passed = status == "pass"
    return Kinematics(passed, direction, transport, cut, separations, crossings, fbfs, failures,
                      status, reasons, fault_bend)


def _crossings(draft: Draft, failures: list[str]) -> dict[str, Any]:
    """The crossings part: where horizons cross (the first 20 added to ``failures``)."""
    cross = horizon_crossings(draft)
    for c in cross[:20]:
        what = "crosses itself" if c["kind"] == "self" else f"crosses the top of {c['other']}"
        failures.append(f"top of {c['top_of']} (block {c['block']}) {what} at "
                        f"{c['distance_m']:.0f} m, elevation {c['elevation_m']:.0f} m")
    return {"passed": not cross, "count": len(cross), "where": cross}


def _fault_bend_part(fbfs: list[dict[str, Any]], failures: list[str]) -> dict[str, Any]:
    """The fault-bend fold part over each fault's comparison (the failed ones' reasons
    added to ``failures``)."""
    compared = [e for e in fbfs if e["status"] != "not_tested"]
    fb_status = ("fail" if any(e["status"] == "fail" for e in fbfs) else
                 "pass" if compared else "not_tested")
    fault_bend = {"status": fb_status, "compared": len(compared),
                  "reasons": ([f"{e['fault']}: {r}" for e in fbfs for r in e["reasons"]]
                              if fbfs else ["no thrust with measured separations to model"])}
    if fb_status == "fail":
        failures += [r for e in fbfs if e["status"] == "fail" for r in e["reasons"]]
    return fault_bend


def _mentions(failure: str, part: str) -> bool:
    """Whether a failure line belongs to a sub-test (by the words each sub-test uses)."""
    words = {"transport": " transports ", "cut_up_section": "cuts down-section",
             "separations": ": separation of top", "crossings": "crosses"}
    return words.get(part, "\x00") in failure


def _part(d: dict, ok: bool, measured: bool, why: str) -> str:
    """Give a sub-test dict its ``status`` and ``reasons``; returns the status."""
    d["status"] = "not_tested" if not measured else ("pass" if ok else "fail")
    d["reasons"] = [why] if not measured else []
    if not measured:
        d["passed"] = None  # checks.json: null when not tested
    return d["status"]
