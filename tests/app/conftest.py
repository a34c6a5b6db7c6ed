"""Fixtures for AppTest runs of the app on the demo province."""

from __future__ import annotations

import pytest
from app_helpers import APP
from streamlit.testing.v1 import AppTest


@pytest.fixture
def app(tmp_path, monkeypatch):
    """A fresh app session over an empty workspace in a temporary folder."""
    monkeypatch.setenv("RIFT_DATA", str(tmp_path / "workspace"))
    return AppTest.from_file(str(APP), default_timeout=120)
