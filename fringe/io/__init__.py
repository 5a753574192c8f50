"""Layer 5, io: files and processes, no physics.

The scenario reader (one explicit list of sections), GeoJSON and DXF room plans,
the report's JSON/CSV/GeoJSON tables, TOML out, 3-D map files, atomic writes, the
fast-model disk cache and the forked helium look-ups.
"""
