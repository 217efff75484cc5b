"""Drawing and writing: the figures and files made from a draft and its checks.

The measuring stages (:mod:`mapsection.construct`, :mod:`mapsection.checks`) return
plain results; this package turns them into pictures and pages, and is the only one
that imports matplotlib.

- :mod:`~mapsection.render.section` -- the section figure (PNG, SVG, PDF), laid out by
  :mod:`~mapsection.render.layout`, coloured by :mod:`~mapsection.render.colours`: the
  section itself drawn by :mod:`~mapsection.render.section_panel`, its frame, scale bars,
  legend and title block by :mod:`~mapsection.render.section_margin`, the location map by
  :mod:`~mapsection.render.location`;
- :mod:`~mapsection.render.restoration` -- the restored section;
- :mod:`~mapsection.render.area_depth` -- excess area against depth;
- :mod:`~mapsection.render.sequence` -- the incremental sequence, frames and GIF;
- :mod:`~mapsection.render.report` -- report.html, self-contained: each test's tables from
  :mod:`~mapsection.render.report_tests`, built of the numbers, badges and tables of
  :mod:`~mapsection.render.report_parts`;
- :mod:`~mapsection.render.section_folder` -- the one writer of a section's check
  outputs (checks.json, the figures above, report.html), for ``build`` and ``check``.

Submodules are imported where used: ``import mapsection.render`` loads nothing heavy.
"""
