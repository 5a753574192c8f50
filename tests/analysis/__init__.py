"""Tests of fringe.analysis."""
