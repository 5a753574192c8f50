"""Tests of fringe.physics."""
