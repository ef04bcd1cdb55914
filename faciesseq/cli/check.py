"""``faciesseq check SOURCE``: what a core database holds, and every problem found."""

from __future__ import annotations

import argparse
import json
import math

from faciesseq.cli._common import add_source_arguments, load_scheme_option, read_source

EXAMPLES = """\
examples:
  faciesseq check cores.csv --scheme configs/scheme-shoreface.yaml
  faciesseq check logs.csv --layout samples --column core="Well Name" --column depth=Depth \\
      --column facies=Facies --units ft
  faciesseq check postgresql://geo@dbhost/cores --table intervals --format json
"""


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "check",
        help="read and validate a core database; print a summary and every problem",
        description="Read a core database, print a summary (cores, intervals, thickness, "
        "facies proportions, bed thickness statistics) and every problem found, each with "
        "file, row, core and depth. Exit code 0 when the data is usable, 1 when it has "
        "errors, 2 for usage or configuration errors.",
        epilog=EXAMPLES,
    )
    add_source_arguments(parser)
    parser.add_argument(
        "--format",
        choices=("text", "json"),
        default="text",
        help="text for reading or json (summary, cores, facies, problems)",
    )
    parser.set_defaults(func=run)


def _num(value: object, digits: int = 2) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    if isinstance(value, float):
        return f"{value:.{digits}f}"
    return str(value)


def _table(header: list[str], rows: list[list[str]]) -> list[str]:
    widths = [
        max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(header)
    ]
    lines = [
        "  ".join(
            h.ljust(w) if i == 0 else h.rjust(w) for i, (h, w) in enumerate(zip(header, widths))
        )
    ]
    for r in rows:
        lines.append(
            "  ".join(
                c.ljust(w) if i == 0 else c.rjust(w) for i, (c, w) in enumerate(zip(r, widths))
            )
        )
    return lines


def format_text(result) -> str:
    """The geologist's view of a :class:`~faciesseq.io.DatabaseSummary`."""
    data = result.to_dict()
    head = data["summary"]
    u = head["units"]
    lines = [
        f"source: {', '.join(head['sources'])}",
        f"{head['cores']} core(s), {head['intervals']} interval(s), {head['beds']} bed(s), "
        f"{_num(head['cored_thickness'])} {u} cored, {head['gaps']} gap(s); depths in {u}, "
        "positive downward",
        "",
        "cores",
    ]
    rows = [
        [
            c["core"],
            str(c["intervals"]),
            str(c["beds"]),
            _num(c["top"]),
            _num(c["base"]),
            _num(c["cored_thickness"]),
            str(c["gaps"]),
            _num(c["gap_thickness"]),
            _num(c["sample_step"], 3),
        ]
        for c in data["cores"]
    ]
    lines += _table(
        [
            "core",
            "intervals",
            "beds",
            f"top {u}",
            f"base {u}",
            f"cored {u}",
            "gaps",
            f"in gaps {u}",
            f"step {u}",
        ],
        rows,
    )
    lines += ["", "facies (proportions of cored thickness and of beds; bed thickness in " + u + ")"]
    rows = [
        [
            f["facies"] + (f" {f['name']}" if f["name"] else ""),
            str(f["beds"]),
            _num(f["thickness"]),
            _num(100 * f["proportion_thickness"], 1)
            if f["proportion_thickness"] is not None
            else "-",
            _num(100 * f["proportion_beds"], 1) if f["proportion_beds"] is not None else "-",
            _num(f["bed_thickness_mean"]),
            _num(f["bed_thickness_median"]),
            _num(f["bed_thickness_min"]),
            _num(f["bed_thickness_max"]),
            _num(f["bed_thickness_std"]),
        ]
        for f in data["facies"]
    ]
    lines += _table(
        ["facies", "beds", "thickness", "% thick", "% beds", "mean", "median", "min", "max", "sd"],
        rows,
    )
    lines.append("")
    counts = (
        f"{head['errors']} error(s), {head['warnings']} warning(s), {head['repairs']} repair(s)"
    )
    lines.append(f"problems: {counts}")
    lines += [str(p) for p in result.problems]
    lines.append("")
    if head["usable"]:
        lines.append("usable: yes")
    else:
        lines.append("usable: no (fix the errors above; other commands refuse this data)")
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    from faciesseq.io import summarise

    scheme = load_scheme_option(args.scheme)
    cores = read_source(args, scheme)
    result = summarise(cores, scheme)
    if args.format == "json":
        print(json.dumps(result.to_dict(), indent=2, allow_nan=False))
    else:
        print(format_text(result))
    return 0 if result.usable else 1
