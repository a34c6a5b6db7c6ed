"""Every command names each district-year it sets aside on stderr, with a count; `check`
exits 0 only when nothing is set aside."""

from __future__ import annotations

import pandas as pd
import pytest

from explorer import cli
from explorer import data as readers

TOTAL = 46 * 18  # the demo province: 46 districts, 2008-2025


def _damaged(tmp_path, cells=(("CAL03", 2015), ("FER02", 2011))):
    """The demo deciles with shares summing to about 1.35 in the given district-years;
    shares of a distribution sum to one (common practice), so each is set aside."""
    panel_path, boundary_path = readers.demo_paths("brackets")
    frame = pd.read_csv(panel_path)
    for region, year in cells:
        hit = (frame["region"] == region) & (frame["year"] == year)
        assert hit.sum() == 1
        frame.loc[hit, "share_3"] = 0.4
    path = tmp_path / "deciles.csv"
    frame.to_csv(path, index=False)
    return path, boundary_path


def _run(capsys, *argv):
    code = cli.main(list(argv))
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _assert_listed(err: str) -> None:
    lines = [line for line in err.splitlines() if line.startswith("set aside: district ")]
    assert len(lines) == 2, err
    assert any("CAL03, year 2015:" in line for line in lines)
    assert any("FER02, year 2011:" in line for line in lines)
    assert f"2 of {TOTAL} district-year(s) set aside" in err


@pytest.mark.parametrize(
    "command, extra",
    [
        ("compute", ("--indices", "gini")),
        ("decompose", ("--from", "2010", "--to", "2012")),
        ("spatial", ("--year", "2016", "--permutations", "99")),
    ],
)
def test_each_command_lists_what_it_sets_aside(tmp_path, capsys, command, extra):
    panel, bounds = _damaged(tmp_path)
    out = tmp_path / f"{command}.csv"
    code, _, err = _run(
        capsys, command, str(panel), "--boundaries", str(bounds), *extra, "--out", str(out)
    )
    assert code == 0, err
    _assert_listed(err)


def test_check_exits_two_and_says_how_much_is_usable(tmp_path, capsys):
    panel, bounds = _damaged(tmp_path)
    code, out, err = _run(capsys, "check", str(panel), "--boundaries", str(bounds))
    assert code == 2
    _assert_listed(err)
    usable = TOTAL - 2
    assert f"{usable} ({usable / TOTAL:.0%}) of the panel is usable" in out


def test_check_exits_zero_on_a_clean_panel(tmp_path, capsys):
    panel, bounds = readers.demo_paths("brackets")
    code, out, err = _run(capsys, "check", str(panel), "--boundaries", str(bounds))
    assert code == 0, err
    assert "valid" in out
    assert f"0 of {TOTAL} district-year(s) set aside" in err
