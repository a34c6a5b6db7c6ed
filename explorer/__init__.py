"""Rift: a regional inequality explorer.

The importable core. Nothing here imports streamlit except ``explorer.ui`` and
``explorer.app``.
"""

__version__ = "0.1.0"
