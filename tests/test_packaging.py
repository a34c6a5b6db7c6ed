"""The wheel is complete: every package of explorer/ is listed for setuptools, and the files
the program opens at run time (pages, demo data) travel inside the package.

The whole check runs in CI from a wheel installed outside the checkout (.ci/wheel_smoke.py);
these tests catch the usual slip early: a new subpackage not added to pyproject.toml.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

from explorer import resources, serving

ROOT = Path(__file__).resolve().parents[1]
CONFIG = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
SETUPTOOLS = CONFIG["tool"]["setuptools"]


def test_every_subpackage_of_explorer_is_listed_for_the_wheel():
    found = {
        ".".join(init.parent.relative_to(ROOT).parts)
        for init in (ROOT / "explorer").rglob("__init__.py")
        if "__pycache__" not in init.parts
    }
    missing = found - set(SETUPTOOLS["packages"])
    assert not missing, f"add to [tool.setuptools] packages: {sorted(missing)}"


def test_pages_and_demo_data_are_mapped_into_the_package():
    mapped = SETUPTOOLS["package-dir"]
    assert mapped["explorer.pages"] == "pages"
    assert mapped["explorer.demo_data"] == "demo_data"
    shipped = SETUPTOOLS["package-data"]["explorer.demo_data"]
    for data_file in (ROOT / "demo_data").iterdir():
        if data_file.suffix != ".py":
            assert any(data_file.match(pattern) for pattern in shipped), data_file.name


def test_resources_resolve_in_a_checkout():
    assert (resources.pages_dir() / "atlas.py").is_file()
    assert (resources.demo_dir() / "deciles.csv").is_file()


def test_the_server_command_carries_every_setting_rift_needs():
    command = serving.app_command(8765)
    for name, value in serving.SETTINGS.items():
        assert command[command.index(f"--{name}") + 1] == value
    # A local tool for confidential data (common practice for such deployments).
    assert serving.SETTINGS["browser.gatherUsageStats"] == "false"
