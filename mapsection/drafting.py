"""One section's draft from a project: its data read along the line, then its construction.

:func:`build_section` is the library's way to get a section's :class:`~mapsection.draft.Draft`
without writing anything; :func:`mapsection.build.build_project` uses the same two steps
(:func:`section_data` while the inputs are open, :func:`construct` in the section's worker).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ._messages import Warn
from ._messages import default_warn as _default_warn
from .draft import Draft
from .project import Project, SectionSpec
from .session import ProjectInputs, SectionSession, load_inputs
from .stages import reporting
from .stages import stage as _stage
from .thickness import resolve_map_thicknesses


def overridden(spec: SectionSpec, method: str | None, ve: float | None) -> SectionSpec:
    """The section's settings with the command line's ``method`` and ``ve`` where given."""
    import dataclasses

    given = {k: v for k, v in (("method", method), ("ve", ve)) if v is not None}
    return dataclasses.replace(spec, **given) if given else spec


def build_section(project: Project, spec: SectionSpec | str, *, method: str | None = None,
                  ve: float | None = None, warn: Warn | None = None,
                  inputs: ProjectInputs | None = None,
                  timings: dict[str, float] | None = None) -> Draft:
    """Construct the draft of one section of a project.

    ``method`` (``kink`` or ``arc``) and ``ve`` override the section's settings.
    ``inputs`` (from :func:`load_inputs`) share the loaded map, attitudes and DEM
    between sections; without them they are read for this section alone.
    """
    spec = overridden(project.section(spec), method, ve)
    with reporting(None, spec.name):
        return _build_section(project, spec, warn, inputs, timings)


def _build_section(project: Project, spec: SectionSpec, warn: Warn | None,
                   inputs: ProjectInputs | None, timings: dict[str, float] | None) -> Draft:
    warn = warn or _default_warn
    args = section_data(project, spec, warn, inputs, timings)
    return construct(*args, warn=warn, timings=timings)


@dataclass(eq=False)
class SectionData:
    """What a section's construction needs once the inputs are read: the project (with
    its thicknesses resolved), the section and its data."""

    project: Project
    spec: SectionSpec
    data: Any  # mapsection.session.SectionData
    plunge_axis: tuple[float, float] | None


def section_data(project: Project, spec: SectionSpec, warn: Warn,
                  inputs: ProjectInputs | None, timings: dict[str, float] | None
                  ) -> tuple[SectionData]:
    """The section's data (profile, surface geology, dips, contacts beside the line)."""
    with _stage(timings, "section data"):
        own = inputs is None
        inputs = load_inputs(project, warn, [spec]) if own else inputs
        try:
            project = resolve_map_thicknesses(project, inputs, warn)  # thickness = "map"
            session = SectionSession.from_inputs(inputs, project, spec, warn)
            data = session.run()
            _ = data.corridor_contacts  # found while the inputs are open
        finally:
            if own:
                inputs.close()
    plunge_axis = spec.fold_axis
    if plunge_axis is None and session.axis is not None:
        plunge_axis = (float(session.axis.trend), float(session.axis.plunge))
    return (SectionData(project, spec, data, plunge_axis),)


def construct(sd: SectionData, *, warn: Warn, timings: dict[str, float] | None) -> Draft:
    """The section's draft from its data (no file is read)."""
    from .construct import build_draft

    project, spec, data = sd.project, sd.spec, sd.data
    with _stage(timings, "construction"):
        return build_draft(
            data.line, data.profile, data.geology, data.dips, project.column,
            name=spec.name, method=spec.method, ve=spec.ve,
            dip_tolerance=spec.dip_tolerance, depth=spec.depth, fault_depth=spec.fault_depth,
            default_dip=spec.default_dip, keep_readings=project.keep_readings,
            corridor_contacts=data.corridor_contacts, plunge_axis=sd.plunge_axis,
            faults=project.faults, default_fault_dip=project.default_fault_dip, warn=warn)
