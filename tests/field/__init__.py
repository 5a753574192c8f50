"""Tests of fringe.field."""
