"""``rift scenario VIEWFILE --scenario SCENARIO.json --out DIR|FILE``: a what-if on a saved view.

The view file names the dataset, the year (the latest when it has none), the Lorenz method
and the poverty line; the scenario file holds the steps (:mod:`explorer.stats.scenario`).

Output layout
-------------
``--out DIR`` (no .csv or .parquet suffix) writes one CSV per table into DIR, every table
starting with the column ``year``:

* ``indices.csv`` — ``region, index, before, after, change, note`` (``(all)`` = province)
* ``poverty.csv`` — ``region, index, line, before, after, change, note``
* ``decomposition.csv`` — ``index, level, group, component, before, after, change,
  share_before, share_after``
* ``budget.csv`` — ``step, kind, region, people, money, rate, threshold``
* ``gain.csv`` — ``percentile, before, after, change, growth``
* ``notes.txt`` — the approximation, the line, the caution; ``scenario.json`` — the scenario
  as read, in its file form.

``--out FILE.csv`` (or ``.parquet``) writes the one table named by ``--table``
(default ``indices``); the notes then go to standard error.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from dataclasses import replace
from pathlib import Path

from explorer.data.model import DataError, Problem

__all__ = ["MAX_SCENARIO_FILE_BYTES", "add_parser", "run"]

MAX_SCENARIO_FILE_BYTES = 1_000_000


def add_parser(commands) -> None:
    """The ``scenario`` command's arguments."""
    from explorer.stats.scenario import TABLES

    scenario = commands.add_parser(
        "scenario", help="before and after tables of a what-if scenario on a saved view"
    )
    scenario.add_argument("view", help="view file (.json) saved from the app")
    scenario.add_argument(
        "--scenario",
        metavar="SCENARIO.json",
        help="the scenario's steps (default: the scenario the view carries, from the What-if page)",
    )
    scenario.add_argument(
        "--out",
        required=True,
        metavar="DIR|FILE.csv",
        help="a folder for every table, or one .csv/.parquet file for the table of --table",
    )
    scenario.add_argument(
        "--table",
        choices=TABLES,
        default="indices",
        help="the table written to a single --out file (default indices)",
    )
    scenario.add_argument("--data", metavar="DIR", help="workspace holding the view's dataset")


def _problem(path: Path, message: str, fix: str) -> DataError:
    return DataError([Problem(message, fix=fix, file=str(path))])


def read_scenario(path: Path):
    """The scenario in ``path``, refused (a DataError naming the file) unless it is one."""
    from explorer.stats.scenario import Scenario

    fix = "write the scenario as JSON with rift_scenario, name and steps (see README)"
    try:
        if path.is_dir():
            raise _problem(path, "this is a folder, not a scenario file", fix)
        with path.open("rb") as handle:
            raw = handle.read(MAX_SCENARIO_FILE_BYTES + 1)
    except OSError as error:
        message = f"cannot read the scenario file: {error.strerror or error}"
        raise _problem(path, message, fix) from None
    if len(raw) > MAX_SCENARIO_FILE_BYTES:
        raise _problem(
            path, "the scenario file is larger than 1 MB; a scenario is a few lines", fix
        )
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise _problem(path, "the scenario file is not UTF-8 text", fix) from None
    return Scenario.from_json(text, file=str(path))


def _write_text(path: Path, text: str) -> None:
    temporary = path.with_name(f".{path.name}.part")
    temporary.write_text(text, encoding="utf-8")
    os.replace(temporary, path)


def run(args: argparse.Namespace) -> int:
    """Apply the scenario to the view's dataset and write the tables."""
    from explorer import cli, views
    from explorer.data import catalog
    from explorer.stats import poverty_lines
    from explorer.stats.scenario import apply

    view, notices = views.from_json(cli._read_view_file(Path(args.view)))
    for notice in notices:
        print(f"note: {notice}", file=sys.stderr)
    if args.scenario:
        scenario = read_scenario(Path(args.scenario))
    elif view.scenario:
        from explorer.stats.scenario import Scenario

        scenario = Scenario.from_json(view.scenario, file=str(args.view))
    else:
        raise _problem(
            Path(args.view),
            "the view carries no scenario and no --scenario file is given",
            "give --scenario SCENARIO.json, or save the view from the What-if page",
        )
    out = Path(args.out)
    if out.resolve() in cli._inputs(args):
        raise _problem(out, "the output would overwrite an input file", "choose another --out")
    panel = catalog.open_dataset(view.dataset, args.data)
    cli._report_set_aside(panel)
    line = poverty_lines.parse_line(view.poverty_line, scope=view.relative_to)
    try:
        result = apply(panel, scenario, view.year, line=line, method=view.method)
    except DataError as error:
        # a step that does not fit the data (a district the year lacks): the scenario file's
        raise DataError(
            [
                replace(p, file=str(args.scenario))
                if (p.column or "").startswith("steps[") and not p.file
                else p
                for p in error.problems
            ]
        ) from None
    tables = result.tables()
    if out.suffix.lower() in (".csv", ".parquet"):
        for note in result.notes:
            print(f"note: {note}", file=sys.stderr)
        cli._write(tables[args.table], str(out), args)
        return cli.EXIT_OK
    if out.exists() and not out.is_dir():
        raise _problem(out, "--out names a file that is not a folder", "name a folder or a .csv")
    out.mkdir(parents=True, exist_ok=True)
    for name, table in tables.items():
        cli._write(table, str(out / f"{name}.csv"), args)
    _write_text(out / "notes.txt", "\n".join(result.notes) + "\n")
    _write_text(out / "scenario.json", json.dumps(scenario.to_dict(), indent=2) + "\n")
    print(f"scenario applied to {view.dataset}, year {result.year}", file=sys.stderr)
    return cli.EXIT_OK
