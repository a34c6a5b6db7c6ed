"""The command line's boundary vintages: ``--boundaries FILE@YEAR`` (repeatable),
``--changes FILE``, ``--to-vintage YEAR``, ``--finer FILE --finer-column COL``.

One plain ``--boundaries FILE`` keeps its old meaning (the panel's boundaries). With several
vintages, or a change table, the panel is read without boundaries, carried to the target
vintage (:func:`explorer.stats.harmonise.harmonise`) and given that vintage's boundaries.
Without a change table, two vintages are overlaid for weights by area (or by the finer
layer's population), and standard error says so.
"""

from __future__ import annotations

import argparse
import sys
from collections import Counter
from pathlib import Path

from explorer.data.carrying import with_carrying
from explorer.data.model import DataError, Panel, Problem

__all__ = ["add_arguments", "carry", "options", "paths", "wanted"]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """The vintage options of check, compute and decompose."""
    group = parser.add_argument_group("boundary changes")
    group.add_argument(
        "--changes",
        metavar="FILE",
        help="table of year,from,to,weight[,weight_kind]: where each changed district went",
    )
    group.add_argument(
        "--to-vintage",
        type=int,
        metavar="YEAR",
        help="carry every year to the boundaries starting in YEAR (default: the latest)",
    )
    group.add_argument(
        "--finer",
        metavar="FILE",
        help="points or small areas with a population, for weights by population when "
        "two vintages are overlaid",
    )
    group.add_argument(
        "--finer-column",
        metavar="COL",
        default="population",
        help="the finer layer's count to weigh by (default population)",
    )


def wanted(args: argparse.Namespace) -> bool:
    """Whether the options ask for carrying across boundary changes."""
    specs = getattr(args, "boundaries", None) or []
    return bool(
        len(specs) > 1
        or getattr(args, "changes", None)
        or getattr(args, "to_vintage", None) is not None
    )


def paths(args: argparse.Namespace) -> list[Path]:
    """The input files these options name (never to be overwritten)."""
    from explorer.data.vintages import parse_spec

    out = [Path(parse_spec(s)[0]) for s in getattr(args, "boundaries", None) or []]
    for name in ("changes", "finer"):
        value = getattr(args, name, None)
        if value:
            out.append(Path(value))
    return out


def options(args: argparse.Namespace) -> dict:
    """The carrying options that make a stored dataset what it is (part of its id)."""
    from explorer.data.vintages import parse_spec

    return {
        "vintages": [parse_spec(s)[1] for s in getattr(args, "boundaries", None) or []],
        "to_vintage": getattr(args, "to_vintage", None),
        "finer_column": args.finer_column if getattr(args, "finer", None) else None,
    }


def carry(panel: Panel, args: argparse.Namespace) -> Panel:
    """``panel`` carried to the target vintage; its account printed on standard error."""
    from explorer.data import overlay, vintages
    from explorer.data.tables import read_table
    from explorer.stats.harmonise import WAYS, harmonise, way

    specs = getattr(args, "boundaries", None) or []
    raw, file = None, ""
    hint = set(panel.regions)
    if getattr(args, "changes", None):
        file = Path(args.changes).name
        raw = read_table(args.changes, file_label=file)
        for column in ("from", "to"):
            found = [c for c in raw.columns if str(c).strip().lower() == column]
            if found:
                hint |= {str(v) for v in raw[found[0]].dropna()}
    read = [
        vintages.read_vintage(
            s,
            boundary_id=getattr(args, "boundary_id", None),
            layer=getattr(args, "layer", None),
            crs=getattr(args, "crs", None),
            ids_hint=hint,
        )
        for s in specs
    ]
    dated = vintages.order_vintages(read, panel.years[0]) if read else ()
    problems = vintages.check_panel_ids(panel.data, dated, panel.name or Path(args.panel).name)
    if raw is not None:
        try:
            changes = vintages.changes_from_frame(raw, file, dated)
        except DataError as error:
            raise DataError([*problems, *error.problems]) from None
    elif len(dated) == 2:
        changes = _derived(dated, args, overlay)
    else:
        problems.append(
            Problem(
                f"{len(dated)} boundary vintage(s) and no change table: weights can be derived "
                "only between two vintages",
                "give --changes FILE, or exactly two --boundaries FILE@YEAR",
            )
        )
        changes = None
    if problems:
        raise DataError(problems)
    for warning in changes.warnings:
        print(f"note: {warning.message}", file=sys.stderr)
    target = getattr(args, "to_vintage", None)
    if target is None:
        target = dated[-1].year if dated else max(changes.years)
    geometry = None
    if dated:
        in_force = [v for v in dated if v.year <= target]
        geometry = in_force[-1].geometry if in_force else None
    result = harmonise(panel, changes, target, boundaries=geometry)
    counts = Counter(way(result.carried["how"]))
    said = ", ".join(f"{counts[w]} {w}" for w in WAYS if counts[w])
    print(f"carried to the {target} boundaries: {said} (district-years)", file=sys.stderr)
    for note in result.notes:
        print(f"note: {note}", file=sys.stderr)
    return with_carrying(result.panel, _account(result, dated, args))


def _account(result, dated, args: argparse.Namespace):
    """What the stored dataset keeps of the carrying: record, files and their sizes."""
    from explorer.data.carrying import new_carrying
    from explorer.data.vintages import parse_spec

    sizes = {}
    for spec in getattr(args, "boundaries", None) or []:
        path = Path(parse_spec(spec)[0])
        sizes[path.name] = path.stat().st_size
    if getattr(args, "changes", None):
        changes = {"weights": "table", "file": Path(args.changes).name}
        changes["bytes"] = Path(args.changes).stat().st_size
    elif getattr(args, "finer", None):
        changes = {"weights": "finer", "file": Path(args.finer).name}
        changes["bytes"] = Path(args.finer).stat().st_size
        changes["column"] = args.finer_column
    else:
        changes = {"weights": "area"}
    triples = [(v.file, v.year, sizes.get(v.file, 0)) for v in dated]
    return new_carrying(result.to_vintage, result.carried, triples, changes, result.notes)


def _derived(dated, args: argparse.Namespace, overlay):
    """Weights from overlaying the two vintages, said on standard error."""
    old, new = dated
    if getattr(args, "finer", None):
        import geopandas as gpd

        from explorer.data.files import at_the_edge, check_file

        name = Path(args.finer).name
        check_file(args.finer, name)
        try:
            finer = gpd.read_file(args.finer)
        except Exception as exc:  # noqa: BLE001 - the edge
            raise at_the_edge(name, "finer layer", exc) from None
        changes = overlay.dasymetric_weights(old, new, finer, args.finer_column, finer_file=name)
        how = f"by {args.finer_column} from {name}"
    else:
        changes = overlay.area_weights(old, new)
        how = "by area"
    print(
        f"no change table: weights {how} derived by overlaying {old.file} ({old.year}) and "
        f"{new.file} ({new.year})",
        file=sys.stderr,
    )
    return changes
