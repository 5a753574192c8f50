"""Layer 4, analysis: the questions a site asks of the physics.

Plan and section maps, footprints of each line, verdicts for rooms, equipment and
floors, the attraction zone of a site, energy-density maps, placement search and the
report's whole computation. Returns data; writes nothing, draws nothing.
"""
