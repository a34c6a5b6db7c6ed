"""``rift scenario``: the tables it writes, checked against identities, and its refusals.

Sources: Atkinson, A. B. (1970), "On the measurement of inequality", Journal of Economic
Theory 2: 244-263; Dalton, H. (1920), "The measurement of the inequality of incomes",
Economic Journal 30: 348-361.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from explorer import cli, views
from explorer import data as readers

TABLES = ("indices", "poverty", "decomposition", "budget", "gain")


def run(capsys, *argv: str) -> tuple[int, str, str]:
    code = cli.main(list(argv))
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def files(tmp_path: Path, steps: list, dataset: str = "demo-households", year: int = 2017):
    view = tmp_path / "view.json"
    view.write_text(views.ViewState(dataset=dataset, year=year).to_json(), encoding="utf-8")
    scenario = tmp_path / "scenario.json"
    scenario.write_text(json.dumps({"rift_scenario": 1, "name": "t", "steps": steps}))
    return view, scenario


def test_a_folder_gets_every_table_and_a_flat_transfer_obeys_the_gini_identity(tmp_path, capsys):
    """Adding t to every income leaves every income difference, so the mean absolute
    difference, unchanged while the mean becomes mu + t: G_after = G mu / (mu + t) (derived
    from G = Delta / 2 mu, common practice). mu is taken here from the demo records, and the
    cost is t times the province's people (the transfer reaches everyone)."""
    t = 1200.0
    view, scenario = files(tmp_path, [{"kind": "transfer", "bottom_deciles": 10, "amount": t}])
    out = tmp_path / "out"
    code, _, err = run(
        capsys, "scenario", str(view), "--scenario", str(scenario), "--out", str(out)
    )
    assert code == 0, err
    for name in TABLES:
        table = pd.read_csv(out / f"{name}.csv")
        assert table.columns[0] == "year" and (table["year"] == 2017).all()
    assert "not a prediction" in (out / "notes.txt").read_text()
    assert json.loads((out / "scenario.json").read_text())["rift_scenario"] == 1
    data = readers.demo_panel("units").data
    rows = data[data["year"] == 2017]
    mu = np.dot(rows["income"], rows["weight"]) / rows["weight"].sum()
    indices = pd.read_csv(out / "indices.csv", keep_default_na=False)
    gini = indices[(indices["region"] == "(all)") & (indices["index"] == "gini")].iloc[0]
    assert float(gini["after"]) == pytest.approx(float(gini["before"]) * mu / (mu + t), rel=1e-9)
    budget = pd.read_csv(out / "budget.csv", keep_default_na=False)
    total = budget[budget["region"] == "(all)"].iloc[0]
    assert float(total["money"]) == pytest.approx(t * rows["weight"].sum(), rel=1e-9)


def test_one_file_holds_the_table_asked_for_and_a_balanced_levy_pays_for_the_transfers(
    tmp_path, capsys
):
    """A balanced levy's rate is solved so its revenue equals the transfers' cost
    (arithmetic); money from the top decile to the bottom decile lowers the province's Gini
    (Pigou-Dalton, Dalton 1920; Atkinson 1970), checked in the indices file of the same run."""
    view, scenario = files(
        tmp_path,
        [
            {"kind": "transfer", "bottom_deciles": 1, "amount": 400},
            {"kind": "levy", "top_deciles": 1, "balance": True},
        ],
    )
    out = tmp_path / "budget.csv"
    code, _, err = run(
        capsys, "scenario", str(view), "--scenario", str(scenario), "--out", str(out),
        "--table", "budget",
    )  # fmt: skip
    assert code == 0, err
    assert "note:" in err
    budget = pd.read_csv(out, keep_default_na=False)
    total = budget[budget["region"] == "(all)"].set_index("kind")
    assert float(total.loc["levy", "money"]) == pytest.approx(float(total.loc["transfer", "money"]))
    assert 0 < float(total.loc["levy", "rate"]) < 0.1
    gini_file = tmp_path / "indices.csv"
    code, _, _ = run(
        capsys, "scenario", str(view), "--scenario", str(scenario), "--out", str(gini_file)
    )
    indices = pd.read_csv(gini_file, keep_default_na=False)
    row = indices[(indices["region"] == "(all)") & (indices["index"] == "gini")].iloc[0]
    assert float(row["after"]) < float(row["before"])


def test_grouped_demo_says_its_approximation(tmp_path, capsys):
    """The demo's decile shares run through the pseudo-units, and the notes say so."""
    view, scenario = files(tmp_path, [{"kind": "growth", "rate": 0.02, "years": 2}], "demo", 2020)
    out = tmp_path / "out"
    code, _, err = run(
        capsys, "scenario", str(view), "--scenario", str(scenario), "--out", str(out)
    )
    assert code == 0, err
    assert "pseudo-units" in (out / "notes.txt").read_text()
    gain = pd.read_csv(out / "gain.csv")
    assert np.allclose(gain["growth"], 1.02**2 - 1, rtol=1e-9)  # scale invariance of quantiles


@pytest.mark.parametrize(
    ("which", "content", "words"),
    [
        ("scenario", "{not json", "not JSON"),
        ("scenario", '{"rift_scenario": 2, "steps": []}', "version"),
        ("scenario", '{"rift_scenario": 1, "steps": [{"kind": "levy", "rate": 3}]}', "rate"),
        ("scenario", '{"rift_scenario": 1, "steps": [{"kind": "growth", "rate": 0.1, '
         '"districts": ["NOPE1"]}]}', "NOPE1"),
        ("view", '{"steps": []}', "view file"),
        ("view", "\x00\x01", "view"),
    ],
)  # fmt: skip
def test_bad_view_or_scenario_files_exit_two_with_the_reason(
    tmp_path, capsys, which, content, words
):
    """Exit status 2, the file named, the reason in words, nothing written."""
    view, scenario = files(tmp_path, [{"kind": "growth", "rate": 0.1}])
    bad = view if which == "view" else scenario
    bad.write_text(content, encoding="utf-8")
    out = tmp_path / "out"
    code, _, err = run(
        capsys, "scenario", str(view), "--scenario", str(scenario), "--out", str(out)
    )
    assert code == 2, err
    assert words in err and bad.name in err
    assert "Traceback" not in err
    assert not out.exists()


def test_a_missing_scenario_file_and_an_output_over_an_input_are_refused(tmp_path, capsys):
    """Inputs are never overwritten; a file that is not there is named."""
    view, scenario = files(tmp_path, [{"kind": "growth", "rate": 0.1}])
    code, _, err = run(
        capsys, "scenario", str(view), "--scenario", str(tmp_path / "none.json"), "--out",
        str(tmp_path / "o"),
    )  # fmt: skip
    assert code == 2 and "none.json" in err
    before = scenario.read_bytes()
    code, _, err = run(
        capsys, "scenario", str(view), "--scenario", str(scenario), "--out", str(view)
    )
    assert code == 2
    assert scenario.read_bytes() == before
    assert json.loads(view.read_text())["rift_view"] == 1


def test_a_view_saved_with_its_scenario_needs_no_scenario_file(tmp_path):
    """`rift scenario VIEW --out DIR` applies the scenario the view carries (the What-if
    page's), the same tables as with the scenario given as a file."""
    import pandas as pd

    from explorer import cli
    from explorer.figures import what_if
    from explorer.views import ViewState, view_file_text

    text = what_if.scenario_of(what_if.Draft(deciles=3, amount=800.0))
    view = tmp_path / "view.json"
    view.write_text(view_file_text(ViewState(year=2025, scenario=text), {}), encoding="utf-8")
    assert cli.main(["scenario", str(view), "--out", str(tmp_path / "a.csv")]) == 0
    scenario = tmp_path / "scenario.json"
    scenario.write_text(text, encoding="utf-8")
    bare = tmp_path / "bare.json"
    bare.write_text(view_file_text(ViewState(year=2025), {}), encoding="utf-8")
    assert (
        cli.main(
            ["scenario", str(bare), "--scenario", str(scenario), "--out", str(tmp_path / "b.csv")]
        )
        == 0
    )
    pd.testing.assert_frame_equal(pd.read_csv(tmp_path / "a.csv"), pd.read_csv(tmp_path / "b.csv"))
    assert cli.main(["scenario", str(bare), "--out", str(tmp_path / "c.csv")]) == 2
