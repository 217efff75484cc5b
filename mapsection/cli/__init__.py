"""The mapsection command line: one command per module, each a thin wrapper over the library."""
