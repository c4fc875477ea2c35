"""Tests of the ntuple hand-off: reader, weights, merge, export, info and their CLI."""
