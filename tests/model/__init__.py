"""Tests of fringe.model."""
