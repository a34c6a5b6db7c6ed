"""Within/between decompositions, one module per family; ``explorer.stats.decompose`` is the
public entry point and re-exports every public name."""

__all__: list[str] = []
