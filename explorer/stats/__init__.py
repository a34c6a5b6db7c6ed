"""Measures on units and curves, Lorenz fits, intervals, decompositions, spatial statistics."""
