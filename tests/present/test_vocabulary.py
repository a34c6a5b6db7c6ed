"""One vocabulary: every key the computations know has exactly one planner's word."""

from __future__ import annotations

import pytest

from explorer import resources, views
from explorer.data import catalog
from explorer.present import charts, vocabulary
from explorer.stats import decompose, indices, lorenz


def test_every_index_the_table_computes_has_a_label_and_an_axis_title():
    assert list(vocabulary.INDEX_LABELS) == list(indices.DEFAULT_INDICES)
    for key in indices.DEFAULT_INDICES:
        assert vocabulary.index_label(key) != key
        assert charts.index_label(key) == vocabulary.axis_label(key) != key


def test_one_list_of_lorenz_methods_behind_the_labels_and_the_link_parser():
    assert set(vocabulary.METHOD_LABELS) == set(lorenz.METHODS)
    assert next(iter(vocabulary.METHOD_LABELS)) == "auto"
    assert views.LORENZ_METHODS == tuple(lorenz.METHODS)


@pytest.mark.parametrize("index", vocabulary.DECOMPOSABLE)
def test_every_index_offered_for_the_breakdown_splits_exactly(index):
    # Within + between (+ the Gini's overlap) equals the total: the GE family after
    # Shorrocks (1980), "The class of additively decomposable inequality measures",
    # Econometrica 48: 613-625; the Gini after Dagum (1997), "A new approach to the
    # decomposition of the Gini income inequality ratio", Empirical Economics 22: 515-531.
    assert vocabulary.DECOMPOSABLE == tuple(decompose.DECOMPOSABLE)
    panel = catalog.open_dataset("demo-households")
    parts = decompose.table(panel, by=("county",), index=index)
    year = parts[(parts["year"] == parts["year"].max()) & (parts["group"] == "(all)")]
    total = year.loc[year["component"] == "total", "value"].iloc[0]
    pieces = year[year["component"].isin(("within", "between", "overlap"))]
    assert pieces["value"].sum() == pytest.approx(total, rel=1e-9)


def test_every_page_has_a_script_and_the_view_names_it_by_its_title():
    for key, page in vocabulary.PAGES.items():
        assert (resources.pages_dir() / page.script).is_file()
        assert views.ViewState(page=key).page_name == page.title


def test_every_decomposition_part_has_planner_words_naming_its_groups():
    for part in ("between", "within", "overlap", "population_within", "population_between"):
        assert "countie" in vocabulary.part_label(part, "county")
    for part in ("total", "relative_income", "residual"):
        assert "_" not in vocabulary.part_label(part, "county")


@pytest.mark.parametrize(
    ("value", "money", "shown"),
    [(1234567.4, True, "1,234,567"), (0.0004, False, "0.000"), (float("nan"), False, "—")],
)
def test_figures_are_written_as_a_planner_reads_them(value, money, shown):
    assert vocabulary.figure(value, money=money) == shown  # common practice


def test_a_ranking_says_what_rank_one_means():
    assert "highest mean income" in vocabulary.ranking_title("means")
    assert "most unequal" in vocabulary.ranking_title("brackets")


@pytest.mark.parametrize(
    ("index", "expected"),
    [
        ("palma", "Palma ratio (top 10 % / bottom 40 %)"),
        ("atkinson_0.5", "Atkinson (ε = 0.5; 0 = equal)"),
        ("atkinson_2", "Atkinson (ε = 2; 0 = equal)"),
        ("gini", "Gini coefficient (0 = equal)"),
    ],
)
def test_value_labels_keep_what_tells_an_index_apart_and_say_no_unit_twice(index, expected):
    from types import SimpleNamespace

    from explorer.views import ViewState

    label = vocabulary.value_label(ViewState(index=index), SimpleNamespace(kind="brackets"))
    assert label == expected
    assert "(ratio)" not in label and ".." not in label


@pytest.mark.parametrize(
    ("level", "plural"),
    [("SUB_REGION", "sub regions"), ("county", "counties"), ("Ward", "wards")],
)
def test_level_names_from_a_file_read_as_words(level, plural):
    # common practice: a column name is not shown as it is spelled in the file
    assert vocabulary.groups_word(level) == plural
    assert vocabulary.part_label("between", level) == f"Between {plural}"
