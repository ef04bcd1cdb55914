"""``faciesseq scheme draft|show``: start a facies scheme from the data; check one."""

from __future__ import annotations

import argparse

from faciesseq.cli._common import (
    add_output_arguments,
    add_source_arguments,
    input_files,
    read_source,
    require_file,
)
from faciesseq.errors import ConfigError, InputError

EXAMPLES = """\
examples:
  faciesseq scheme draft cores.csv -o my-scheme.yaml
  faciesseq scheme show my-scheme.yaml
  faciesseq scheme show configs/tracts-default.yaml
"""

DRAFT_EXAMPLES = """\
examples:
  faciesseq scheme draft cores.csv -o my-scheme.yaml
  faciesseq scheme draft cores.csv --fill-ranks -o my-scheme.yaml
  faciesseq scheme draft cores.xlsx --sheet Facies --name "Quillerby shoreface" -o scheme.yaml
  faciesseq scheme draft core-db.sqlite --table intervals -o my-scheme.yaml --force
"""

SHOW_EXAMPLES = """\
examples:
  faciesseq scheme show my-scheme.yaml
  faciesseq scheme show configs/scheme-shoreface.yaml
  faciesseq scheme show configs/tracts-default.yaml
"""


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "scheme",
        help="write a starting facies scheme from the data, or check and show a scheme",
        description="Facies schemes: 'draft' writes a starting scheme from the codes in a "
        "core database (ranks left for the geologist to fill in); 'show' validates a facies "
        "scheme or tract model and prints it.",
        epilog=EXAMPLES,
    )
    sub = parser.add_subparsers(dest="scheme_command", metavar="ACTION")
    draft = sub.add_parser(
        "draft",
        help="write a starting scheme from the facies codes found in SOURCE",
        description="Write a starting facies scheme listing every code found in SOURCE, with "
        "every field a facies can hold (name, rank, group, colour, grain_size, aliases, "
        "description, cycle_base, setting, exposure), commented. Ranks are left empty and "
        "marked TODO; the scheme does not load until they are filled in. Each comment gives "
        "the rank suggested by the upward transitions of the data (facies that follow one "
        "another are neighbours on the profile; steps between neighbours lead landward; the "
        "direction is called unclear where neighbours are joined one way only, perhaps by a "
        "flooding surface), and the facies are listed in that order. Errors in the data "
        "(bad depths, repeated depths, ...) do not stop it.",
        epilog=DRAFT_EXAMPLES,
    )
    add_source_arguments(draft, scheme=False)
    add_output_arguments(draft, "FILE", "scheme YAML to write", required=True)
    draft.add_argument("--name", default="draft scheme", help="scheme name")
    draft.add_argument(
        "--fill-ranks",
        action="store_true",
        help="write the suggested ranks as the ranks (each marked to be checked), so that "
        "the scheme loads at once",
    )
    draft.set_defaults(func=run_draft)
    show = sub.add_parser(
        "show",
        help="validate a facies scheme or tract model and print it",
        description="Validate a facies scheme (or a tract model) and print it, facies from "
        "landward/shallow to basinward/deep.",
        epilog=SHOW_EXAMPLES,
    )
    show.add_argument("file", metavar="FILE", help="facies scheme or tract model YAML")
    show.set_defaults(func=run_show)
    parser.set_defaults(func=lambda args: (parser.print_help(), 2)[1])


def run_draft(args: argparse.Namespace) -> int:
    from faciesseq._output import check_target, write_file
    from faciesseq.markov.seriation import suggest_ranks
    from faciesseq.scheme import draft_scheme

    out = check_target(
        args.output, force=args.force, folder=False, make_parents=True, inputs=input_files(args)
    )
    cores = read_source(args)  # only the codes are needed: errors elsewhere do not stop it
    codes = cores.facies_codes()
    errors = sum(p.severity == "error" for p in cores.problems)
    if not codes:
        cores.require_valid()  # names the first error, if any
        raise InputError("no facies codes found in the source", file=args.source)
    suggestion = suggest_ranks(cores.successions("beds"))
    ranks = suggestion.ranks if suggestion is not None else None
    out.parent.mkdir(parents=True, exist_ok=True)
    write_file(out, draft_scheme(codes, name=args.name, suggested=ranks, fill=args.fill_ranks))
    todo = "check every rank" if args.fill_ranks and ranks else "fill in every rank"
    print(f"wrote {out}: {len(codes)} facies code(s) from {len(cores)} core(s); {todo}")
    print(_suggestion_line(suggestion))
    if errors:
        print(
            f"note: the data has {errors} error(s) (rows left out; codes only in those rows "
            "are missing); run faciesseq check on it"
        )
    return 0


def _suggestion_line(suggestion) -> str:
    """What the draft suggests, in one line."""
    if suggestion is None:
        return "no ranks suggested: fewer than three facies follow one another in the data"
    return f"suggested order, landward to basinward: {suggestion.describe()}"


def run_show(args: argparse.Namespace) -> int:
    from faciesseq.scheme import FaciesScheme, TractModel, _entry_lines, _read_yaml_node

    data, node = _read_yaml_node(require_file(args.file))
    if isinstance(data, dict) and not {"generator", "time", "base_level"}.isdisjoint(data):
        raise ConfigError(
            "a simulation scenario, not a facies scheme or tract model; run faciesseq "
            "simulate on it, and scheme show on the scheme it names",
            file=args.file,
        )
    if isinstance(data, dict) and "tracts" in data:
        model = TractModel.from_dict(data, source=args.file)
        print(f"tract model: {model.name} ({args.file})")
        print(f"order upward (older to younger): {' -> '.join(model.order)} -> {model.order[0]}")
        print(f"may be absent: {', '.join(model.skips) or 'none'}")
        for t in model.tracts:
            after = ", ".join(model.successors(t.code))
            print(f"  {t.code:<5} {t.name} ({t.trend} upward); followed by {after}")
        for s in model.surfaces:
            print(f"  {s.lower} -> {s.upper}: {s.code} {s.name}")
        return 0
    scheme = FaciesScheme.from_dict(data, source=args.file, lines=_entry_lines(node, "facies"))
    print(
        f"facies scheme: {scheme.name} ({args.file}); {len(scheme)} facies, landward to basinward"
    )
    ranks = {code: f"rank {scheme.rank(code):g}" for code in scheme.codes_by_rank}
    rank_width = max(map(len, ranks.values()))
    code_width = max(6, *map(len, scheme.codes))
    for code in scheme.codes_by_rank:
        f = scheme[code]
        extra = [f"group {f.group}"] if f.group else []
        if f.grain_size is not None:
            extra.append(f"grain size {f.grain_size:g}")
        if f.aliases:
            extra.append("aliases " + ", ".join(f.aliases))
        print(
            f"  {ranks[code]:<{rank_width}}  {f.code:<{code_width}}  {f.name}"
            + (f" ({'; '.join(extra)})" if extra else "")
        )
    return 0
