"""The ``rift`` command line: app, check, compute, decompose, spatial, report, brief, scenario.

Every command reads its panel through :func:`explorer.data.load.load_panel`, so the command line
and the app accept exactly the same files. Problems with the input are printed one per
line and exit with status 2; the command never shows a traceback.
"""

from __future__ import annotations

import argparse
import os
import stat
import sys
import tempfile
from collections.abc import Sequence
from pathlib import Path

import pandas as pd

from explorer import cli_scenario, cli_vintages
from explorer.data.model import DataError, Problem
from explorer.present import exports, vocabulary

__all__ = ["COMMANDS", "EXIT_BAD_INPUT", "EXIT_FAILED", "EXIT_OK", "build_parser", "main"]

EXIT_OK = 0
EXIT_FAILED = 1
EXIT_BAD_INPUT = 2

DEMO = "demo"


# --------------------------------------------------------------------------- arguments


def _panel_arguments(
    parser: argparse.ArgumentParser,
    *,
    boundaries: bool = True,
    year: bool = True,
    vintages: bool = False,
) -> None:
    parser.add_argument(
        "panel", help="panel file (CSV, Parquet, Excel), or 'demo' for the built-in province"
    )
    if boundaries:
        parser.add_argument(
            "--boundaries",
            metavar="FILE[@YEAR]",
            action="append",
            help="district boundaries (GeoJSON, GeoPackage, zipped Shapefile, GeoParquet); "
            "repeat as FILE@YEAR for boundaries valid from YEAR (a plain FILE: from the "
            "first year), with --changes, to carry the panel across boundary changes",
        )
    parser.add_argument(
        "--kind",
        choices=("brackets", "units", "means", "published"),
        help="what the panel holds, when detection from its columns is not wanted "
        "(with 'demo': which of the demo files)",
    )
    parser.add_argument(
        "--map",
        metavar="OURS=THEIRS,...",
        help="rename columns on read, e.g. region=DistrictCode,year=Yr",
    )
    parser.add_argument("--sheet", help="Excel sheet to read (default: the first)")
    parser.add_argument(
        "--allow-negative",
        action="store_true",
        help="accept negative incomes in unit records (losses); indices undefined for them say so",
    )
    _office_arguments(parser, year=year)
    if boundaries:
        if vintages:
            cli_vintages.add_arguments(parser)
        parser.add_argument("--layer", help="GeoPackage layer to read")
        parser.add_argument(
            "--boundary-id", metavar="COL", help="boundary attribute holding the district id"
        )
        parser.add_argument(
            "--crs", metavar="EPSG", help="coordinate system of a boundary file that names none"
        )


def _office_arguments(parser: argparse.ArgumentParser, *, year: bool = True) -> None:
    """How to read a table as a statistics office publishes it, and what to add to it."""
    office = parser.add_argument_group("published tables")
    office.add_argument(
        "--header-row",
        type=int,
        metavar="N",
        help="line of the column header (default: detected past title and note lines)",
    )
    office.add_argument(
        "--measure",
        metavar="NAME[,NAME]",
        help="what the values are when the header does not say, e.g. mean_income "
        "(several for blocks side by side)",
    )
    if year:
        office.add_argument(
            "--year",
            type=int,
            metavar="YEAR",
            help="the year of a table for one year with no year column",
        )
    office.add_argument(
        "--keep-totals",
        action="store_true",
        help="keep rows recognised as totals (the province, groups of districts) as districts",
    )
    office.add_argument(
        "--population",
        metavar="FILE",
        help="second table of district, year, population joined on district and year",
    )
    office.add_argument(
        "--levels",
        metavar="COL[=Name],...",
        help="higher levels to use, outermost first, with display names, e.g. "
        "ZONE=Zone,SUB=Subregion (default: proposed from the text columns that nest "
        "the districts)",
    )
    office.add_argument(
        "--crosswalk",
        metavar="FILE",
        help="table of region,boundary_id renaming the panel's districts to boundary ids",
    )


def _levels(text: str | None) -> dict[str, str] | None:
    """``a,b=Name`` as {column: display name}; None when not given."""
    if not text:
        return None
    out = {}
    for part in _split(text):
        column, _, name = part.partition("=")
        out[column.strip()] = name.strip() or column.strip()
    return out


def _read_options(args: argparse.Namespace):
    from explorer.data.office import ReadOptions

    measure = tuple(_split(getattr(args, "measure", None))) or None
    return ReadOptions(
        header_row=getattr(args, "header_row", None),
        measure=measure[0] if measure and len(measure) == 1 else measure,
        year=getattr(args, "year", None),
        keep_aggregates=bool(getattr(args, "keep_totals", False)),
    )


def _out_argument(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--out", metavar="FILE", help="write .csv or .parquet (default: CSV to standard output)"
    )


# Longer than our usual limit on purpose: one flat declaration per command reads like the
# help it prints, and splitting it would only scatter the options over more functions.
def build_parser() -> argparse.ArgumentParser:
    """The argument parser of every ``rift`` command."""
    parser = argparse.ArgumentParser(
        prog="rift",
        description="Regional inequality explorer: district Lorenz curves, indices, "
        "decompositions, maps and shareable views.",
    )
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    app = commands.add_parser("app", help="start the app in the browser (demo data by default)")
    app.add_argument("--data", metavar="DIR", help="workspace directory for stored datasets")
    app.add_argument("--port", type=int, default=8501, help="port to serve on (default 8501)")
    app.add_argument(
        "--host",
        default="localhost",
        help="address to listen on (default localhost: this machine only; 0.0.0.0 lets a "
        "team reach a shared machine)",
    )
    app.add_argument(
        "--allow-host",
        action="append",
        default=[],
        metavar="NAME",
        help="another name browsers may use to reach the server (repeatable; '*' for any). "
        "By default only the listening address, this machine's loopback names and, with "
        "0.0.0.0, its own host names are answered",
    )

    check = commands.add_parser("check", help="validate a panel and its boundaries")
    _panel_arguments(check, vintages=True)
    check.add_argument(
        "--save",
        action="store_true",
        help="when valid, store the dataset in the workspace (the app lists it)",
    )
    check.add_argument("--data", metavar="DIR", help="workspace directory for --save")

    compute = commands.add_parser("compute", help="indices for every district and year")
    _panel_arguments(compute, vintages=True)
    compute.add_argument(
        "--method",
        default="auto",
        help="Lorenz method(s) for grouped data, comma-separated: "
        f"{', '.join(vocabulary.LORENZ_METHODS)} (default auto)",
    )
    compute.add_argument(
        "--indices", help="comma-separated index keys, e.g. gini,theil_t,atkinson_1,palma"
    )
    compute.add_argument("--ci", choices=("bootstrap",), help="intervals for unit data")
    compute.add_argument("--reps", type=int, default=199, help="bootstrap replicates")
    compute.add_argument("--seed", type=int, default=0, help="random seed")
    compute.add_argument(
        "--confidence",
        type=float,
        default=0.95,
        help="confidence of the sampling intervals, e.g. 0.95",
    )
    compute.add_argument(
        "--poverty-line",
        metavar="LINE",
        help="also measure poverty (fgt_0, fgt_1, fgt_2, watts, sen_poverty) against this "
        "line: an amount per person per year (12000) or a share of the median or mean "
        "(60%%median, 50%%mean)",
    )
    compute.add_argument(
        "--relative-to",
        choices=("province", "district"),
        default="province",
        help="a relative line is a share of the province's median or mean (default) or of "
        "each district's own",
    )
    compute.add_argument("--fits", metavar="FILE", help="also write the fit diagnostics here")
    _out_argument(compute)

    decompose = commands.add_parser(
        "decompose", help="inequality within and between districts and higher levels"
    )
    _panel_arguments(decompose, vintages=True)
    decompose.add_argument(
        "--by", default=None, help="higher level column(s), outermost first, e.g. county"
    )
    decompose.add_argument(
        "--index",
        default="theil_t",
        help="theil_t, mld, ge_<alpha> or gini (default theil_t); or a poverty measure that "
        "adds up over groups (fgt_0, fgt_1, fgt_2, watts) with --poverty-line",
    )
    decompose.add_argument(
        "--poverty-line",
        metavar="LINE",
        default="60%median",
        help="the line of a poverty split: an amount per person per year (12000) or a share "
        "of the province's median or mean (60%%median, the default; 50%%mean)",
    )
    decompose.add_argument("--method", default="auto", help="Lorenz method for grouped data")
    decompose.add_argument("--from", dest="year_from", type=int, help="first year of a change")
    decompose.add_argument("--to", dest="year_to", type=int, help="last year of a change")
    _out_argument(decompose)

    spatial = commands.add_parser("spatial", help="spatial clustering of an index or mean")
    _panel_arguments(spatial, year=False, vintages=True)
    spatial.add_argument("--index", default="gini", help="index key, or mean_income")
    spatial.add_argument(
        "--year",
        type=int,
        help="year (default: the latest); also the year of a table for one year with no "
        "year column",
    )
    spatial.add_argument("--method", default="auto", help="Lorenz method for grouped data")
    spatial.add_argument("--graph", choices=("queen", "rook", "knn"), default="queen")
    spatial.add_argument("--k", type=int, default=4, help="neighbours for --graph knn")
    spatial.add_argument("--permutations", type=int, default=999)
    spatial.add_argument("--seed", type=int, default=0)
    _out_argument(spatial)

    report = commands.add_parser("report", help="one-file HTML report of a saved view")
    report.add_argument("view", help="view file (.json) saved from the app")
    report.add_argument("--out", metavar="FILE.html", required=True)
    report.add_argument("--data", metavar="DIR", help="workspace holding the view's dataset")

    brief = commands.add_parser("brief", help="a saved view in a few paragraphs of plain words")
    brief.add_argument("view", help="view file (.json) saved from the app")
    brief.add_argument("--format", choices=("text", "markdown"), default="text")
    brief.add_argument("--out", metavar="FILE", help="write here (default: standard output)")
    brief.add_argument("--data", metavar="DIR", help="workspace holding the view's dataset")
    cli_scenario.add_parser(commands)
    return parser


# --------------------------------------------------------------------------- helpers


def _split(text: str | None) -> list[str]:
    return [part.strip() for part in (text or "").split(",") if part.strip()]


def _load(args: argparse.Namespace):
    """The panel named on the command line, validated."""
    from explorer import data as readers

    if args.panel == DEMO:
        panel = readers.demo_panel(args.kind or "brackets")
        if cli_vintages.wanted(args):
            panel = cli_vintages.carry(panel, args)
        _report_set_aside(panel)
        return panel
    column_map = readers.parse_column_map(args.map) if args.map else None
    carrying = cli_vintages.wanted(args)
    panel = readers.load_panel(
        args.panel,
        None if carrying else _plain_boundaries(args),
        kind=args.kind,
        column_map=column_map,
        boundary_id=getattr(args, "boundary_id", None),
        crs=getattr(args, "crs", None),
        sheet=args.sheet,
        layer=getattr(args, "layer", None),
        allow_negative=args.allow_negative,
        options=_read_options(args),
        population=getattr(args, "population", None),
        crosswalk=getattr(args, "crosswalk", None),
        levels=_levels(getattr(args, "levels", None)),
    )
    if carrying:
        panel = cli_vintages.carry(panel, args)
    _report_set_aside(panel)
    return panel


def _plain_boundaries(args: argparse.Namespace) -> str | None:
    """The one boundary file of a panel without boundary changes (a ``@YEAR`` is dropped)."""
    from explorer.data.vintages import parse_spec

    specs = getattr(args, "boundaries", None) or []
    return parse_spec(specs[0])[0] if specs else None


def _report_set_aside(panel) -> None:
    """One line on stderr per district-year set aside, with its reason, and a count."""
    excluded = panel.excluded
    for row in excluded.itertuples():
        print(f"set aside: district {row.region}, year {row.year}: {row.reason}", file=sys.stderr)
    total = int(len(excluded)) + int(panel.data.groupby(["region", "year"]).ngroups)
    print(f"{len(excluded)} of {total} district-year(s) set aside", file=sys.stderr)


def _inputs(args: argparse.Namespace) -> set[Path]:
    paths = set()
    for name in ("panel", "view", "scenario", "population", "crosswalk"):
        value = getattr(args, name, None)
        if value and value != DEMO:
            paths.add(Path(value).resolve())
    paths.update(p.resolve() for p in cli_vintages.paths(args))
    return paths


def _write(table: pd.DataFrame, out: str | None, args: argparse.Namespace) -> None:
    """Write a tidy table to ``out`` (atomically) or to standard output as CSV.

    CSV text cells that a spreadsheet would run as formulas are prefixed with a quote
    (:mod:`explorer.present.exports`); Parquet keeps the raw strings.
    """
    # attrs may carry side tables (e.g. excluded district-years) that Parquet cannot store.
    table = table.copy(deep=False)
    table.attrs = {}
    if not out:
        exports.write_csv(table, sys.stdout)
        return
    target = Path(out)
    if target.resolve() in _inputs(args):
        raise DataError(
            [
                Problem(
                    "the output file is one of the input files",
                    fix="choose another --out name; inputs are never overwritten",
                    file=str(out),
                )
            ]
        )
    suffix = target.suffix.lower()
    if suffix not in (".csv", ".parquet"):
        raise DataError(
            [Problem("unknown output format", fix="name the file .csv or .parquet", file=out)]
        )
    target.parent.mkdir(parents=True, exist_ok=True)
    handle, temporary = tempfile.mkstemp(dir=target.parent, prefix=".rift-", suffix=suffix)
    os.close(handle)
    try:
        if suffix == ".csv":
            exports.write_csv(table, temporary)
        else:
            Path(temporary).write_bytes(exports.parquet_bytes(table))
        os.replace(temporary, target)
    finally:
        if os.path.exists(temporary):
            os.unlink(temporary)
    print(f"wrote {len(table)} rows to {target}", file=sys.stderr)


def _print_problems(error: DataError) -> None:
    for problem in error.problems:
        print(_problem_line(problem), file=sys.stderr)


#: Words of a reader's message, and the option of this command line that answers it.
OPTION_HINTS = {
    "no year column": "--year YEAR",
    "totals of other rows": "--keep-totals",
    "not read (line": "--header-row N",
}


def _problem_line(problem: Problem) -> str:
    where = [problem.file or "input"]
    if problem.row is not None:
        where.append(f"line {problem.row}")
    if problem.column:
        where.append(f"column {problem.column!r}")
    line = f"{problem.severity}: {', '.join(where)}: {problem.message}"
    if problem.fix:
        line += f" — {problem.fix}"
    hints = [o for words, o in OPTION_HINTS.items() if words in problem.message]
    if hints and problem.fix:
        line += f" ({', '.join(hints)})"
    return line


# --------------------------------------------------------------------------- commands


def run_app(args: argparse.Namespace) -> int:
    """Start the Streamlit app on the demo (and any stored datasets); stopping this process
    (SIGTERM, SIGINT, SIGHUP) stops the server too."""
    from explorer.serving import PROJECT, allowed_hosts, app_command, run_until_stopped

    env = dict(os.environ)
    if args.data:
        env["RIFT_DATA"] = str(Path(args.data).resolve())
    command = app_command(args.port, args.host, args.allow_host)
    shown = "localhost" if args.host in ("localhost", "127.0.0.1", "0.0.0.0") else args.host
    print(f"Rift is starting on http://{shown}:{args.port}  (Ctrl+C stops it)", file=sys.stderr)
    names = allowed_hosts(args.host, args.allow_host)
    if "*" not in names:
        print(
            f"answering only to the names {', '.join(names)} (add others with --allow-host)",
            file=sys.stderr,
        )
    try:
        return run_until_stopped(command, env=env, cwd=PROJECT)
    except KeyboardInterrupt:
        return EXIT_OK


def summary_lines(summary: dict) -> list[str]:
    """The summary of :meth:`Panel.describe` as readable lines."""
    years = summary.get("years") or {}
    lines = [
        f"kind: {summary['kind']}",
        f"districts: {summary['districts']} ({summary['district_years']} district-years)",
        f"years: {years.get('first')}-{years.get('last')} ({years.get('count')} years)",
    ]
    for part in ("brackets", "units"):
        sizes = summary.get(part)
        if sizes:
            lines.append(f"{part} per district-year: {sizes['min']}-{sizes['max']}")
    levels = summary.get("levels") or {}
    found = ", ".join(f"{name} ({count} groups)" for name, count in levels.items())
    lines.append(f"higher levels: {found or 'none found'}")
    bounds = summary.get("boundaries")
    if bounds is None:
        lines.append("boundaries: none given")
    else:
        lines.append(f"boundaries: {bounds['matched']} districts matched")
        for side, label in (
            ("panel_only", "in the panel only"),
            ("boundary_only", "in the boundaries only"),
        ):
            if bounds[side]:
                shown = ", ".join(bounds[side][:10]) + (" ..." if len(bounds[side]) > 10 else "")
                lines.append(f"  {label}: {shown}")
    lines.append(f"set aside: {summary['excluded']} district-years")
    lines.append(f"warnings: {summary['warnings']}")
    lines.append(f"fingerprint: {summary['fingerprint']}")
    return lines


def run_check(args: argparse.Namespace) -> int:
    """Validate and print a summary (or every problem)."""
    panel = _load(args)
    for line in reading_lines(args):
        print(f"read as: {line}")
    for line in summary_lines(panel.describe()):
        print(line)
    for problem in panel.warnings:
        print(_problem_line(problem))
    for line in name_suggestions(panel):
        print(f"names: {line}")
    set_aside = int(len(panel.excluded))
    if set_aside:
        total = set_aside + int(panel.data.groupby(["region", "year"]).ngroups)
        usable = total - set_aside
        print(
            f"not clean: {set_aside} of {total} district-year(s) set aside; "
            f"{usable} ({usable / total:.0%}) of the panel is usable"
        )
    else:
        print("valid")
    if args.save:
        from explorer.data.workspace import Workspace

        if args.panel == DEMO:
            raise DataError(
                [Problem("the demo is built in and needs no saving", fix="save your own files")]
            )
        workspace = Workspace(Path(args.data)) if args.data else Workspace()
        carried = cli_vintages.wanted(args)
        extra = (None if carried else _plain_boundaries(args), args.population, args.crosswalk)
        sources = [Path(args.panel)] + [Path(p) for p in extra if p]
        if carried:
            # every boundary vintage, the change table and the finer layer make the dataset
            sources += cli_vintages.paths(args)
        options = {
            "kind": args.kind,
            "column_map": args.map,
            "boundary_id": args.boundary_id,
            "crs": args.crs,
            "sheet": args.sheet,
            "layer": args.layer,
            "reading": _read_options(args).to_dict(),
            "levels": args.levels,
            "population": Path(args.population).name if args.population else None,
            "crosswalk": _crosswalk_pairs(args.crosswalk),
        }
        if carried:
            options["carrying"] = cli_vintages.options(args)
        dataset = workspace.add(panel, sources, options)
        print(f"saved as dataset {dataset} in {workspace.root}")
    return EXIT_BAD_INPUT if set_aside else EXIT_OK


def reading_lines(args: argparse.Namespace) -> list[str]:
    """What was understood of a table read as an office publishes it (layout, header line,
    measures); nothing for a tidy table or the demo."""
    from explorer.data.load import read_as_it_is, read_panel_table

    if args.panel == DEMO:
        return []
    from explorer.data.tables import PLAIN_READ_BYTES

    options = _read_options(args)
    try:
        large = Path(args.panel).stat().st_size >= PLAIN_READ_BYTES
    except OSError:
        large = False
    if large and read_as_it_is(args.panel, sheet=args.sheet, column_map=args.map, options=options):
        return []  # a tidy table has no account to give: a large file is not read twice
    try:
        read = read_panel_table(args.panel, sheet=args.sheet, column_map=args.map, options=options)
    except DataError:  # the panel was read already; this is only its account
        return []
    if read.reading is None:
        return []
    return read.reading.summary()[:2]


def _crosswalk_pairs(path: str | None) -> dict[str, str] | None:
    """The crosswalk file as pairs, stored with the dataset so that it is offered again."""
    if not path:
        return None
    from explorer.data.load import read_crosswalk

    table = read_crosswalk(path)
    return dict(zip(table["region"], table["boundary_id"], strict=True))


def name_suggestions(panel) -> list[str]:
    """For panel districts the boundaries lack: the boundary districts they look like."""
    from explorer.data.office import match_names

    bounds = panel.boundaries
    if bounds is None:
        return []
    theirs = set(bounds["region"].astype(str))
    ours = [r for r in panel.regions if r not in theirs]
    if not ours:
        return []
    unused = bounds[~bounds["region"].astype(str).isin(set(panel.regions))]
    names = unused["name"] if "name" in unused.columns else unused["region"]
    found = match_names(
        ours, dict(zip(unused["region"].astype(str), names.astype(str), strict=True))
    )
    lines = found.messages()
    if found.suggestions:
        lines.append("to accept suggestions, give --crosswalk FILE with columns region,boundary_id")
    return lines


def run_compute(args: argparse.Namespace) -> int:
    from explorer.stats import indices

    panel = _load(args)
    methods = tuple(_split(args.method)) or ("auto",)
    chosen = tuple(_split(args.indices)) or indices.DEFAULT_INDICES
    table = indices.compute(
        panel,
        methods=methods,
        indices=chosen,
        ci=args.ci,
        reps=args.reps,
        seed=args.seed,
        level=args.confidence,
    )
    if args.poverty_line is not None:
        from explorer.stats import poverty_lines, poverty_table

        line = poverty_lines.parse_line(args.poverty_line, scope=args.relative_to)
        poor = poverty_table.compute(
            panel,
            line,
            methods=methods,
            ci=args.ci,
            reps=args.reps,
            seed=args.seed,
            level=args.confidence,
        )
        print(f"poverty line: {line.label()}", file=sys.stderr)
        table = pd.concat([table, poor], ignore_index=True)
    if args.fits:
        _write(indices.fits(panel, methods), args.fits, args)
    _write(table, args.out, args)
    return EXIT_OK


def run_decompose(args: argparse.Namespace) -> int:
    from explorer.figures import PlainCompute

    panel = _load(args)
    compute = PlainCompute(panel)
    by = tuple(_split(args.by)) or tuple(panel.levels)
    if (args.year_from is None) != (args.year_to is None):
        raise DataError([Problem("--from and --to go together", fix="give both years, or neither")])
    from explorer.stats import poverty_levels

    if args.index in poverty_levels.DECOMPOSABLE:
        # FGT and Watts add up over groups: each district's and county's contribution
        line = compute.poverty(args.poverty_line, "province", args.method)
        table = poverty_levels.by_level(line, panel, args.index)
        print(f"poverty line: {line.attrs.get('line', args.poverty_line)}", file=sys.stderr)
    elif args.year_from is not None:
        table = compute.change(by, args.index, args.year_from, args.year_to)
    else:
        table = compute.breakdown(by, args.index, args.method)
    _write(table, args.out, args)
    return EXIT_OK


def run_spatial(args: argparse.Namespace) -> int:
    from explorer import figures

    panel = _load(args)
    result = figures.for_panel(
        panel,
        index=args.index,
        year=args.year,
        method=args.method,
        graph=args.graph,
        k=args.k,
        permutations=args.permutations,
        seed=args.seed,
    )
    for key, value in result.summary.items():
        print(f"{key}: {value}", file=sys.stderr)
    _write(result.districts, args.out, args)
    return EXIT_OK


def _view_file_problem(path: Path, message: str) -> DataError:
    return DataError([Problem(message, fix="save a view file from the app", file=str(path))])


def _too_large(limit: int) -> str:
    return f"the view file is larger than {limit / 1e6:.0f} MB; a view file is a few hundred bytes"


def _read_view_file(path: Path) -> str:
    """The text of a view file, refused (exit 2) unless it can be read as one.

    Only a regular file is opened (a device of endless zeros or a pipe is refused before
    anything is read) and the size limit is applied first: at most one byte more than the
    limit is ever read. The rest is :func:`explorer.views.check_view_file`: a UTF-8
    byte-order mark is accepted; a file that is not a JSON object with the current
    ``rift_view`` version is refused, since a report of the default view would be a report
    of something else.
    """
    from explorer import views

    limit = views.MAX_VIEW_FILE_BYTES
    try:
        mode = path.stat().st_mode
        if stat.S_ISDIR(mode):
            raise _view_file_problem(path, "this is a folder, not a view file")
        if not stat.S_ISREG(mode):
            # a device or a pipe may never end (or never start): refuse before opening it
            raise _view_file_problem(
                path, "this is not a regular file (a device or a pipe), not a view file"
            )
        if path.stat().st_size > limit:
            raise _view_file_problem(path, _too_large(limit))
        with path.open("rb") as handle:
            raw = handle.read(limit + 1)
    except OSError as error:
        raise _view_file_problem(
            path, f"cannot read the view file: {error.strerror or error}"
        ) from None
    try:
        return views.check_view_file(raw)
    except views.ViewFileError as error:
        raise _view_file_problem(path, str(error)) from None


def run_report(args: argparse.Namespace) -> int:
    from explorer import figures, views

    view_path = Path(args.view)
    view, notices = views.from_json(_read_view_file(view_path))
    for notice in notices:
        print(f"note: {notice}", file=sys.stderr)
    out = Path(args.out)
    if out.resolve() in _inputs(args):
        raise DataError(
            [
                Problem(
                    "the report would overwrite the view file",
                    file=str(out),
                    fix="choose another --out name",
                )
            ]
        )
    from explorer.data import catalog

    panel = catalog.open_dataset(view.dataset, args.data)
    _report_set_aside(panel)
    html = figures.report_html(view, panel)
    out.parent.mkdir(parents=True, exist_ok=True)
    temporary = out.with_name(f".{out.name}.part")
    temporary.write_text(html, encoding="utf-8")
    os.replace(temporary, out)
    print(f"wrote {out} ({len(html.encode()) // 1024} KB)", file=sys.stderr)
    return EXIT_OK


def run_brief(args: argparse.Namespace) -> int:
    """The briefing of a view file as text or Markdown (:mod:`explorer.figures.brief`)."""
    from explorer import figures, views
    from explorer.data import catalog

    view, notices = views.from_json(_read_view_file(Path(args.view)))
    for notice in notices:
        print(f"note: {notice}", file=sys.stderr)
    out = Path(args.out) if args.out else None
    if out is not None and out.resolve() in _inputs(args):
        raise DataError(
            [
                Problem(
                    "the briefing would overwrite the view file",
                    file=str(out),
                    fix="choose another --out name",
                )
            ]
        )
    panel = catalog.open_dataset(view.dataset, args.data)
    _report_set_aside(panel)
    told = figures.briefing(panel, view, figures.PlainCompute(panel))
    heading = vocabulary.briefing_heading(told.view, panel)
    text = told.as_markdown(heading) if args.format == "markdown" else told.as_text(heading)
    if out is None:
        sys.stdout.write(text)
        return EXIT_OK
    out.parent.mkdir(parents=True, exist_ok=True)
    temporary = out.with_name(f".{out.name}.part")
    temporary.write_text(text, encoding="utf-8")
    os.replace(temporary, out)
    print(f"wrote {out}", file=sys.stderr)
    return EXIT_OK


COMMANDS = {
    "app": run_app,
    "check": run_check,
    "compute": run_compute,
    "decompose": run_decompose,
    "spatial": run_spatial,
    "report": run_report,
    "brief": run_brief,
    "scenario": cli_scenario.run,
}


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``rift`` console script."""
    args = build_parser().parse_args(argv)
    try:
        return COMMANDS[args.command](args)
    except DataError as error:
        _print_problems(error)
        print(f"{len(error.problems)} problem(s); nothing was written.", file=sys.stderr)
        return EXIT_BAD_INPUT
    except (ValueError, KeyError) as error:
        # Options that name an unknown index, method or level end here.
        print(f"error: {error}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except BrokenPipeError:
        return EXIT_OK
    except Exception as error:  # noqa: BLE001 — the command line never shows a traceback
        print(f"error: {type(error).__name__}: {error}", file=sys.stderr)
        return EXIT_FAILED


if __name__ == "__main__":
    sys.exit(main())
