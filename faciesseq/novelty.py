"""Cores to decode beside the cores a model was fitted on: facies codes and contact
types the fit never saw, beds far thinner or thicker than the training beds, and
cores more landward or basinward than every labelled core.

A fit records its beds (:func:`training_beds`: the beds of each facies code and the
median bed thickness; :func:`labelled_rank_range`: the range of the labelled cores'
mean facies rank) in the model file's ``training`` section; files made before
record none of them, and then only the model's facies list is compared. :class:`DecodedBeds`
gathers the decoded beds a part at a time and says, in one line each, what lies
outside the training data (:meth:`DecodedBeds.findings`).
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Callable, Mapping

import numpy as np
import pandas as pd

from faciesseq.core import SuccessionTable, in_units
from faciesseq.errors import some_of, where

__all__ = ["THICKNESS_FACTOR", "DecodedBeds", "labelled_rank_range", "training_beds"]

#: Median bed thickness of the decoded cores against the training beds': a ratio
#: beyond this factor (either way) is said. A rule of thumb chosen, not tuned: beds
#: four times thinner or thicker are described at another scale, or in other units.
THICKNESS_FACTOR = 4.0


def training_beds(successions: SuccessionTable) -> dict:
    """What a fit on beds records of its beds: ``facies_beds`` (code -> number of beds)
    and ``bed_thickness_median`` (in the successions' units)."""
    beds = successions.beds
    counts = beds["facies"].astype(str).value_counts(sort=False)
    return {
        "facies_beds": {str(code): int(n) for code, n in sorted(counts.items())},
        "bed_thickness_median": float(np.median(beds["thickness"].to_numpy(float))),
    }


def _mean_ranks(thickness: pd.Series, ranks: Mapping[str, float]) -> pd.Series:
    """Each core's mean facies rank weighted by thickness, from the thickness of each
    ``(core, facies)``; facies without a rank left out, cores with none of them too."""
    codes = thickness.index.get_level_values(1).astype(str)
    r = pd.Series(codes.map(lambda c: ranks.get(c, np.nan)), index=thickness.index, dtype=float)
    known = r.notna() & (thickness > 0)
    t = thickness[known]
    weighted = (t * r[known]).groupby(level=0).sum()
    return (weighted / t.groupby(level=0).sum()).dropna()


def _model_ranks(model) -> dict[str, float]:
    ranks = getattr(model, "ranks_", None)
    if ranks is None:
        return {}
    return {str(c): float(r) for c, r in zip(model.facies_, ranks) if np.isfinite(r)}


def labelled_rank_range(successions: SuccessionTable, model, labels: str | None) -> dict:
    """What a fit with labels records of its labelled cores: ``labelled_mean_rank``,
    the lowest and highest of their mean facies ranks (weighted by thickness; 0 = most
    landward), for decode to name the cores outside that range; nothing without labels
    or ranks.

    Why: with three labelled cores of a dip section, the forward model's decoded cores
    whose mean rank lay outside the labelled cores' read the tracts at balanced
    accuracy 0.27-0.64 against 0.57-0.77 within the range, and more surely than they
    were right (report seeds; benchmarks/tract_model.md, "Cores outside the labelled
    cores' facies range")."""
    beds = successions.beds
    ranks = _model_ranks(model)
    if not labels or not ranks or labels not in beds.columns:
        return {}
    core = pd.Series(np.repeat(successions.cores, successions.lengths), index=beds.index)
    keep = core.isin(core[beds[labels].notna()].unique())
    codes = beds["facies"].astype(str)[keep]
    thickness = beds["thickness"][keep].groupby([core[keep], codes]).sum()
    mean = _mean_ranks(thickness, ranks)
    if len(mean) < LABELLED_CORES_FOR_RANGE:
        return {}
    return {"labelled_mean_rank": [float(mean.min()), float(mean.max())]}


#: Fewest labelled cores whose range of mean ranks decode reads: the rule was measured
#: with three; two labelled cores make a range of two values, which named a new user's
#: held-out core that then read 1.00 (2026-12-05).
LABELLED_CORES_FOR_RANGE = 3


class DecodedBeds:
    """The facies codes, contact types and thicknesses of decoded beds, gathered a part
    at a time."""

    def __init__(self) -> None:
        self.facies: Counter[str] = Counter()
        #: cores holding each facies code (a part holds whole cores: counts add up)
        self.facies_cores: Counter[str] = Counter()
        self.contacts: Counter[str] = Counter()
        self.thickness: list[np.ndarray] = []
        #: thickness of each (core, facies), a part at a time
        self.core_facies: list[pd.Series] = []
        self.units: str | None = None
        #: whether the source was a sampled log (samples layout, LAS): its intervals
        #: are runs of one facies, not described intervals
        self.sampled = False
        #: where each facies code was first read, as the keywords of
        #: :func:`faciesseq.errors.where` (``file``, ``row``, ``core``, ``depth``,
        #: ``units``), for the codes whose reader kept it; the beds keep no data row.
        #: Only the places a finding names are formatted.
        self.first_places: dict[str, Mapping] = {}

    def add(self, beds: pd.DataFrame, units: str) -> None:
        """Gather a decoded part's beds (``facies``, ``thickness`` in ``units``, and
        ``contact`` where they have it)."""
        self.facies.update(beds["facies"].astype(str).value_counts().to_dict())
        if "core" in beds.columns:
            codes = beds["facies"].astype(str)
            self.facies_cores.update(beds["core"].groupby(codes).nunique().to_dict())
            self.core_facies.append(beds["thickness"].groupby([beds["core"], codes]).sum())
        if "contact" in beds.columns:
            self.contacts.update(beds["contact"].dropna().astype(str).value_counts().to_dict())
        self.thickness.append(beds["thickness"].to_numpy(float))
        self.units = self.units or units

    def findings(self, model) -> list[str]:
        """One line per finding: facies codes and contact types never seen in training,
        and a median bed thickness more than :data:`THICKNESS_FACTOR` times the training
        beds'."""
        training = getattr(model, "training_", None) or {}
        unit = "grid cells" if model.unit_ == "grid" else "beds"
        found = [
            _unseen(self.facies, self.facies_cores, training, model, unit, self.first_places),
            self._contacts(model, unit),
        ]
        if model.unit_ != "grid":
            found.append(self._thickness(training, getattr(model, "units_", None), model.unit_))
        found.append(self._outside_labelled(training, model))
        return [f for f in found if f]

    def _outside_labelled(self, training: Mapping, model) -> str | None:
        """The line naming the cores whose mean facies rank lies outside the labelled
        cores' (:func:`labelled_rank_range`), or None."""
        bounds = training.get("labelled_mean_rank")
        ranks = _model_ranks(model)
        if not bounds or not ranks or not self.core_facies:
            return None
        lo, hi = (float(b) for b in bounds)
        mean = _mean_ranks(pd.concat(self.core_facies), ranks)
        outside = mean[(mean < lo - 1e-9) | (mean > hi + 1e-9)]
        if outside.empty:
            return None
        listed = _listed(list(outside.index), lambda core: f"{outside[core]:.2f}")
        return (
            f"{len(outside)} of {len(mean)} core(s) lie outside the facies range of the "
            f"labelled cores (mean facies rank {lo:.2f}-{hi:.2f} there; 0 = most landward): "
            f"{listed}; on simulated cores such cores read the tracts worse (balanced "
            "accuracy 0.27-0.64 against 0.57-0.77 within the range) and surer than they were "
            "right: label one of them, or read their columns as unsure"
        )

    def _contacts(self, model, unit: str) -> str | None:
        """The line naming the contact types the fit never saw, where it reads contacts."""
        if "contact" not in model.features_:
            return None
        known = set(model.contacts_)
        unseen = sorted(c for c in self.contacts if c not in known)
        if not unseen:
            return None
        listed = _listed(unseen, self.contacts.__getitem__)
        total = sum(self.contacts[c] for c in unseen)
        return (
            f"contact type(s) never seen in training, with their {unit}: {listed}; {total} "
            f"of {sum(self.contacts.values())} {unit} with a contact decoded with a smoothed "
            "contact probability (the stacking window reads them as missing)"
        )

    def _thickness(self, training: Mapping, fitted_units: str | None, unit: str) -> str | None:
        """The line saying the decoded beds are far thicker or thinner than the training
        beds: a sampled log decoded by a model of described intervals is named as the
        likely cause (its runs of one facies stand for the intervals), else the units."""
        median = training.get("bed_thickness_median")
        if not median or not self.thickness or self.units is None:
            return None
        units = self.units
        trained = float(in_units(float(median), fitted_units or units, units))
        decoded = float(np.median(np.concatenate(self.thickness)))
        ratio = decoded / trained
        if 1 / THICKNESS_FACTOR <= ratio <= THICKNESS_FACTOR:
            return None
        which = "thinner" if ratio < 1 else "thicker"
        times = 1 / ratio if ratio < 1 else ratio
        return (
            f"the beds are {times:.1f} times {which} than the training beds (median "
            f"{decoded:.3g} {units} against {trained:.3g} {units}; said beyond a factor of "
            f"{THICKNESS_FACTOR:g}): the model's thickness and stacking features read them "
            f"at another scale; {self._likely_cause(unit)}"
        )

    def _likely_cause(self, unit: str) -> str:
        """What to check where the beds' scale differs from the training beds'."""
        if self.sampled and unit == "intervals":
            return (
                "the model was fitted on described intervals and this source is a sampled "
                "log, whose runs of one facies stand for them: fit a model on beds (fit "
                "--unit beds), or on logs like this one"
            )
        return "check the units, or fit a model on beds like these"


def seen_facies(model) -> set[str]:
    """The facies codes of the beds a model was fitted on (its recorded training beds,
    else the codes it knows)."""
    recorded = (getattr(model, "training_", None) or {}).get("facies_beds")
    return {c for c, n in recorded.items() if n} if recorded else set(model.facies_)


def foreign_facies(decoded: DecodedBeds, model) -> str | None:
    """Why cores none of whose facies codes the model saw in training are not decoded
    (the model of other cores, or of another scheme: every bed would be read from its
    thickness and contacts alone), or None where some are."""
    seen = seen_facies(model)
    codes = sorted(decoded.facies)
    if not codes or any(c in seen for c in codes):
        return None
    scheme = getattr(model, "scheme", None)
    named = f" (facies scheme {scheme.name!r})" if scheme is not None else ""
    return (
        f"none of the facies codes of these cores ({_listed(codes, decoded.facies.__getitem__)}) "
        "is one "
        f"the model was fitted on{named}: {', '.join(sorted(seen)[:10])}"
        f"{' ...' if len(seen) > 10 else ''}; is this the model of these cores? Give the "
        "model fitted on their facies scheme, or map their codes with aliases in a scheme"
    )


def _unseen(
    facies: Counter,
    cores: Counter,
    training: Mapping,
    model,
    unit: str,
    first: Mapping[str, str] | None = None,
) -> str | None:
    """The line naming the codes never seen in training, with their beds (and the
    cores that hold them, where ``cores`` counts them; and where each was first read,
    where ``first`` says), or None."""
    seen = seen_facies(model)
    unseen = sorted(c for c in facies if c not in seen)
    if not unseen:
        return None
    total = sum(facies[c] for c in unseen)
    tail = f"{total} of {sum(facies.values())} {unit} decoded with {_treatment(model, unseen)}"
    if first:

        def placed(c: str) -> str:
            return _placed(facies[c], cores.get(c, 0), first.get(c), unit)

        return (
            f"facies code(s) never seen in training, with their {unit}, cores and first "
            f"place: {_listed(unseen, placed)}; {tail}"
        )
    counted = any(cores[c] for c in unseen)  # the cores that hold them, beside the beds
    unit_cores = f"{unit} and cores" if counted else unit

    def shown(c: str) -> object:
        return f"{facies[c]}, {cores[c]} core(s)" if counted else facies[c]

    return (
        f"facies code(s) never seen in training, with their {unit_cores}: "
        f"{_listed(unseen, shown)}; {tail}"
    )


def _placed(n: int, n_cores: int, place: Mapping | None, unit: str) -> str:
    """What :func:`_listed` shows in brackets after a code: ``1 bed, first at data row
    21, core NU-01, depth 1251.40 m`` (``place``: the keywords of
    :func:`faciesseq.errors.where`)."""
    noun = unit if n != 1 else unit.removesuffix("s")
    text = f"{n} {noun}" + (f" in {n_cores} core(s)" if n_cores > 1 else "")
    return text + (f", first at {where(**place)}" if place else "")


#: Most names a finding lists, each with what is said of it; the rest are counted.
_SHOWN = 10


def _listed(names: list[str], describe: Callable[[str], object]) -> str:
    """``names`` with what ``describe`` says of each in brackets, the first
    ten (:data:`_SHOWN`) of them: ``describe`` is called for those alone."""
    named = [f"{c} ({describe(c)})" for c in names[:_SHOWN]]
    return some_of(named + list(names[_SHOWN:]), _SHOWN)


def _treatment(model, unseen: list[str]) -> str:
    """How the decode reads beds of codes the fit never saw."""
    parts = []
    if {"facies", "facies_trend"} & set(model.features_):
        parts.append(
            "a smoothed facies probability (additive smoothing, larger in the tracts "
            "with fewer training beds)"
        )
    scheme = getattr(model, "scheme", None)
    if scheme is not None:
        ranked = [c for c in unseen if c in scheme]
        if ranked:
            parts.append(f"the scheme's rank of {', '.join(ranked[:10])}")
        if len(ranked) < len(unseen):
            others = "the others" if ranked else "them"
            parts.append(f"no rank for {others} (missing to the rank features)")
    parts.append("the tract read from the beds around them")
    return "; ".join(parts)
