"""Layer 6, render: every drawing, whatever its format.

Sheets through matplotlib (plans, sections, curves, tables, the cover, PDF sets), DXF
zone drawings through ezdxf, and the one palette both use (:mod:`fringe.render.style`).
Writes its files through :mod:`fringe.io.atomic`.
"""
