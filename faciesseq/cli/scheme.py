"""``faciesseq scheme draft|show``: start a facies scheme from the data; check one."""

from __future__ import annotations

import argparse
import os
import tempfile
from pathlib import Path

from faciesseq.cli._common import add_source_arguments, read_source
from faciesseq.errors import ConfigError


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "scheme",
        help="write a starting facies scheme from the data, or check and show a scheme",
        description="Facies schemes: 'draft' writes a starting scheme from the codes in a "
        "core database (ranks left for the geologist to fill in); 'show' validates a facies "
        "scheme or tract model and prints it.",
    )
    sub = parser.add_subparsers(dest="scheme_command", metavar="ACTION")
    draft = sub.add_parser(
        "draft",
        help="write a starting scheme from the facies codes found in SOURCE",
        description="Write a starting facies scheme listing every code found in SOURCE. "
        "Ranks are left empty and marked TODO; the scheme does not load until they are "
        "filled in.",
    )
    add_source_arguments(draft, scheme=False)
    draft.add_argument("-o", "--output", required=True, metavar="FILE", help="scheme YAML to write")
    draft.add_argument("--name", default="draft scheme", help="scheme name (default: %(default)s)")
    draft.add_argument("--force", action="store_true", help="overwrite FILE if it exists")
    draft.set_defaults(func=run_draft)
    show = sub.add_parser(
        "show",
        help="validate a facies scheme or tract model and print it",
        description="Validate a facies scheme (or a tract model) and print it, facies from "
        "landward/shallow to basinward/deep.",
    )
    show.add_argument("file", metavar="FILE", help="facies scheme or tract model YAML")
    show.set_defaults(func=run_show)
    parser.set_defaults(func=lambda args: (parser.print_help(), 2)[1])


def run_draft(args: argparse.Namespace) -> int:
    from faciesseq.scheme import draft_scheme

    out = Path(args.output)
    if out.exists() and not args.force:
        raise ConfigError("exists; give --force to overwrite it", file=str(out))
    cores = read_source(args).require_valid()
    text = draft_scheme(cores.facies_codes(), name=args.name)
    out.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.", dir=out.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            handle.write(text)
        os.replace(tmp, out)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)
    n = len(cores.facies_codes())
    print(f"wrote {out}: {n} facies code(s) from {len(cores)} core(s); fill in every rank")
    return 0


def run_show(args: argparse.Namespace) -> int:
    from faciesseq.scheme import FaciesScheme, TractModel, _read_yaml

    data = _read_yaml(args.file)
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
    scheme = FaciesScheme.from_dict(data, source=args.file)
    print(
        f"facies scheme: {scheme.name} ({args.file}); {len(scheme)} facies, landward to basinward"
    )
    for code in scheme.codes_by_rank:
        f = scheme[code]
        extra = [f"group {f.group}"] if f.group else []
        if f.grain_size is not None:
            extra.append(f"grain size {f.grain_size:g}")
        if f.aliases:
            extra.append("aliases " + ", ".join(f.aliases))
        print(
            f"  rank {f.rank:g}  {f.code:<6} {f.name}" + (f" ({'; '.join(extra)})" if extra else "")
        )
    return 0
