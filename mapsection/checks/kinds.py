"""What the checks do with units that are not layers (the column's ``kind``).

* The restoration, the line-length and area balance, the cutoffs at faults, the
  kinematics and the diagnosis of a failed topography test measure the layered units
  only: they run on :func:`layered_draft`, the draft without its cover and intrusive
  units. A cover unit is a veneer over the section and an intrusive body is drawn over
  the layered horizons (see :mod:`mapsection.construct.cover`): neither has a restored
  state (intrusive bodies not restored).
* The topography test (:mod:`mapsection.checks.topography`) reports the ground under
  cover and the intrusive stretches apart (concealed: not compared), see
  :func:`concealed_stretches`.
"""

from __future__ import annotations

import dataclasses

from ..draft import Draft


def unlayered_units(draft: Draft) -> dict[str, str]:
    """Unit name -> kind of the column's cover and intrusive units."""
    return {u.name: u.kind for u in draft.column.units if not u.layered}


def layered_draft(draft: Draft) -> Draft:
    """The draft with the layered units only (the column's ``layered()``, the unit polygons
    of layered units); the draft itself when it has no other unit."""
    other = unlayered_units(draft)
    if not other:
        return draft
    return dataclasses.replace(draft, column=draft.column.layered(),
                               units=[u for u in draft.units if u.unit not in other])


def unlayered_notes(draft: Draft) -> list[str]:
    """The report's notes on the cover and intrusive units at the ground along the line."""
    other = unlayered_units(draft)
    on_line = {iv.unit for iv in draft.geology.intervals if iv.unit in other}
    notes = []
    cover = [n for n in other if other[n] == "cover" and n in on_line]
    intrusive = [n for n in other if other[n] == "intrusive" and n in on_line]
    if cover:
        notes.append(f"cover ({', '.join(cover)}): a veneer under the ground, not carried to "
                     "depth; its stretches of ground are concealed bedrock in the topography "
                     "test (not compared) and it is not restored")
    if intrusive:
        notes.append(f"intrusive ({', '.join(intrusive)}): drawn where the map has it, over the "
                     "layered section; its stretches of ground are not compared in the "
                     "topography test (the section has it there by construction); intrusive "
                     "bodies not restored (left out of the line-length and area balance)")
    return notes


__all__ = ["layered_draft", "unlayered_notes", "unlayered_units"]
