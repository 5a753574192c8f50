"""Layer 3, physics: published models, numbers in and numbers out.

Stored energy and inductance, the attraction criterion, exposure limits, magnet
families and the data-sheet fit, the quench budget (helium, oxygen, dump decay). Each
formula cites its source. Imports only :mod:`fringe.model` and :mod:`fringe.field`.
"""
