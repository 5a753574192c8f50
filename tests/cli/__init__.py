"""Tests of fringe.cli."""
