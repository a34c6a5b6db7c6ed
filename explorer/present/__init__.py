"""Words, charts, maps, exports, cautions and the one-file report: what a planner reads."""

__all__: list[str] = []
