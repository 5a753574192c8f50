"""Layer 1, the model: frozen nouns and the vocabulary every other layer speaks.

Magnets and coils, the site and its building (floors, rooms, equipment, plan settings,
quench inputs), the verdict enum, constants with their sources and the one exception
family. No I/O, no field evaluation; imports nothing else of fringe.
"""
