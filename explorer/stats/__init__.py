"""Measures on units and curves, Lorenz fits, intervals, decompositions, spatial statistics."""

__all__: list[str] = []
