"""A tiny workbook with one cell far away is refused within bounded memory, naming the cell.

Each reader runs in a child process whose address space is capped (``RLIMIT_AS``), so a
reader that builds the sheet's whole used range (17 billion cells for ``XFD1048576``) fails
there with a MemoryError instead of passing. The largest sheet is 16,384 columns by
1,048,576 rows (Microsoft, "Excel specifications and limits": common practice).
"""

from __future__ import annotations

import json
import re
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

openpyxl = pytest.importorskip("openpyxl")

ROOT = Path(__file__).resolve().parents[2]
CAP = 1_500 * 1024 * 1024  # bytes of address space for the child

CHILD = r"""
import json, resource, sys
cap = int(sys.argv[2])
resource.setrlimit(resource.RLIMIT_AS, (cap, cap))
from explorer import cli
from explorer.data import load_panel, read_head, read_table
from explorer.data.model import DataError
from explorer.data.office import read_office_table
out = {}
for name, call in [("table", read_table), ("head", read_head), ("office", read_office_table),
                   ("load", load_panel)]:
    try:
        value = call(sys.argv[1])
        out[name] = ["read", list(getattr(value, "columns", []))]
    except DataError as error:
        out[name] = ["refused", error.problems[0].message]
    except MemoryError:
        out[name] = ["memory", ""]
out["check"] = cli.main(["check", sys.argv[1]])
print(json.dumps(out))
"""


def _workbook(path: Path, far: str | None) -> Path:
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "incomes"
    sheet.append(["region", "year", "mean_income"])
    sheet.append(["Varn", 2020, 100.0])
    sheet.append(["Oskel", 2020, 120.0])
    if far:
        sheet[far] = "x"
    book.save(path)
    return path


def _state_dimension(path: Path, ref: str | None) -> Path:
    """The same workbook stating a wrong used range (``ref``) or none (``None``)."""
    out = path.with_name(f"{path.stem}-dim{ref or 'none'}.xlsx".replace(":", ""))
    with zipfile.ZipFile(path) as source, zipfile.ZipFile(out, "w") as target:
        for item in source.infolist():
            data = source.read(item.filename)
            if item.filename.startswith("xl/worksheets/sheet"):
                stated = f'<dimension ref="{ref}"/>' if ref else ""
                data = re.sub(rb'<dimension ref="[^"]*"\s*/>', stated.encode(), data)
            target.writestr(item, data)
    return out


def _run(path: Path) -> dict:
    done = subprocess.run(
        [sys.executable, "-c", CHILD, str(path), str(CAP)],
        cwd=ROOT,
        env={"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin"},
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert done.returncode == 0, done.stderr[-2000:]
    return json.loads(done.stdout.strip().splitlines()[-1]) | {"stderr": done.stderr}


@pytest.mark.parametrize(
    ("far", "stated", "named"),
    [
        ("A1048576", "keep", "C1048576"),  # the used range's far corner, as the file states it
        ("XFD1", "keep", "XFD3"),
        ("XFD1048576", "keep", "XFD1048576"),
        ("XFD1048576", "A1:C3", "XFD1048576"),  # a stated range that hides the far cell
        ("A1048576", "A1:C3", "A1048576"),
        ("XFD1048576", None, "XFD1048576"),  # no stated range at all
    ],
    ids=["last-row", "last-column", "last-cell", "wrong-range", "wrong-range-row", "no-range"],
)
def test_a_far_away_cell_is_refused_in_bounded_memory_naming_sheet_and_cell(
    tmp_path, far, stated, named
):
    path = _workbook(tmp_path / "tiny.xlsx", far)
    if stated != "keep":
        path = _state_dimension(path, stated)
    result = _run(path)
    for reader in ("table", "office", "load"):
        outcome, message = result[reader]
        assert outcome == "refused", (reader, result)
        assert "'incomes'" in message and named in message, (reader, message)
    assert result["check"] == 2
    assert named in result["stderr"] and "Traceback" not in result["stderr"]


def test_the_same_tiny_workbook_without_the_far_cell_reads(tmp_path):
    result = _run(_workbook(tmp_path / "tiny.xlsx", None))
    assert result["table"] == ["read", ["region", "year", "mean_income"]]
    assert result["head"] == ["read", ["region", "year", "mean_income"]]
    assert result["check"] == 0


def test_listing_columns_reads_only_the_first_rows(tmp_path):
    from explorer.data import read_head, read_table
    from explorer.data.model import DataError

    # A wrong stated range hides a far cell in the last row: the whole read reaches it and
    # refuses, a look at the header stops long before.
    path = _state_dimension(_workbook(tmp_path / "tiny.xlsx", "XFD1048576"), "A1:C3")
    assert list(read_head(path).columns) == ["region", "year", "mean_income"]
    with pytest.raises(DataError):
        read_table(path)
    # A text file whose line 500 is malformed: the head never gets there.
    text = tmp_path / "long.csv"
    lines = ["region,year,mean_income"] + [f"D{i},2020,{i}" for i in range(498)]
    text.write_text("\n".join([*lines, "a,b,c,d,e,f", ""]), encoding="utf-8")
    assert list(read_head(text).columns) == ["region", "year", "mean_income"]
    assert len(read_head(text)) < 50
    with pytest.raises(DataError, match="line 500"):
        read_table(text)


def test_listing_columns_of_parquet_reads_one_batch(tmp_path):
    import pandas as pd

    from explorer.data import read_head

    path = tmp_path / "panel.parquet"
    pd.DataFrame({"region": ["A"] * 1000, "year": 2020, "mean_income": 1.0}).to_parquet(path)
    head = read_head(path)
    assert list(head.columns) == ["region", "year", "mean_income"]
    assert 0 < len(head) < 1000
