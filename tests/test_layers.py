"""The one-way data flow, held against the code: each layer imports only the layers below it
(data <- stats <- figures/present <- ui/pages), and only the Streamlit glue imports streamlit.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
EXPLORER = ROOT / "explorer"

# package -> the explorer packages it must never import
FORBIDDEN = {
    "data": ("explorer.stats", "explorer.figures", "explorer.present", "explorer.ui"),
    "stats": ("explorer.figures", "explorer.present", "explorer.ui", "explorer.views"),
    "present": ("explorer.figures", "explorer.ui"),
    "figures": ("explorer.ui",),
}


def _imports(path: Path) -> set[str]:
    names: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            names.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names.add(node.module)
            names.update(f"{node.module}.{alias.name}" for alias in node.names)
    return names


def _modules(package: str) -> list[Path]:
    return sorted((EXPLORER / package).rglob("*.py"))


@pytest.mark.parametrize("package", sorted(FORBIDDEN))
def test_a_layer_imports_nothing_above_it(package):
    wrong = []
    for path in _modules(package):
        for name in _imports(path):
            if name.startswith(FORBIDDEN[package]):
                wrong.append(f"{path.relative_to(ROOT)} imports {name}")
    assert not wrong, "\n".join(wrong)


def test_only_the_streamlit_glue_imports_streamlit():
    # the app's entry script, and the server's entry point (Streamlit's own command line)
    allowed = {EXPLORER / "app.py", EXPLORER / "serve.py"}
    wrong = [
        str(path.relative_to(ROOT))
        for path in EXPLORER.rglob("*.py")
        if "ui" not in path.relative_to(EXPLORER).parts[:1]
        and path not in allowed
        and any(name == "streamlit" or name.startswith("streamlit.") for name in _imports(path))
    ]
    assert not wrong, wrong
