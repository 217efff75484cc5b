"""Published structural models shared by the construction and the checks (pure geometry,
no input or output): :mod:`mapsection.models.fbf`, fault-bend folding after Suppe (1983)."""
