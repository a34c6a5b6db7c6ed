"""Published figures as a kind of their own: recognised, kept as given, never recomputed."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.special import ndtr, ndtri

from explorer import cli
from explorer.data.load import load_panel
from explorer.data.office import ReadOptions
from explorer.stats import indices

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_data"
OFFICE = Path(__file__).resolve().parents[1] / "fixtures" / "office"


def write(tmp_path: Path, text: str, name: str = "figures.csv") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def figures_of(panel, measure: str) -> pd.Series:
    rows = panel.data[panel.data["measure"] == measure]
    return rows.set_index(["region", "year"])["value"]


def test_a_table_of_published_indices_is_its_own_kind_with_values_as_written(tmp_path):
    path = write(
        tmp_path,
        "region,year,gini,poverty_rate,median_income\n"
        "N01,2001,31.2,14.5,12800\nN02,2001,28.7,19.1,10900\nN03,2001,35.4,9.8,14100\n",
    )
    panel = load_panel(path)
    assert panel.kind == "published"
    assert figures_of(panel, "gini").to_dict() == {
        ("N01", 2001): 31.2,
        ("N02", 2001): 28.7,
        ("N03", 2001): 35.4,
    }
    scales = panel.data.drop_duplicates("measure").set_index("measure")["scale"].to_dict()
    assert scales == {"gini": "percent", "poverty_rate": "percent", "median_income": "level"}


def test_the_index_table_of_published_figures_is_the_figures_unbounded(tmp_path):
    path = write(
        tmp_path,
        "region,year,gini,top10_share\nA,2001,0.31,0.27\nB,2001,0.42,0.35\nA,2002,0.33,0.28\n",
    )
    panel = load_panel(path)
    table = indices.compute(panel)
    assert set(table["method"]) == {"published"}
    assert table["lower"].isna().all() and table["upper"].isna().all()
    got = table.set_index(["region", "year", "index"])["value"]
    assert got[("B", 2001, "top10_share")] == 0.35
    assert got[("A", 2002, "gini")] == 0.33
    assert (table["note"] == "as published, proportion").all()
    only = indices.compute(panel, indices=("gini",))
    assert set(only["index"]) == {"gini"}


def test_blank_cells_are_missing_and_said_never_filled(tmp_path):
    path = write(
        tmp_path,
        "region,year,gini,poverty_rate\nA,2001,31.2,14.5\nB,2001,28.7,\nC,2001,33.0,12.0\n",
    )
    panel = load_panel(path)
    poverty = figures_of(panel, "poverty_rate")
    assert ("B", 2001) not in poverty.index
    assert len(poverty) == 2
    notes = " ".join(w.message for w in panel.warnings)
    assert "1 district-year(s) have no poverty_rate figure" in notes


def test_a_value_beyond_its_scale_sets_the_district_year_aside(tmp_path):
    path = write(
        tmp_path,
        "region,year,gini\nA,2001,31.2\nB,2001,28.7\nC,2001,335.0\nD,2001,30.1\nE,2001,29.0\n",
    )
    panel = load_panel(path)
    assert panel.excluded[["region", "year"]].values.tolist() == [["C", 2001]]
    assert "above 100 on a percent scale" in panel.excluded["reason"].iloc[0]


def test_a_district_year_with_no_figure_at_all_is_set_aside(tmp_path):
    path = write(tmp_path, "region,year,gini,poverty_rate\nA,2001,31,12\nB,2001,,\nC,2001,30,11\n")
    panel = load_panel(path)
    assert panel.excluded["region"].tolist() == ["B"]
    assert "no published figure" in panel.excluded["reason"].iloc[0]


def test_a_percent_sign_in_the_header_outranks_the_values(tmp_path):
    # Poverty rates below 1 % everywhere would read as proportions from the values alone.
    path = write(
        tmp_path,
        "Poverty by district, 2005\nDistrict,Poverty rate (%)\nA,0.4\nB,0.9\nC,0.7\n"
        "Source: household survey.\n",
    )
    panel = load_panel(path, options=ReadOptions(year=2005))
    assert panel.kind == "published"
    assert set(panel.data["scale"]) == {"percent"}


def test_the_office_fixture_reads_as_published_figures():
    panel = load_panel(OFFICE / "published_one_year.csv", options=ReadOptions(year=2003))
    assert panel.kind == "published"
    assert figures_of(panel, "median_income")[("Lower Marsh", 2003)] == 14100.0
    assert figures_of(panel, "gini")[("Kestrel Heights", 2003)] == 38.1


def test_the_demo_figures_are_the_lognormal_closed_forms_of_the_demo_deciles():
    """The demo's published Ginis are those of each district-year's lognormal.

    Aitchison, J. & Brown, J. A. C. (1957), *The Lognormal Distribution*, ch. 2: a lognormal
    with log standard deviation σ has Gini 2Φ(σ/√2) − 1 and its top 10 % holds
    1 − Φ(Φ⁻¹(0.9) − σ). Inverting the Gini gives σ, from which the top share must follow;
    both are checked against the rounding of the file (one decimal of a percent).
    """
    published = pd.read_csv(DEMO / "published.csv")
    sigma = np.sqrt(2) * ndtri((published["gini"] / 100 + 1) / 2)
    top = 100 * (1 - ndtr(ndtri(0.9) - sigma))
    # a Gini rounded to 0.05 points moves σ, and the top share, by well under 0.2 points
    assert np.max(np.abs(top - published["top10_share"])) < 0.2
    panel = load_panel(DEMO / "published.csv", DEMO / "districts.geojson")
    assert panel.kind == "published"
    assert panel.levels == ("county",)


def test_cli_compute_writes_the_published_figures_as_given(tmp_path, capsys):
    out = tmp_path / "figures.csv"
    code = cli.main(["compute", str(DEMO / "published.csv"), "--out", str(out)])
    assert code == 0
    written = pd.read_csv(out)
    given_ = pd.read_csv(DEMO / "published.csv").melt(
        id_vars=["region", "year"], var_name="index", value_name="given"
    )
    both = written.merge(given_, on=["region", "year", "index"], how="outer", indicator=True)
    assert (both["_merge"] == "both").all()
    assert np.allclose(both["value"], both["given"])
    assert (written["method"] == "published").all()


def test_cli_spatial_refuses_a_figure_the_table_lacks(capsys):
    code = cli.main(
        [
            "spatial",
            str(DEMO / "published.csv"),
            "--boundaries",
            str(DEMO / "districts.geojson"),
            "--index",
            "poverty_rate",
        ]
    )
    assert code == 2
    assert "hold no 'poverty_rate'" in capsys.readouterr().err


@settings(max_examples=25, deadline=None)
@given(
    values=st.lists(
        # above 1: a tidy column of values at most 1 reads as proportions, while the
        # decorated header's "(%)" says percent (tested on its own above)
        st.floats(min_value=1.5, max_value=99.0, allow_nan=False).map(lambda v: round(v, 1)),
        min_size=3,
        max_size=12,
    ),
    incomes=st.lists(st.integers(min_value=1_000, max_value=999_999), min_size=12, max_size=12),
)
def test_decorated_and_tidy_forms_of_a_published_table_give_the_same_panel(
    tmp_path_factory, values, incomes
):
    """A title line, thousands separators and a footnote line change nothing."""
    folder = tmp_path_factory.mktemp("published")
    names = [f"District {chr(65 + i)}" for i in range(len(values))]
    tidy = "region,year,gini,median_income\n" + "".join(
        f"{n},2010,{v},{m}\n" for n, v, m in zip(names, values, incomes, strict=False)
    )
    decorated = (
        "Table 4. Inequality by district, 2010\n"
        "District,Gini coefficient (%),Median income\n"
        + "".join(f'{n},{v},"{m:,}"\n' for n, v, m in zip(names, values, incomes, strict=False))
        + "Source: invented survey of the test province.\n"
    )
    plain = load_panel(write(folder, tidy, "tidy.csv"))
    office = load_panel(write(folder, decorated, "office.csv"), options=ReadOptions(year=2010))
    pd.testing.assert_frame_equal(plain.data, office.data)


@pytest.mark.parametrize("measure", ["gini", "poverty_rate", "median_income", "top10_share"])
def test_each_published_measure_alone_marks_the_kind(tmp_path, measure):
    path = write(tmp_path, f"region,year,{measure}\nA,2001,10\nB,2001,20\n")
    assert load_panel(path).kind == "published"
