"""The package's public surface: the README's Python example runs and gives sound figures,
and every public name resolves to a documented object."""

from __future__ import annotations

import contextlib
import io
import re
from pathlib import Path

import numpy as np

import explorer

README = Path(__file__).resolve().parents[1] / "README.md"


def _python_example() -> str:
    text = README.read_text(encoding="utf-8")
    section = text.split("## From Python", 1)[1]
    return re.search(r"```python\n(.*?)```", section, re.S).group(1)


def test_the_readme_example_runs_and_its_figures_hold_together():
    code = _python_example()
    assert len([line for line in code.splitlines() if line.strip()]) == 5
    scope: dict = {}
    printed = io.StringIO()
    with contextlib.redirect_stdout(printed):
        exec(compile(code, "README.md", "exec"), scope)  # noqa: S102 - our own README
    gini, split = scope["gini"], scope["split"]
    # The three districts printed are the three highest Ginis of 2025.
    top = gini.nlargest(3, "value")
    for region in top["region"]:
        assert str(region) in printed.getvalue()
    assert ((top["value"] > 0) & (top["value"] < 1)).all()
    # Bounds from grouped shares enclose the value (Gastwirth 1972, "The estimation of the
    # Lorenz curve and Gini index", Review of Economics and Statistics 54: 306-316).
    assert (gini["lower"] <= gini["value"] + 1e-12).all()
    assert (gini["value"] <= gini["upper"] + 1e-12).all()
    # Theil T splits exactly: between + within = total in every year (Shorrocks 1980, "The
    # class of additively decomposable inequality measures", Econometrica 48: 613-625).
    whole = split[split["group"] == "(all)"]
    for _, year in whole.groupby("year"):
        total = year.loc[year["component"] == "total", "value"].iloc[0]
        parts = year[(year["component"] != "total") & (year["level"] != "total")]
        assert np.isclose(parts["value"].sum(), total, rtol=1e-10)


def test_every_public_name_resolves_and_is_documented():
    for name in explorer.__all__:
        if name == "__version__":
            continue
        value = getattr(explorer, name)
        assert value.__doc__ and len(value.__doc__.strip()) > 20, name
    assert set(explorer.__all__) <= set(dir(explorer))


def test_an_unknown_name_is_an_attribute_error():
    try:
        explorer.no_such_thing  # noqa: B018
    except AttributeError as error:
        assert "no_such_thing" in str(error)
    else:
        raise AssertionError("an unknown name resolved")
