"""Tests of fringe.io."""
