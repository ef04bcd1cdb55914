"""``faciesseq check SOURCE``: what a core database holds, and every problem found."""

from __future__ import annotations

import argparse
import json
import math
from dataclasses import replace

from faciesseq.cli._common import (
    add_source_arguments,
    announce,
    input_files,
    load_scheme_option,
    read_source,
    source_file,
    stream_source,
    units_alarm,
    units_from,
)

EXAMPLES = """\
examples:
  faciesseq check cores.csv --scheme configs/scheme-shoreface.yaml
  faciesseq check logs.csv --layout samples --column core="Well Name" --column depth=Depth \\
      --column facies=Facies --units ft
  faciesseq check postgresql://geo@dbhost/cores --table intervals --format json
  faciesseq check logs.csv --units ft --keep-first --scheme scheme.yaml --write-source cores.yaml
  faciesseq check cores.csv --labels interpretation --tracts my-tracts.yaml
  faciesseq markov cores.yaml        # every command then reads the options from cores.yaml
"""


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "check",
        help="read and validate a core database; print a summary and every problem",
        description="Read a core database, print a summary (cores, intervals, thickness, "
        "facies proportions, bed thickness statistics) and every problem found, each with "
        "file, row, core and depth. The labels of the tract column (or of --labels) that "
        "'faciesseq fit --labels' cannot read, not tracts of the tract model, are errors "
        "too. Exit code 0 when the data is usable, 1 when it has errors, 2 for usage or "
        "configuration errors.",
        epilog=EXAMPLES,
    )
    add_source_arguments(parser)
    parser.add_argument(
        "--format",
        choices=("text", "json"),
        default="text",
        help="text for reading or json (summary, cores, facies, problems)",
    )
    parser.add_argument(
        "--labels",
        metavar="COLUMN",
        help="column of an interpreter's tract labels to check as fit --labels reads them "
        "(default: the tract column, where the source has one)",
    )
    parser.add_argument(
        "--tracts", metavar="FILE", help="tract-model YAML the labels name (default: four tracts)"
    )
    parser.add_argument(
        "--write-source",
        metavar="FILE",
        help="also write a YAML source file (FILE.yaml) holding what was read and detected: "
        "the data's path, layout, columns, units, --keep-first and --scheme; give it as "
        "SOURCE to every later command",
    )
    parser.add_argument(
        "--force", action="store_true", help="replace the --write-source FILE if it exists"
    )
    parser.set_defaults(func=run)


#: Kinds of the errors of tract labels (:class:`_Labels`), which only a fit with labels refuses.
LABEL_ERRORS = frozenset({"tract-label", "no-labels"})


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


def format_text(result, labels: str | None = None) -> str:
    """The geologist's view of a :class:`~faciesseq.io.DatabaseSummary`, with the line
    of the tract labels found (``labels``) after the facies."""
    data = result.to_dict()
    head = data["summary"]
    u = head["units"]
    alarm = units_alarm(result)
    lines = [f"WARNING: {alarm}", ""] if alarm else []
    lines += [
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
    lines += _order_lines(result)
    if labels:
        lines += ["", labels]
    lines.append("")
    counts = (
        f"{head['errors']} error(s), {head['warnings']} warning(s), {head['repairs']} repair(s)"
    )
    lines.append(f"problems: {counts}")
    lines += [str(p) for p in result.problems]
    lines.append("")
    errors = {p.kind for p in result.problems if p.severity == "error"}
    if head["usable"]:
        lines.append("usable: yes")
    elif errors <= LABEL_ERRORS:
        lines.append(
            "usable: no (fix the tract labels above; fit and validate refuse them with "
            "--labels, other commands read the data)"
        )
    else:
        lines.append("usable: no (fix the errors above; other commands refuse this data)")
    return "\n".join(lines)


def _order_lines(result) -> list[str]:
    """The facies order the upward transitions suggest, and how the scheme's ranks
    agree with it (a warning where they run the other way)."""
    order = result.order
    if order is None:
        return []
    lines = [
        "",
        f"facies order the upward transitions suggest, landward to basinward: {order.describe()}",
    ]
    if result.agreement is not None:
        lines.append(
            f"the scheme's ranks against that order: Spearman's rho {result.agreement:.2f}"
        )
    if result.reversed_scheme:
        lines.append(
            "WARNING: the scheme's ranks run against the order the data suggest: rank 0 is "
            "the most landward or shallow facies; a reversed scheme names the tracts wrongly"
        )
    return lines


def _source_target(args: argparse.Namespace):
    """The ``--write-source`` path, refused before reading when it cannot be written."""
    from pathlib import Path

    from faciesseq._output import check_target
    from faciesseq.errors import ConfigError
    from faciesseq.io.source import YAML_SUFFIXES

    if not args.write_source:
        return None
    if Path(args.write_source).suffix.lower() not in YAML_SUFFIXES:
        raise ConfigError(
            "--write-source writes a YAML source file: give a name ending in .yaml or .yml",
            file=args.write_source,
        )
    return check_target(
        args.write_source,
        force=args.force,
        folder=False,
        option="--write-source",
        make_parents=True,
        inputs=input_files(args),
    )


def _columns(cores, explicit: dict[str, str]) -> dict[str, str]:
    """Role -> column as matched in the data (:attr:`CoreSet.source_columns`), then
    ``explicit``."""
    columns = {**cores.source_columns, **explicit}
    order = ("core", "top", "base", "depth", "facies", "grain_size", "contact", "tract")
    return dict(sorted(columns.items(), key=lambda kv: (*order, kv[0]).index(kv[0])))


def write_source(args: argparse.Namespace, out, cores) -> None:
    """Write the YAML source file of ``--write-source`` (atomically)."""
    from faciesseq._output import write_file
    from faciesseq.cli._common import column_mapping
    from faciesseq.io.sourcefile import source_file_text

    spec = source_file(args)
    layouts = set(cores.meta.get("layout", {}).values())
    explicit = dict(spec.columns) if spec is not None else {}
    explicit.update(column_mapping(args.column))
    keep_first = args.keep_first or (spec is not None and spec.repeated_depths == "keep-first")
    note = units_from(args, cores)
    note = "given with --units" if note == "--units" else note
    if any(p.kind == "units-suspect" for p in cores.problems):
        note += "; CHECK: the depths look like feet"
    text = source_file_text(
        output=out,
        data=spec.source if spec is not None else args.source,
        layout=args.layout or (next(iter(layouts)) if len(layouts) == 1 else None),
        columns=_columns(cores, explicit),
        units=cores.units,
        units_note=note,
        repeated_depths="keep-first" if keep_first else None,
        sheet=args.sheet or (spec.sheet if spec else None),
        table=args.table or (spec.table if spec else None),
        query=args.query or (spec.query if spec else None),
        curve=args.curve or (spec.curve if spec else None),
        encoding=spec.encoding if spec else None,
        scheme=args.scheme,
    )
    out.parent.mkdir(parents=True, exist_ok=True)
    write_file(out, text)


def run(args: argparse.Namespace) -> int:
    import sys

    from faciesseq.io import summarise

    out = _source_target(args)
    scheme = load_scheme_option(args.scheme)
    labels = _Labels(args)
    result = _streamed(args, scheme, labels) if out is None else None
    if result is None:
        labels = _Labels(args)  # afresh: a stream given up half-way counted some cores
        cores = read_source(args, scheme)
        if out is not None:
            write_source(args, out, cores)
            sys.stderr.write(f"faciesseq check: wrote {out} (give it as SOURCE to every command)\n")
        result = summarise(cores, scheme)
        result = replace(result, problems=(*result.problems, *labels(cores)))
    result = replace(result, problems=(*result.problems, *labels.finish()))
    if args.format == "json":
        document = result.to_dict()
        if labels.summary() is not None:
            document["labels"] = labels.summary()
        print(json.dumps(document, indent=2, allow_nan=False))
    else:
        print(format_text(result, labels.line()))
    return 0 if result.usable else 1


class _Labels:
    """The tract labels of the cores (``--labels`` or the tract column) that a fit with
    labels cannot read (:func:`faciesseq.hmm.labels.label_problems`, as ``fit`` reads
    them), a core set or batch of whole cores at a time; :meth:`finish` adds the error of
    a named column blank on every row."""

    def __init__(self, args: argparse.Namespace) -> None:
        from faciesseq.cli._hmm import load_tracts_option
        from faciesseq.scheme import default_tract_model

        self.source = args.source
        self.named = args.labels
        self.column = args.labels or "tract"
        self.tracts = (load_tracts_option(args.tracts) or default_tract_model()).order
        self.found = False
        self.rows = self.labelled = 0
        self.cores: set[str] = set()  # every core read
        self.labelled_cores: set[str] = set()  # the cores with a label
        self.counts = dict.fromkeys(self.tracts, 0)  # intervals per tract of the model

    def __call__(self, cores) -> list:
        import pandas as pd

        from faciesseq.hmm.labels import label_problems, label_text

        self.cores.update(cores.names)
        table = cores.to_frame(provenance=True)
        if self.column not in table.columns:
            return []
        self.found = True
        problems, labelled = label_problems(
            table,
            self.column,
            self.tracts,
            cores.units,
            self.source,
            sample_cores=cores.meta.get("sample_step", {}),
        )
        self.rows += len(table)
        self.labelled += labelled
        text = pd.Series(label_text(table[self.column]), index=table.index, dtype=object)
        given = text.notna()
        self.labelled_cores.update(table.loc[given.to_numpy(bool), "core"].astype(str))
        for tract, n in text[given].value_counts().items():
            if tract in self.counts:
                self.counts[tract] += int(n)
        return problems

    def summary(self) -> dict | None:
        """The labels found (None without the column): ``column``, ``intervals``
        labelled, ``cores_labelled`` of ``cores``, intervals per tract (``tracts``) and
        ``not_tracts``, the labelled intervals whose label is not a tract of the model."""
        if not self.found:
            return None
        counted = sum(self.counts.values())
        return {
            "column": self.column,
            "intervals": self.labelled,
            "cores_labelled": len(self.labelled_cores),
            "cores": len(self.cores),
            "tracts": dict(self.counts),
            "not_tracts": self.labelled - counted,
        }

    def line(self) -> str | None:
        """``labels: 127 intervals on 2 of 6 cores labelled (column 'tract'); tracts HST
        40, ...``, or None without the column."""
        found = self.summary()
        if found is None:
            return None
        tracts = ", ".join(f"{t} {n}" for t, n in found["tracts"].items())
        odd = found["not_tracts"]
        return (
            f"labels: {found['intervals']} intervals on {found['cores_labelled']} of "
            f"{found['cores']} cores labelled (column {found['column']!r}); tracts {tracts}"
            + (f"; {odd} labelled with no tract of the model (errors below)" if odd else "")
        )

    def finish(self) -> list:
        from faciesseq.errors import ConfigError
        from faciesseq.hmm.labels import no_labels

        if self.named and not self.found and self.rows == 0:
            raise ConfigError(f"no column {self.named!r} for --labels", file=self.source)
        if self.named and self.rows and not self.labelled:
            return [no_labels(self.column, self.rows, self.source)]
        return []


def _streamed(args: argparse.Namespace, scheme, labels: _Labels):
    """The summary of SOURCE read a batch of whole cores at a time, or ``None`` where it
    is read whole (see :func:`faciesseq.io.stream_cores`)."""
    from faciesseq.io import NotStreamable
    from faciesseq.io.summary import summarise_batches

    stream = stream_source(args, scheme)
    if stream is None:
        return None
    try:
        result = summarise_batches(stream, scheme, labels)
    except NotStreamable:
        return None
    announce(args, stream.summary(), scheme)
    return result
