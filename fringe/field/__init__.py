"""Layer 2, the field: B and ∇B of the model's magnets at points.

The direct sum over current sheets (the reference), the fast path with its error
bound, zonal multipoles, the reach of a field line and regular grids. Kernels are
private; :mod:`fringe.field.evaluate` is the public entry. Imports only
:mod:`fringe.model`; reads no file (the fast path's disk cache is a store that
:mod:`fringe.io.model_cache` plugs in).
"""
