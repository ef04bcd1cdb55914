"""Which emission features a fit reads: the names with a fixed meaning, the defaults
of fits with and without labels, and the check of a list against the beds and the
scheme.
"""

from __future__ import annotations

from collections.abc import Sequence

import pandas as pd

from faciesseq.cycles import CONTEXT_FEATURES
from faciesseq.errors import ConfigError
from faciesseq.scheme import FaciesScheme

__all__ = [
    "DEFAULT_FEATURES",
    "DEFAULT_LABELLED_FEATURES",
    "DEFAULT_UNLABELLED_FEATURES",
    "FEATURES",
    "RANK_FEATURES",
    "attribute_columns",
    "check_feature_names",
    "resolve_features",
]

#: Emission features with a fixed meaning; any other name is a numeric bed attribute.
FEATURES = (
    "facies",
    "facies_trend",
    "thickness",
    "contact",
    "rank_step",
    "rank_step_above",
    "rank_trend",
    "stacking",
    "reference",
)
#: Used when ``features=None`` ("contact" only where the beds have contact types,
#: "rank_step" only with a facies scheme, "thickness" not on a depth grid).
#: "rank_trend" is opt-in: it helps on simulated cores, hurts on cores whose
#: lowstand deepens (see docs/hmm.md, measured accuracy).
DEFAULT_FEATURES = ("facies_trend", "thickness", "contact", "rank_step")
#: Used when ``features=None`` and beds are labelled (supervised or semi-supervised
#: fits): the stacking-pattern classifier learnt from the labelled beds. Measured
#: on simulated cores in benchmarks/hmm_model.md.
DEFAULT_LABELLED_FEATURES = (*DEFAULT_FEATURES, "stacking")
#: Features computed from the facies ranks of the scheme.
RANK_FEATURES = (
    "rank_step",
    "rank_step_above",
    "rank_trend",
    "stacking",
    "reference",
    *CONTEXT_FEATURES,
)
#: Used when ``features=None``, no bed is labelled and a scheme gives ranks: the
#: stacking context of every bed (its cycle against the cycles below and above,
#: the trend and position of proximality around it), the contact type and the rank
#: jump at the bed's base (the downward shift at a forced-regressive contact; +0.02
#: balanced accuracy on the tuning seeds). The facies-to-facies table is left out:
#: without labels it learns the position inside a parasequence, present in every
#: tract, instead of the tract.
DEFAULT_UNLABELLED_FEATURES = (*CONTEXT_FEATURES, "contact", "rank_step")


def resolve_features(
    features: Sequence[str] | None,
    tables: Sequence[pd.DataFrame],
    scheme: FaciesScheme | None,
    unit: str,
    labelled: bool = False,
) -> tuple[str, ...]:
    """The emission features a fit reads: ``features`` as the user listed them, checked,
    or where ``None`` the defaults of its kind (with labels, without labels on a scheme
    with ranks, else the bed-level ones) that the bed ``tables`` and the ``scheme`` can
    feed; a :class:`~faciesseq.errors.ConfigError` names what is missing."""
    columns = set().union(*(t.columns for t in tables)) if tables else set()
    if features is None:
        feats = _defaults(columns, scheme, unit, labelled)
    else:
        feats = [str(f) for f in features]
    if not feats:
        raise ConfigError("at least one emission feature is needed")
    if len(set(feats)) != len(feats):
        raise ConfigError(f"features listed twice: {feats}")
    if "facies" in feats and "facies_trend" in feats:
        raise ConfigError("use 'facies' or 'facies_trend', not both (the trend includes it)")
    if not ({"facies", "facies_trend", *CONTEXT_FEATURES} & set(feats)):
        raise ConfigError(
            "the features must include 'facies', 'facies_trend' or a context feature "
            f"({', '.join(CONTEXT_FEATURES)})"
        )
    check_feature_names(feats, columns)
    for f in feats:
        if f in RANK_FEATURES and scheme is None:
            raise ConfigError(f"feature {f!r} needs a facies scheme with ranks (--scheme)")
    return tuple(feats)


#: Columns of a bed table that the tool makes (a succession's number, a bed's
#: depths and count of intervals): not attributes a user can name as a feature.
BED_TABLE_COLUMNS = frozenset({"segment", "top", "base", "depth", "n_intervals"})


def attribute_columns(columns) -> list[str]:
    """The bed columns a user can name as a feature beside :data:`FEATURES`: the
    source's own attributes, not the columns the bed tables are made of."""
    named = set(FEATURES) | set(CONTEXT_FEATURES) | BED_TABLE_COLUMNS
    return sorted(str(c) for c in columns if str(c) not in named)


def check_feature_names(features: Sequence[str], columns) -> None:
    """Refuse a feature that is neither a name of :data:`FEATURES` or the stacking
    context nor a column of the beds, with a :class:`~faciesseq.errors.ConfigError`
    listing the names a user can give."""
    known = {*FEATURES, *CONTEXT_FEATURES}
    attributes = attribute_columns(columns)
    for f in features:
        if f in known or f in attributes:
            continue
        own = f"; columns of the source: {', '.join(attributes)}" if attributes else ""
        raise ConfigError(
            f"feature {f!r} is neither a feature of the model nor a column of the source "
            f"(features: {', '.join((*FEATURES, *CONTEXT_FEATURES))}{own})"
        )


def _defaults(columns: set, scheme: FaciesScheme | None, unit: str, labelled: bool) -> list[str]:
    """The default features of a fit of this kind that these bed columns and scheme
    can feed ("contact" only with contact types, rank features only with a scheme,
    "thickness" not on a depth grid)."""
    if labelled:
        defaults = DEFAULT_LABELLED_FEATURES
    elif scheme is not None and unit != "grid":
        defaults = DEFAULT_UNLABELLED_FEATURES
    else:
        defaults = DEFAULT_FEATURES
    feats = [
        f
        for f in defaults
        if (f not in ("contact", "cycle_sharpness") or "contact" in columns)
        and (f not in RANK_FEATURES or scheme is not None)
        and (f != "setting" or scheme.tells_settings)
        and (f != "exposure" or scheme.marks_exposure)
    ]
    if unit == "grid":  # every cell has the grid step as its thickness
        feats.remove("thickness")
    return feats
