"""The data model, validation, readers of tables and boundaries, the workspace and the demo."""
