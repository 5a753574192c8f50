"""Tests of fringe.render."""
