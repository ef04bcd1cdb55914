"""Pieces shared by ``fit``, ``decode`` and ``validate``: model options, progress, warnings."""

from __future__ import annotations

import argparse
import math
import sys
import warnings
from contextlib import contextmanager

from faciesseq.cli._common import check_seed, check_unit_step, require_file
from faciesseq.errors import ConfigError
from faciesseq.hmm.reference_check import REFERENCE_USES


def add_model_arguments(parser: argparse.ArgumentParser, select: bool = True) -> None:
    """Options of the tract model (tracts, unit, features, sub-states, restarts, seed...)."""
    group = parser.add_argument_group("tract model")
    group.add_argument(
        "--suggest-ranks",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="where no --scheme is given, rank the facies by their upward transitions (the "
        "order 'faciesseq scheme draft' suggests), fit on those ranks and print the order for "
        "a geologist to check. This is the default without --scheme, because without ranks "
        "a fit without labels cannot name the tracts and a fit with labels reads no rank "
        "feature; but an order with no direction (under 0.6 of its steps leading landward) "
        "is refused where no labels name the tracts, unless --suggest-ranks is given. "
        "--no-suggest-ranks fits without ranks",
    )
    group.add_argument("--tracts", metavar="FILE", help="tract-model YAML (default: four tracts)")
    group.add_argument(
        "--unit",
        choices=("auto", "beds", "intervals", "grid"),
        default="auto",
        help="observations: the described intervals as they are, amalgamated beds (runs of "
        "one facies), or a regular depth grid (needs --step); auto (the default): intervals "
        "for a fit with labels, beds for one without",
    )
    group.add_argument("--step", type=float, metavar="X", help="grid step in depth units")
    group.add_argument(
        "--features",
        action="append",
        metavar="LIST",
        help="comma-separated emission features: facies or facies_trend, thickness, contact, "
        "rank_step (rank jump at the bed's base), rank_step_above (at its top), rank_trend, "
        "stacking (boosted trees over a window of beds, learnt from labelled beds), "
        "any numeric bed column (e.g. grain_size); default facies_trend,thickness,contact, "
        "plus rank_step when a scheme gives ranks, plus stacking when beds are labelled"
        + ("; repeat to compare sets of the same variables by BIC" if select else ""),
    )
    group.add_argument(
        "--substates",
        metavar="N[,N...]",
        help="sub-states per tract (left-to-right chain); default: the tract model's"
        + ("; several values are compared by BIC" if select else ""),
    )
    group.add_argument(
        "--prior-strength",
        type=float,
        default=2.0,
        metavar="X",
        help="scale of the Dirichlet pseudo-counts from the facies ranks (0 = off; default 2)",
    )
    group.add_argument(
        "--cycle-prior",
        type=float,
        default=0.2,
        metavar="X",
        help="weight of transition pseudo-counts from the trend rule (0 = off; default 0.2)",
    )
    group.add_argument("--restarts", type=int, default=3, metavar="N", help="EM restarts")
    group.add_argument("--seed", type=int, default=0, metavar="S", help="random seed")
    group.add_argument("--max-iter", type=int, default=200, metavar="N", help="EM iteration cap")
    group.add_argument(
        "--tol",
        type=float,
        default=1e-3,
        metavar="X",
        help="EM convergence tolerance (log units; per 1,000 beds on fits of more beds)",
    )
    group.add_argument(
        "--calibration-folds",
        type=int,
        default=5,
        metavar="K",
        help="with labels on 2 or more cores, calibrate the tract probabilities by a "
        "temperature chosen by K folds of cross-validation by core (0 = off; default 5)",
    )
    group.add_argument(
        "--weigh-evidence",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="without labels: count the stacking context shared by the beds of a cycle "
        "or window once (the default), or with --no-weigh-evidence once per bed "
        "(docs/hmm.md, 'Evidence counted once')",
    )
    group.add_argument(
        "--nested-start",
        action=argparse.BooleanOptionalAction,
        default=True,
        help="without labels: start EM from a fit without the FSST, so that a thin or "
        "rare falling stage does not move the other tract names (the default), or with "
        "--no-nested-start from the priors alone (docs/hmm.md, 'The nested start')",
    )


def add_reference_arguments(parser: argparse.ArgumentParser) -> None:
    """``--reference``, ``--reference-weight`` and ``--reference-use`` (fits without
    labels)."""
    parser.add_argument(
        "--reference",
        metavar="MODEL",
        help="without labels: a model file fitted with labels on other cores (another "
        "field, other facies) whose stacking trees help name the tracts, read beside this "
        "database's own stacking; 'generators' for the one packaged with faciesseq, "
        "learnt from invented cores of four generators (docs/hmm.md, 'A reference model')",
    )
    parser.add_argument(
        "--reference-weight",
        metavar="W",
        type=float,
        default=1.0,
        help="with --reference: the weight of its trees against this database's own "
        "stacking (default 1)",
    )
    parser.add_argument(
        "--reference-use",
        choices=REFERENCE_USES,
        default="always",
        help="with --reference: 'always' read it (the default), or 'check': fit without it "
        "too, keep the fit reading it only where the two columns give one tract to less "
        "than a third of the thickness, and say how far they agree (below a half the "
        "names are unsure; docs/hmm.md, 'Checking a reference')",
    )


def reference_option(args: argparse.Namespace, labelled: bool):
    """The ``--reference`` model file (read once here, before any work, so that a bad
    file stops the command at once; ``"generators"`` for the packaged one), ``None``
    without it; refused (exit 2) where the fits are ``labelled``, for a weight or a use
    without a reference, and for a weight not above 0."""
    if args.reference is None:
        if args.reference_weight != 1.0:
            raise ConfigError("--reference-weight needs --reference")
        if args.reference_use != "always":
            raise ConfigError("--reference-use needs --reference")
        return None
    if labelled:
        raise ConfigError(
            "--reference is read by fits without labels (fit without --labels, validate "
            "--mode unsupervised); with labels the labelled cores name the tracts"
        )
    if not args.reference_weight > 0:
        raise ConfigError(f"--reference-weight must be > 0, got {args.reference_weight}")
    from faciesseq.hmm.reference import reference_model

    reference_model(args.reference)  # a file that is not a model: one line, before any work
    return args.reference


def weigh_evidence(args: argparse.Namespace) -> bool:
    """``--weigh-evidence`` / ``--no-weigh-evidence``; weighed unless told not to."""
    return args.weigh_evidence is not False


def feature_sets(args: argparse.Namespace) -> list[tuple[str, ...] | None]:
    if not args.features:
        return [None]
    out = []
    for value in args.features:
        feats = tuple(f.strip() for f in value.split(",") if f.strip())
        if not feats:
            raise ConfigError(f"--features {value!r}: no feature named")
        out.append(feats)
    return out


def check_features(args: argparse.Namespace, cores) -> None:
    """Refuse a --features name the model does not know and the beds of ``cores`` do
    not carry, before any other work (ranks suggested, fits) is done or printed."""
    from faciesseq.hmm.features import check_feature_names

    if not args.features:
        return
    successions = cores.succession_table(args.unit, args.step)
    for feats in feature_sets(args):
        if feats is not None:
            try:
                check_feature_names(feats, successions.beds.columns)
            except ConfigError as exc:
                raise ConfigError(f"--features: {exc}") from None


def check_substates(n: int, n_tracts: int = 4) -> None:
    """One ``--substates`` value: 1 to ``MAX_SUBSTATES``, with what a larger one would cost."""
    from faciesseq.scheme import MAX_SUBSTATES

    if n < 1:
        raise ConfigError(f"--substates must be >= 1, got {n}")
    if n > MAX_SUBSTATES:
        states = n * n_tracts
        gib = states * states * 8 / 2**30
        raise ConfigError(
            f"--substates {n:,} is too many (at most {MAX_SUBSTATES} per tract): {states:,} "
            f"states need a {gib:,.1f} GiB transition matrix per restart"
        )


def substate_counts(args: argparse.Namespace, n_tracts: int = 4) -> list[int | None]:
    if not args.substates:
        return [None]
    out = []
    for part in str(args.substates).split(","):
        try:
            n = int(part)
        except ValueError:
            raise ConfigError(f"--substates expects whole numbers, got {part!r}") from None
        check_substates(n, n_tracts)
        out.append(n)
    return out


#: Upper limits of the fitting options (far above any useful value; they stop a typo
#: from running for days).
MAX_RESTARTS = 1_000
MAX_ITER = 100_000


def resolve_unit(args: argparse.Namespace, labelled: bool) -> None:
    """``--unit auto``: the unit a fit of this kind reads (:func:`faciesseq.hmm.model.fit_unit`)."""
    from faciesseq.hmm.model import fit_unit

    args.unit = fit_unit(args.unit, labelled)


def check_unit(args: argparse.Namespace) -> None:
    check_unit_step(args)
    check_seed(args.seed)
    if not (math.isfinite(args.tol) and args.tol > 0):
        raise ConfigError(f"--tol must be a positive number, got {args.tol}")
    for name in ("prior_strength", "cycle_prior"):
        value = getattr(args, name)
        if not (math.isfinite(value) and value >= 0):
            option = "--" + name.replace("_", "-")
            raise ConfigError(f"{option} must be a number >= 0, got {value}")
    if not 1 <= args.max_iter <= MAX_ITER:
        raise ConfigError(f"--max-iter must be from 1 to {MAX_ITER:,}, got {args.max_iter}")
    if args.restarts > MAX_RESTARTS:
        raise ConfigError(f"--restarts must be at most {MAX_RESTARTS:,}, got {args.restarts}")
    substate_counts(args)
    if args.restarts < 1:
        raise ConfigError(f"--restarts must be >= 1, got {args.restarts}")
    if args.calibration_folds < 0:
        raise ConfigError(f"--calibration-folds must be >= 0, got {args.calibration_folds}")


def load_tracts_option(path: str | None):
    """The tract model of ``--tracts``, or ``None``: the model's own default (the
    strict cyclic graph chosen by ICL without labels; with labels the strict one where
    every labelled boundary follows it, else the permissive one)."""
    from faciesseq.scheme import load_tract_model

    return load_tract_model(require_file(path)) if path else None


class Progress:
    """A one-line progress display on standard error, only when it is a terminal."""

    def __init__(self, label: str, total: int | None = None) -> None:
        self.label = label
        self.total = total
        self.active = sys.stderr.isatty()
        self.shown = False

    def fit(self, restart: int, iteration: int, objective: float) -> None:
        of = f"/{self.total}" if self.total else ""
        self._show(
            f"restart {restart + 1}{of}, iteration {iteration}, log-posterior {objective:.3f}   "
        )

    def fold(self, done: int, total: int) -> None:
        width = 30
        filled = int(width * done / max(total, 1))
        self._show(f"[{'#' * filled}{'.' * (width - filled)}] {done}/{total}")

    def count(self, done: int, what: str) -> None:
        """``done`` of ``total`` ``what`` (e.g. grid cells decoded)."""
        self._show(f"{done:,} of {self.total:,} {what}   ")

    def _show(self, text: str) -> None:
        """Write ``text`` over the line (on a terminal only)."""
        if not self.active:
            return
        sys.stderr.write(f"\r{self.label}: {text}")
        sys.stderr.flush()
        self.shown = True

    def close(self) -> None:
        if self.shown:
            sys.stderr.write("\n")
            sys.stderr.flush()
            self.shown = False


@contextmanager
def warnings_to_stderr(command: str):
    """Show each warning raised inside as one line ``faciesseq CMD: warning: ...``."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            yield
        finally:
            seen = set()
            for w in caught:
                text = str(w.message)
                if text in seen:
                    continue
                seen.add(text)
                sys.stderr.write(f"faciesseq {command}: warning: {text}\n")


def resolve_suggest_ranks(args: argparse.Namespace) -> None:
    """``args.ranks_suggested``: whether the fits read ranks suggested from the data
    (asked, or by default where there is no scheme); read by the settings line.
    ``--suggest-ranks`` beside ``--scheme`` is refused."""
    if args.suggest_ranks and args.scheme:
        raise ConfigError(
            f"--suggest-ranks ranks the facies where there is no scheme; {args.scheme} is "
            "given: use one or the other"
        )
    asked = args.suggest_ranks
    args.ranks_suggested = asked if asked is not None else not args.scheme


def scheme_for_fit(args: argparse.Namespace, cores, scheme, command: str, labelled: bool):
    """The scheme the fits use: ``scheme`` (checked against the order the data's
    transitions suggest), else the ranks suggested from the data where
    ``args.ranks_suggested`` (:mod:`faciesseq.markov.seriation`), else None (with a
    warning where the fits have no labels to name the tracts; refused where no ranks
    could be suggested, the default, and nothing else names the tracts, unless
    ``--no-suggest-ranks`` asks for a fit without ranks). Suggested ranks with no
    direction (:attr:`~faciesseq.markov.seriation.RankSuggestion.undirected`) are refused
    where nothing else names the tracts (no labels) unless ``--suggest-ranks`` asks for
    them: a new user's fit on an order read the wrong
    way round named the tracts wrongly (docs/hmm.md, "Ranks suggested from the data")."""
    from faciesseq.cli._common import settings_line
    from faciesseq.errors import InputError
    from faciesseq.markov.seriation import suggest_ranks

    wanted = scheme is not None or args.ranks_suggested
    suggestion = suggest_ranks(cores.succession_table("beds")) if wanted else None
    if scheme is not None:
        if suggestion is not None:
            _warn_reversed(scheme, suggestion, args.scheme, command)
        return scheme
    if suggestion is None and args.suggest_ranks:
        raise InputError(
            "--suggest-ranks: fewer than three facies follow one another in the source; "
            "give a scheme (faciesseq scheme draft)",
            file=args.source,
        )
    if suggestion is None:
        if args.ranks_suggested:  # the default found nothing to suggest
            if not labelled:
                raise InputError(
                    f"no --scheme, {_no_labels(command)}, and no facies order to suggest "
                    "(fewer than three facies follow one another): without ranks the "
                    f"tracts are not identified; give a scheme, {_labels_way(command)}, or "
                    "fit without ranks anyway with --no-suggest-ranks",
                    file=args.source,
                )
            args.ranks_suggested = False
            args.settings_line = f"faciesseq {command}: {settings_line(args, cores)}"
        if not labelled:
            sys.stderr.write(f"faciesseq {command}: warning: {NO_RANKS}\n")
        return None
    if suggestion.undirected and not labelled and args.suggest_ranks is None:
        raise InputError(
            f"no --scheme, {_no_labels(command)}, and the facies order the transitions "
            f"suggest has no direction; landward to basinward {suggestion.describe()}: a "
            "fit on it may name every tract upside down; give a scheme (faciesseq scheme "
            f"draft SOURCE --fill-ranks writes one to check), {_labels_way(command)}, or "
            "fit on this order anyway with --suggest-ranks",
            file=args.source,
        )
    sys.stderr.write(
        f"faciesseq {command}: ranks suggested from the data, landward to basinward: "
        f"{suggestion.describe()}; check them with faciesseq scheme draft --fill-ranks\n"
    )
    return suggestion.scheme()


def _no_labels(command: str) -> str:
    """That the fits read no labels, as the command puts it."""
    return "folds fitted without labels" if command == "validate" else "no labels"


def _labels_way(command: str) -> str:
    """How labels would name the tracts, as the command takes them."""
    if command == "validate":  # its --labels score the folds; --mode decides their use
        return "fit the folds on their labels (--mode supervised or semi-supervised)"
    return "label a few cores (--labels)"


#: What a fit without ranks and without labels is worth (docs/hmm.md, "Ranks suggested
#: from the data"; ``benchmarks/eval_suggested_ranks.py``).
NO_RANKS = (
    "no --scheme and no ranks suggested: without facies ranks the tracts are not "
    "identified (balanced accuracy without labels on the stacking generator's cores "
    "0.01-0.35 without ranks, 0.67-0.85 with ranks suggested from the data; docs/hmm.md)"
)


def _warn_reversed(scheme, suggestion, path, command: str) -> None:
    """Warn where the scheme's ranks run against the order the data's upward
    transitions suggest (:meth:`~faciesseq.markov.seriation.RankSuggestion.runs_against`):
    ranks written 0 = deepest give the tracts the wrong names."""
    rho = suggestion.agreement(scheme)
    if suggestion.runs_against(rho):
        sys.stderr.write(
            f"faciesseq {command}: warning: the ranks of {path} run against the order the "
            f"data suggest (Spearman's rho {rho:.2f}; landward to basinward "
            f"{', '.join(suggestion.order())}): rank 0 is the most landward or shallow "
            "facies; a reversed scheme names the tracts wrongly\n"
        )
