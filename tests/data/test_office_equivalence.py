"""Decorated and undecorated forms of the same table give the same tidy table: title and
footnote lines, footnote markers, thousands separators, decimal commas, padded year headers,
suppression codes, a total row, other delimiters and Latin-1 change nothing."""

from __future__ import annotations

import math

import pandas as pd
from hypothesis import given, settings
from hypothesis import strategies as st

from explorer.data.office import read_office_table
from explorer.data.office.cells import SUPPRESSION_CODES

NAMES = (
    "Ashvale",
    "Northland",
    "Lower Marsh",
    "Brindle Cove",
    "Kestrel Heights",
    "Élmere",
    "Greyhollow",
    "Dunmoor",
    "Fenwick",
    "Ørnby",
)
MARKERS = ("", " 3/", " (r)", " (p)", "*", " 1)")
YEAR_FORMS = ("{}", "{}  ", "Y{}", "{} (p)", "{}e", " {}")
CODES = sorted(SUPPRESSION_CODES)


@st.composite
def tables(draw: st.DrawFn) -> tuple[list[str], list[int], list[list[float]]]:
    names = draw(st.lists(st.sampled_from(NAMES), min_size=2, max_size=6, unique=True))
    first = draw(st.integers(1950, 2020))
    years = list(range(first, first + draw(st.integers(2, 4))))
    value = st.one_of(st.none(), st.integers(0, 5_000_000).map(lambda v: v / 10))
    values = [[draw(value) for _ in years] for _ in names]
    # a district line with no value at all holds no data in its plain form either
    values = [row if any(v is not None for v in row) else [1.0, *row[1:]] for row in values]
    return names, years, values


def _cell(value: float | None, decimal: str, grouping: str, code: str) -> str:
    if value is None:
        return code
    whole, tenth = divmod(round(value * 10), 10)
    text = f"{whole:,}".replace(",", grouping)
    return text + (f"{decimal}{tenth}" if tenth else "")


def _csv(rows: list[list[str]], delimiter: str) -> str:
    def quoted(cell: str) -> str:
        return f'"{cell}"' if delimiter in cell or '"' in cell else cell

    return "\n".join(delimiter.join(quoted(c) for c in row) for row in rows) + "\n"


def plain(names: list[str], years: list[int], values: list[list[float | None]]) -> bytes:
    rows = [["District", *map(str, years)]]
    rows += [
        [n, *("" if v is None else repr(v) for v in vs)]
        for n, vs in zip(names, values, strict=True)
    ]
    return _csv(rows, ",").encode()


@st.composite
def decorated(draw: st.DrawFn, names, years, values) -> tuple[bytes, str]:
    encoding = draw(st.sampled_from(["utf-8", "utf-8-sig", "latin-1"]))
    codes = [c for c in CODES if c.encode(encoding, "ignore").decode(encoding) == c]
    delimiter = draw(st.sampled_from([",", ";", "\t", "|"]))
    decimal = "," if delimiter == ";" else "."
    grouping = draw(st.sampled_from(["", "\u00a0", " "] + (["."] if decimal == "," else [","])))
    year_form = draw(st.sampled_from(YEAR_FORMS))
    rows = [
        [t]
        for t in draw(
            st.lists(
                st.sampled_from(
                    ["Table 9. Population by district", "Valdoria Province", "(persons)"]
                ),
                max_size=3,
            )
        )
    ]
    rows.append(["District", *(year_form.format(y) for y in years)])
    if draw(st.booleans()):  # a total row first, as offices print it
        totals = [
            sum(v for v in col if v is not None) if all(v is not None for v in col) else None
            for col in zip(*values, strict=True)
        ]
        rows.append(["Total", *(_cell(t, decimal, grouping, "..") for t in totals)])
    for name, row in zip(names, values, strict=True):
        marker = draw(st.sampled_from(MARKERS))
        rows.append(
            [
                name + marker,
                *(_cell(v, decimal, grouping, draw(st.sampled_from(codes))) for v in row),
            ]
        )
    rows += [
        [t]
        for t in draw(
            st.lists(
                st.sampled_from(
                    ["Source: Valdoria Board of Statistics.", "1/ Revised.", "x Withheld."]
                ),
                max_size=3,
            )
        )
    ]
    return _csv(rows, delimiter).encode(encoding), decimal


@settings(max_examples=60, deadline=None)
@given(st.data(), tables())
def test_decorated_and_plain_forms_give_the_same_table(data: st.DataObject, table) -> None:
    names, years, values = table
    blob, decimal = data.draw(decorated(names, years, values))
    # with the boundary file's names given, only the decorated total row can be a total
    reference = read_office_table(
        plain(names, years, values), "plain.csv", measure="population", boundary_ids=names
    )
    reading = read_office_table(
        blob, "decorated.csv", measure="population", decimal=decimal, boundary_ids=names
    )
    pd.testing.assert_frame_equal(reading.table, reference.table)
    expected = pd.DataFrame(
        [
            {"region": n, "year": y, "population": math.nan if v is None else v}
            for n, row in zip(names, values, strict=True)
            for y, v in zip(years, row, strict=True)
        ]
    ).astype({"year": "int64", "population": float})
    pd.testing.assert_frame_equal(reference.table, expected)
