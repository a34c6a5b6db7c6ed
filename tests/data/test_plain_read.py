"""Large plain CSV files are read typed in one pass and give what the careful reader gives.

The careful reader holds every cell as text first, which for a file of millions of unit
records costs dozens of times its size; the plain path reads numbers straight into floats.
Both must agree cell for cell, and anything irregular must go the careful way, which names
the line.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from explorer.data import tables
from explorer.data.load import load_panel
from explorer.data.model import DataError


def unit_file(path, rows=220_000, seed=3, extra=""):
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame(
        {
            "region": np.array([f"VAL{i:02d}" for i in range(40)])[rng.integers(0, 40, rows)],
            "year": rng.choice([2018, 2021], rows),
            "income": np.round(rng.lognormal(9.5, 0.8, rows), 2),
            "weight": np.round(rng.uniform(10, 90, rows), 1),
        }
    )
    frame.to_csv(path, index=False)
    if extra:
        with path.open("a") as handle:
            handle.write(extra)
    assert path.stat().st_size >= tables.PLAIN_READ_BYTES
    return frame


def test_the_plain_read_equals_the_careful_read(tmp_path, monkeypatch):
    path = tmp_path / "households.csv"
    unit_file(path)
    plain = tables.read_table(path)
    monkeypatch.setattr(tables, "PLAIN_READ_BYTES", 10**12)  # the careful reader only
    careful = tables.read_table(path)
    assert list(plain.columns) == list(careful.columns)
    assert np.array_equal(plain.index.to_numpy(), careful.index.to_numpy())
    for column in ("year", "income", "weight"):
        assert np.array_equal(plain[column].to_numpy(float), careful[column].to_numpy(float))
    assert (
        plain["region"].astype(str).to_numpy() == careful["region"].astype(str).to_numpy()
    ).all()
    # and the panels built from them are the same panel
    a = load_panel(path, kind="units")
    monkeypatch.setattr(tables, "PLAIN_READ_BYTES", 0)
    b = load_panel(path, kind="units")
    assert a.fingerprint == b.fingerprint


def test_a_footnote_under_a_large_table_is_read_as_the_careful_reader_reads_it_and_named(
    tmp_path, monkeypatch
):
    path = tmp_path / "households_noted.csv"
    unit_file(path, extra="Source: invented survey of the Valdmoor households\n")
    plain = tables._plain_csv(path, path.name)
    assert plain is not None and plain.index[-1] == 220_000  # line 220,002, padded
    assert plain["region"].iloc[-1] == "Source: invented survey of the Valdmoor households"
    assert np.isnan(plain["income"].iloc[-1])
    with pytest.raises(DataError) as caught:
        load_panel(path, kind="units")
    assert any(p.row == 220_002 for p in caught.value.problems), [
        (p.row, p.message) for p in caught.value.problems
    ]


def test_blank_lines_keep_the_line_numbers(tmp_path):
    path = tmp_path / "households_gaps.csv"
    frame = unit_file(path)
    text = path.read_text().splitlines()
    text.insert(100, "")  # a blank line after line 100 of the file
    path.write_text("\n".join(text) + "\n")
    plain = tables._plain_csv(path, path.name)
    assert plain is not None and len(plain) == len(frame)
    # the row after the blank line is line 102 of the file: index = line - 2
    assert plain.index[99] == 100 and plain["income"].iloc[99] == frame["income"].iloc[99]
