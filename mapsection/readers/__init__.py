"""Readers: the only code that opens the user's input files.

* :mod:`mapsection.readers.line` -- a section line from a vector file or text;
* :mod:`mapsection.readers.map` -- the geologic map (unit polygons, fault lines);
* :mod:`mapsection.readers.attitudes` -- bedding attitudes from a CSV or point file;
* :mod:`mapsection.readers.dem` -- the DEM, opened once and read block by block.

The project file is read by :mod:`mapsection.project`; a section read back from its
GeoPackage by :mod:`mapsection.export`. Everything they return is a value object free
of I/O (:class:`~mapsection.line.SectionLine`, :class:`~mapsection.mapdata.MapData`,
:class:`~mapsection.attitudes.Attitudes`), except the open :class:`~.dem.Dem`.
"""
