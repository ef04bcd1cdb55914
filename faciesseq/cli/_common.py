"""Options shared by every command that reads a core database."""

from __future__ import annotations

import argparse
import math

from faciesseq.errors import ConfigError, InputError


def add_source_arguments(parser: argparse.ArgumentParser, scheme: bool = True) -> None:
    """Add SOURCE and the reading options (layout, columns, units, sheet, table, query...)."""
    parser.add_argument(
        "source",
        metavar="SOURCE",
        help="CSV/TSV, XLSX, Parquet or LAS file, a folder of them, a SQLite file, "
        "a SQLAlchemy URL (postgresql://...), or a YAML source file",
    )
    if scheme:
        parser.add_argument("--scheme", metavar="FILE", help="facies scheme YAML")
    group = parser.add_argument_group("reading the source")
    group.add_argument(
        "--layout",
        choices=("intervals", "samples"),
        help="intervals (top, base) or samples (depth); detected when omitted",
    )
    group.add_argument(
        "--column",
        action="append",
        default=[],
        metavar="ROLE=NAME",
        help="map a column to a role (core, top, base, depth, facies, grain_size, "
        "contact, tract, lithology); repeatable",
    )
    group.add_argument(
        "--units",
        choices=("m", "ft"),
        help="depth units of depths the source does not state; depths it states in the "
        "other unit are converted (1 ft = 0.3048 m)",
    )
    group.add_argument("--sheet", help="Excel sheet name (default: the first)")
    group.add_argument("--table", help="database table to read")
    group.add_argument("--query", help="read-only SQL query to run instead of --table")
    group.add_argument("--curve", help="LAS curve holding the facies codes")
    group.add_argument(
        "--keep-first",
        action="store_true",
        help="sample layout: keep the first of repeated depths (reported) instead of failing",
    )


#: Most grid cells ``--unit grid --step X`` may make over all cores (10 million cells
#: take about a GiB in the tables built from them).
MAX_GRID_CELLS = 10_000_000
#: Most Monte Carlo surrogates (each is a full reshuffle and recount of every succession).
MAX_SURROGATES = 100_000


def check_unit_step(args: argparse.Namespace) -> None:
    """``--unit grid`` needs a positive ``--step``; ``--step`` goes with ``--unit grid`` only."""
    if args.unit == "grid" and not (args.step and math.isfinite(args.step) and args.step > 0):
        raise ConfigError("--unit grid needs a positive --step (depth units)")
    if args.unit != "grid" and args.step is not None:
        raise ConfigError("--step is only used with --unit grid")


def column_mapping(pairs: list[str]) -> dict[str, str]:
    """Parse repeated ``ROLE=NAME`` options."""
    mapping: dict[str, str] = {}
    for pair in pairs:
        role, sep, name = pair.partition("=")
        if not sep or not role.strip() or not name:
            raise ConfigError(f"--column expects ROLE=NAME, got {pair!r}")
        mapping[role.strip().lower()] = name
    return mapping


def load_scheme_option(path: str | None):
    """The facies scheme named by ``--scheme``, or ``None``."""
    if not path:
        return None
    from faciesseq.scheme import load_scheme

    return load_scheme(require_file(path))


def scheme_for_model(path: str | None, model):
    """The facies scheme of ``--scheme``, which must keep the codes and ranks of the
    model's facies (names, colours and aliases may differ, facies may be added: see
    :func:`model_scheme`), or else the model's scheme."""
    return model_scheme(load_scheme_option(path), model, path)


def model_scheme(scheme, model, path: str | None):
    """``scheme`` (given by ``--scheme`` at ``path``) if it is ``model``'s own, the
    model's if none is given; a :class:`ConfigError` naming the facies whose codes or
    ranks differ. A scheme may add facies the model never saw: the model reads its own
    ranks, so they are decoded as facies never seen in training (one warning line), and
    the scheme gives them their names and colours in the outputs."""
    own = model.scheme
    if scheme is None or own is None:
        return scheme or own
    differences = _scheme_differences(scheme, own)
    if differences:
        raise ConfigError(
            f"facies scheme {scheme.name!r} is not the one the model was fitted with: "
            f"{'; '.join(differences)}; leave out --scheme to use the model's own, or refit "
            "the model with this scheme",
            file=str(path),
        )
    return scheme


def _scheme_differences(scheme, own) -> list[str]:
    """What a scheme changes of the facies a model was fitted with: facies it lacks and
    ranks it changes (facies it adds are not a difference: see :func:`model_scheme`)."""
    ranks, fitted = scheme.ranks(), own.ranks()
    missing = [code for code in fitted if code not in ranks]
    changed = [
        f"{code!r} {_rank(ranks[code])} here, {_rank(rank)} in the model"
        for code, rank in fitted.items()
        if code in ranks and ranks[code] != rank
    ]
    out = []
    if missing:
        out.append(f"it lacks the model's facies {', '.join(map(repr, missing))}")
    if changed:
        out.append(f"ranks differ: {', '.join(changed)}")
    return out


def _rank(rank: float) -> str:
    return "no rank" if rank != rank else f"rank {rank:g}"


#: Options whose files a command reads (:func:`input_files`).
INPUT_OPTIONS = ("source", "model", "scheme", "tracts", "review_sheet", "wells", "reference")


def input_files(args: argparse.Namespace) -> tuple[str, ...]:
    """The files a command reads (SOURCE, MODEL, ``--scheme``, ``--tracts``...), and the
    data a YAML SOURCE names at its ``path``, which its outputs may not replace
    (:func:`faciesseq._output.check_target`)."""
    out = []
    for name in INPUT_OPTIONS:
        value = getattr(args, name, None)
        for v in value if isinstance(value, list | tuple) else [value]:
            if v:
                out.append(str(v))
    spec = source_file(args)
    if spec is not None:
        out.append(str(spec.source))
    return tuple(out)


def source_file(args: argparse.Namespace):
    """The :class:`~faciesseq.io.source.SourceSpec` of a YAML SOURCE, or ``None``."""
    from pathlib import Path

    from faciesseq.io.source import YAML_SUFFIXES, load_source_file

    source = getattr(args, "source", None)
    if not source or Path(str(source)).suffix.lower() not in YAML_SUFFIXES:
        return None
    if not Path(str(source)).is_file():
        return None  # reading reports the missing file
    return load_source_file(Path(str(source)))


def apply_source_file(args: argparse.Namespace) -> None:
    """Take ``--scheme`` from a YAML SOURCE's ``scheme:`` when it is not given.

    An explicit ``--scheme`` wins. Records where the scheme comes from in
    ``args.scheme_from`` (shown by :func:`settings_line`).
    """
    if not hasattr(args, "scheme") or not hasattr(args, "source"):
        return
    args.scheme_from = "--scheme" if args.scheme else None
    spec = source_file(args)
    if args.scheme is None and spec is not None and spec.scheme is not None:
        args.scheme = spec.scheme
        args.scheme_from = "from the source file"


def units_from(args: argparse.Namespace, cores) -> str:
    """Where the units in force come from: ``--units``, the source file, the data, or assumed."""
    spec = source_file(args)
    if getattr(args, "units", None):
        return "--units"
    if spec is not None and spec.units:
        return "from the source file"
    if any(p.kind == "units" for p in cores.problems):
        if getattr(args, "unstated_units", None):
            other = "m" if cores.units == "ft" else "ft"
            whose = getattr(args, "unstated_from", None) or "the model's"
            return f"{whose}, as the source states none: give --units {other} if not"
        return "assumed: the source states none"
    return "stated in the data"


def settings_line(args: argparse.Namespace, cores, scheme=None) -> str:
    """``units: ft (from the source file); scheme: my-scheme.yaml (--scheme)``: what is in
    force; for a command decoding with a model fitted on depths in the other unit
    (:func:`models_units_note`), the units' words say so too."""
    from pathlib import Path

    units = units_from(args, cores)
    note = models_units_note(args, cores)
    text = f"units: {cores.units} ({units}{'; ' + note if note else ''}); scheme: "
    given = getattr(args, "scheme", None)
    if getattr(args, "ranks_suggested", False) and not given:
        return text + "ranks suggested from the data (no --scheme)"
    if scheme is None and not given:
        return text + "none"
    if given:
        return text + f"{given} ({getattr(args, 'scheme_from', None) or '--scheme'})"
    name = getattr(scheme, "source", None)
    return text + f"{Path(name).name if name else scheme.name} (from the model file)"


def models_units_note(args: argparse.Namespace, cores) -> str | None:
    """Where the model a command decodes with (:func:`read_in_models_units`) was fitted
    on depths in other units than the cores': the words saying that the beds'
    thicknesses are converted for it and every output stays in the cores' units; None
    otherwise (the same units, no model, or a model file without units)."""
    fitted = getattr(args, "model_units", None)
    if fitted is None or fitted == cores.units:
        return None
    return (
        f"the model was fitted on depths in {fitted}: the beds' thicknesses are converted "
        f"to {fitted} for it, 1 ft = 0.3048 m, every output stays in {cores.units}"
    )


def units_alarm(cores) -> str | None:
    """The ``units-suspect`` warning of a core set (depths read as metres look like feet)."""
    for p in cores.problems:
        if p.kind == "units-suspect":
            return p.message
    return None


def negative_depth_alarm(cores) -> str | None:
    """One line for the ``negative-depth`` warnings of a core set (every depth of a core
    at or above zero: elevations read as depths turn the cores upside down)."""
    from faciesseq.errors import some_of
    from faciesseq.io.validate import NEGATIVE_DEPTHS

    names = [p.core for p in cores.problems if p.kind == "negative-depth"]
    if not names:
        return None
    return f"depths are negative on {len(names)} core(s) ({some_of(names)}): {NEGATIVE_DEPTHS}"


def announce(args: argparse.Namespace, cores, scheme=None) -> None:
    """On standard error: the units warning, loudly, at once, and one line where every
    depth of some core is negative (:func:`negative_depth_alarm`); and, for usable data, the
    units and scheme in force, kept in ``args.settings_line`` for
    :func:`faciesseq.cli.main` to write when the command has succeeded (so that a
    failure stays one line)."""
    import sys

    command = f"faciesseq {getattr(args, 'command', None) or ''}".rstrip()
    alarm = units_alarm(cores)
    if alarm:
        sys.stderr.write(f"{command}: WARNING: {alarm}\n")
    negative = negative_depth_alarm(cores)
    if negative:
        sys.stderr.write(f"{command}: warning: {negative}\n")
    if not any(p.severity == "error" for p in cores.problems):
        # written by faciesseq.cli.main when the command succeeds (see settings_after)
        args.settings_line = f"{command}: {settings_line(args, cores, scheme)}"


def read_source(args: argparse.Namespace, scheme=None, announce_settings: bool = True):
    """Read the core database named on the command line (see :func:`faciesseq.io.read_cores`).

    Unless ``announce_settings`` is false, one line on standard error says which
    units and scheme are in force (usable data only), after a warning line of
    its own when depths read as metres look like feet.
    """
    cores = _read(args, scheme)
    if announce_settings:
        announce(args, cores, scheme)
    return cores


def stream_source(args: argparse.Namespace, scheme=None, others=None):
    """The core database named on the command line a batch of whole cores at a time
    (:func:`faciesseq.io.stream_cores`; ``others``: the attribute columns with no role
    that are wanted, default all), or ``None`` where it is read whole. Once the
    batches are read, :func:`announce` of the stream's ``summary()`` says which units
    and scheme are in force, as :func:`read_source` does."""
    from faciesseq.io import stream_cores

    if args.keep_first:
        return None  # an option of the samples layout, which is read whole
    return stream_cores(args.source, scheme=scheme, others=others, **_reading_options(args))


def _read(args: argparse.Namespace, scheme=None):
    from faciesseq.io import read_cores

    repeated = "keep-first" if args.keep_first else "error"
    return read_cores(
        args.source, scheme=scheme, repeated_depths=repeated, **_reading_options(args)
    )


def _reading_options(args: argparse.Namespace) -> dict:
    """The options of :func:`add_source_arguments` as :func:`faciesseq.io.read_cores`
    takes them (but ``repeated_depths``)."""
    names = ("layout", "units", "sheet", "table", "query", "curve")
    options = {"columns": column_mapping(args.column)} | {k: getattr(args, k) for k in names}
    return options | {"unstated_units": getattr(args, "unstated_units", None)}


def read_in_models_units(args: argparse.Namespace, model) -> None:
    """Have the source read in the units of ``model``'s training cores where it states
    none (neither its data, a YAML source file nor ``--units``): cores decoded with a
    model are most likely described in the units it was fitted on. A model file
    without units (an older one) leaves metres assumed. Where the cores are in the
    other unit, their settings line says the model's (:func:`models_units_note`), on
    success only, as it is written."""
    args.unstated_units = args.model_units = getattr(model, "units_", None)
    args.unstated_from = "the model's"


class _DeprecatedAlias(argparse.Action):
    """A hidden old spelling of an option: stores the value and warns on standard error."""

    def __call__(self, parser, namespace, values, option_string=None) -> None:
        import sys

        sys.stderr.write(
            f"{parser.prog}: warning: {option_string} is deprecated; use -o/--output\n"
        )
        setattr(namespace, self.dest, values)


def add_output_arguments(
    parser: argparse.ArgumentParser,
    metavar: str,
    help: str,
    *,
    required: bool = False,
    default: str | None = None,
    old_out: bool = False,
) -> None:
    """Add ``-o/--output`` and ``--force`` (and, with ``old_out``, a hidden deprecated ``--out``).

    Parameters
    ----------
    parser
        The command's parser (or an argument group of it).
    metavar
        ``FILE``, ``DIR`` or ``OUT``, as the help names the output.
    help
        Help of ``-o/--output``.
    required
        Whether ``-o`` must be given.
    default
        The output when ``-o`` is not given.
    old_out
        Also accept ``--out``, the former name, with a deprecation warning.
        Where ``--out`` was never an option of its own, argparse still reads it
        as the abbreviation of ``--output``.
    """
    parser.add_argument(
        "-o", "--output", required=required, default=default, metavar=metavar, help=help
    )
    if old_out:
        parser.add_argument(
            "--out",
            dest="output",
            action=_DeprecatedAlias,
            default=argparse.SUPPRESS,
            help=argparse.SUPPRESS,
        )
    parser.add_argument(
        "--force", action="store_true", help=f"replace {metavar} if it exists (atomically)"
    )


def require_file(path: str | None) -> str | None:
    """``path`` when it names an existing file; otherwise the error a missing SOURCE gives.

    Raises
    ------
    InputError
        ``path`` does not exist (``file not found``) or is a folder (exit code 1,
        as for a missing SOURCE).
    """
    from pathlib import Path

    if path is None:
        return None
    if not Path(path).exists():
        raise InputError("file not found", file=str(path))
    if Path(path).is_dir():
        raise InputError("is a folder, not a file", file=str(path))
    return path


def check_seed(seed: int | None, option: str = "--seed") -> None:
    """Seeds are whole numbers from 0 to 2**32 - 1 (numpy's seed sequences refuse negatives)."""
    if seed is not None and not 0 <= seed < 2**32:
        raise ConfigError(f"{option} must be a whole number from 0 to {2**32 - 1}, got {seed}")


def check_surrogates(n: int) -> None:
    """``--surrogates N``: 0 to :data:`MAX_SURROGATES`."""
    if not 0 <= n <= MAX_SURROGATES:
        raise ConfigError(
            f"--surrogates must be from 0 to {MAX_SURROGATES:,} (each surrogate reshuffles and "
            f"recounts every succession; 999 gives p-values to 0.001), got {n:,}"
        )


def grid_cells(cores, step: float) -> int:
    """Upper estimate of the cells a depth grid of ``step`` makes: cored thickness / step."""
    total = 0.0
    for core in cores:
        table = core.intervals
        if len(table):
            thickness = (table["base"].to_numpy(float) - table["top"].to_numpy(float)).clip(0)
            total += float(thickness.sum())
    return int(min(total / step, 1e300)) if step > 0 else 0


def check_grid_size(cores, unit: str, step: float | None, option: str = "--step") -> None:
    """Refuse a grid step that would make more than :data:`MAX_GRID_CELLS` cells, before
    any cell is built."""
    if unit != "grid" or not step:
        return
    n = grid_cells(cores, step)
    if n > MAX_GRID_CELLS:
        raise ConfigError(
            f"{option} {step:g} would make about {n:,} grid cells (at most "
            f"{MAX_GRID_CELLS:,}); choose a larger step"
        )


def add_irregular_argument(parser, what: str) -> None:
    """``--keep-irregular``: the same option on every command that screens cores."""
    parser.add_argument(
        "--keep-irregular",
        action="store_true",
        help=f"{what} irregularly sampled cores too (pseudo-wells, scattered samples; "
        "warned) instead of leaving them out",
    )


def regular_cores(cores, command: str, keep: bool = False):
    """The cores without the irregularly sampled ones, which ``markov`` leaves out too
    (:func:`faciesseq.markov.leave_out_irregular`); one warning line names them. With
    ``keep`` (``--keep-irregular``) every core is kept and the line says so."""
    from faciesseq.markov.screening import leave_out_irregular

    screening = leave_out_irregular(cores)
    say_irregular(screening, command, keep)
    return cores if keep else screening.kept


def say_irregular(screening, command: str, keep: bool = False) -> None:
    """The one warning line of :func:`regular_cores` naming the irregular cores of
    ``screening`` (a :class:`~faciesseq.markov.screening.Screening`), if any."""
    import sys

    if not screening.left_out:
        return
    if keep:
        names = ", ".join(screening.left_out)
        sys.stderr.write(
            f"faciesseq {command}: warning: {len(screening.left_out)} irregularly sampled "
            f"core(s) kept (--keep-irregular): {names}\n"
        )
        return
    sys.stderr.write(f"faciesseq {command}: warning: {screening.warning()}\n")


def check_labels(cores, column: str | None, tract_model, source) -> None:
    """Refuse a ``--labels`` column that the source lacks (exit 2), that is blank on
    every row (exit 1: asked for, the labels are not there) or that holds a code which
    is not a tract of ``tract_model`` (exit 1, naming file, row, core and depth of the
    first such interval, :func:`faciesseq.hmm.labels.label_problems`), before any fit.
    Blank cells are beds not interpreted."""
    if column is None:
        return
    from faciesseq.hmm.labels import label_problems, no_labels, refuse_missing_label_column

    refuse_missing_label_column(cores, column, "--labels", file=source)
    table = cores.to_frame(provenance=True)
    problems, labelled = label_problems(
        table,
        column,
        tract_model.order,
        cores.units,
        source,
        sample_cores=cores.meta.get("sample_step", {}),
    )
    if not labelled:
        raise InputError(no_labels(column, len(table), source).message, file=source)
    if problems:
        first = problems[0]
        more = (
            f" ({len(problems) - 1} more; faciesseq check lists them)" if len(problems) > 1 else ""
        )
        raise first.as_error(more)
