"""Emission pieces of the tract model: one small class per kind of bed observation.

The probability of a bed given its tract is the product of the selected pieces
(conditional independence given the tract, as in any HMM with several emission
streams; Rabiner 1989, section IV). Each piece

- reads its observation from an :class:`EncodedBeds` table (missing values are
  marginalised: they contribute ``log 1 = 0``),
- gives ``log_prob`` of every bed under every tract, shape ``(n_beds, n_tracts)``,
- collects weighted sufficient statistics (E-step) and re-estimates its
  parameters from them (M-step) as the *maximum a posteriori* estimate under
  its prior, so that EM increases log-likelihood + log-prior monotonically
  (Dempster, Laird & Rubin 1977),
- and writes / reads its parameters as plain JSON numbers.

Pieces
------
``facies``
    P(facies | tract): a categorical table per tract.
``facies_trend``
    P(facies_t | facies_t-1, tract): the stacking trend (a tract is a trend, not
    a bag of facies); the first bed of a succession uses P(facies | tract).
    Its Dirichlet pseudo-counts are built from the scheme's proximality ranks:
    deepening-upward steps favour deepening tracts (TST), shallowing-upward
    steps favour shallowing tracts (HST, FSST, LST) -- this pins the identity
    of the states.
``thickness``
    log bed thickness, Gaussian per tract.
``contact``
    the bed's lower contact type (sharp, erosional, gradational...), categorical.
``rank_trend``
    the least-squares slope of the facies rank over the bed and two beds on
    each side (ranks per bed, positive = deepening upward; the "delta" feature
    of Furui 1986), in seven bins, categorical per tract: the trend of the set
    of beds around. Pseudo-counts as for ``rank_step``.
``stacking``
    the stacking pattern around the bed: a gradient-boosted tree classifier
    (:mod:`faciesseq.hmm.boosting`) learnt from labelled beds reads a window of
    beds on each side (rank jumps to the bed, log thicknesses, contact types)
    and gives P(tract | window); the piece emits the scaled likelihood
    P(tract | window) / P(tract), the hybrid of a discriminative classifier
    and an HMM of Bourlard & Morgan (1994, Connectionist Speech Recognition: A
    Hybrid Approach). It needs labelled beds and a scheme; it is learnt once,
    before EM, and does not change during EM.
``rank_step``
    the rank jump at the bed's base: its facies rank minus the rank of the bed
    below (positive = deepening upward), clipped to -3..+3, categorical per
    tract; missing for the first bed of a succession and next to unknown
    facies. A compact trend pooled over all facies: the sense and size of the
    shift at a contact (retrogradation in the TST, progradation in the HST and
    LST, the jump of facies at a sharp-based forced-regressive contact;
    Catuneanu et al. 2009). Its pseudo-counts favour deepening jumps in
    deepening tracts and shallowing jumps in shallowing ones.
any other name
    a numeric bed attribute of that name (e.g. ``grain_size``), Gaussian per tract.

A facies (or contact type) never seen in training gets the smoothed probability
of an unseen category (additive smoothing, Lidstone 1920 / Chen & Goodman 1999)
and a :class:`UnseenCategoryWarning`; it never raises.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
import pandas as pd

from faciesseq.cycles import CONTEXT_FEATURES, bed_context, sharp_contacts
from faciesseq.errors import ConfigError, ModelFileError

__all__ = [
    "CategoricalEmission",
    "ContactEmission",
    "EmissionPiece",
    "EncodedBeds",
    "FaciesEmission",
    "FaciesTrendEmission",
    "GaussianEmission",
    "RankStepEmission",
    "RankTrendEmission",
    "StackingEmission",
    "UnseenCategoryWarning",
    "encode_beds",
    "make_piece",
    "piece_from_dict",
]

#: Code for "no value" in integer-coded observations.
MISSING = -1
#: Code for "a category not seen in training".
UNSEEN = -2


class UnseenCategoryWarning(UserWarning):
    """A facies or contact type not seen in training was decoded with a smoothed probability."""


@dataclass(frozen=True)
class EncodedBeds:
    """Beds of many successions, concatenated base to top, coded for the emissions.

    Attributes
    ----------
    lengths
        Number of beds of each succession, in order.
    facies
        Facies index into the model's facies list; ``-1`` missing, ``-2`` unseen.
    previous
        Facies index of the bed below in the same succession (``-1`` for the
        first bed, or when the bed below is missing or unseen).
    contact
        Contact-type index; ``-1`` missing, ``-2`` unseen.
    numeric
        ``name -> float array`` (``NaN`` = missing); ``"thickness"`` holds the
        natural log of the bed thickness, ``"rank_step"`` the rank of the bed's
        facies minus that of the bed below.
    """

    lengths: np.ndarray
    facies: np.ndarray
    previous: np.ndarray
    contact: np.ndarray
    numeric: Mapping[str, np.ndarray]

    def __len__(self) -> int:
        return len(self.facies)

    def slice(self, start: int, stop: int, lengths: np.ndarray) -> EncodedBeds:
        """Beds ``start:stop`` (whole successions with the given ``lengths``)."""
        return EncodedBeds(
            np.asarray(lengths, dtype=np.int64),
            self.facies[start:stop],
            self.previous[start:stop],
            self.contact[start:stop],
            {k: v[start:stop] for k, v in self.numeric.items()},
        )


def _codes(values: pd.Series, vocabulary: Sequence[str]) -> np.ndarray:
    """Index of each value in ``vocabulary``; -1 missing (blank or NaN), -2 not in it."""
    text = values.astype("string").str.strip()
    missing = text.isna() | (text == "") | (text.str.lower() == "nan")
    out = pd.Index(list(vocabulary), dtype=object).get_indexer(
        text.where(~missing).astype(object).to_numpy()
    )
    out = np.asarray(out, dtype=np.int64)
    out[(out < 0) & ~missing.to_numpy(dtype=bool)] = UNSEEN
    return out


def encode_beds(
    tables: Sequence[pd.DataFrame],
    facies: Sequence[str],
    contacts: Sequence[str] = (),
    numeric: Sequence[str] = (),
    ranks: np.ndarray | None = None,
    cycle_base: np.ndarray | None = None,
) -> EncodedBeds:
    """Code bed tables (each base to top) for the emission pieces.

    Parameters
    ----------
    tables
        One bed table per succession, base to top, with ``facies`` and, where
        used, ``thickness`` (depth units), ``contact`` and numeric attributes.
    facies, contacts
        The model's facies codes and contact types (their order is the index).
    numeric
        Numeric attributes to read (``"thickness"`` reads ``log(thickness)``;
        ``"rank_step"`` is computed from the facies and ``ranks``).
    ranks
        Proximality rank of each of ``facies`` (``NaN`` unknown); needed for
        ``"rank_step"`` and the context features.
    cycle_base
        Whether each of ``facies`` always starts a cycle (the scheme's
        ``cycle_base`` mark), for the context features.
    """
    lengths = np.array([len(t) for t in tables], dtype=np.int64)
    # Chunks of whole tables keep the pandas temporaries small on big databases.
    fac_parts, contact_parts = [], []
    value_parts: dict[str, list[np.ndarray]] = {name: [] for name in numeric}
    chunk: list[pd.DataFrame] = []
    size = 0

    def flush() -> None:
        table = pd.concat(chunk, ignore_index=True)
        fac_parts.append(_codes(table["facies"], facies))
        if "contact" in table.columns:
            contact_parts.append(_codes(table["contact"], contacts))
        else:
            contact_parts.append(np.full(len(table), MISSING, dtype=np.int64))
        for name in numeric:
            if name in (RANK_STEP, RANK_STEP_ABOVE, RANK_TREND, STACKING, *CONTEXT_FEATURES):
                continue  # computed below, from the coded beds
            col = "thickness" if name == "thickness" else name
            if col in table.columns:
                x = pd.to_numeric(table[col], errors="coerce").to_numpy(dtype=float)
                if name == "thickness":
                    with np.errstate(divide="ignore", invalid="ignore"):
                        x = np.where(x > 0, np.log(np.where(x > 0, x, 1.0)), np.nan)
            else:
                x = np.full(len(table), np.nan)
            value_parts[name].append(x)
        chunk.clear()

    for t in tables:
        chunk.append(t.reset_index(drop=True))
        size += len(t)
        if size >= 200_000:
            flush()
            size = 0
    if chunk:
        flush()
    empty = np.zeros(0, dtype=np.int64)
    fac = np.concatenate(fac_parts) if fac_parts else empty
    contact = np.concatenate(contact_parts) if contact_parts else empty
    values = {
        name: np.concatenate(parts) if parts else np.zeros(0) for name, parts in value_parts.items()
    }
    prev = np.r_[MISSING, fac[:-1]] if len(fac) else fac.copy()
    starts = np.r_[0, np.cumsum(lengths)[:-1]] if len(lengths) else lengths
    prev[starts[lengths > 0]] = MISSING
    prev = np.where(prev < 0, MISSING, prev)
    if RANK_STEP in numeric:
        values[RANK_STEP] = rank_steps(fac, prev, ranks)
    if RANK_TREND in numeric:
        values[RANK_TREND] = rank_trends(fac, lengths, ranks)
    if RANK_STEP_ABOVE in numeric:
        values[RANK_STEP_ABOVE] = rank_steps_above(fac, lengths, ranks)
    context = [name for name in numeric if name in CONTEXT_FEATURES]
    if context:
        values.update(_context_values(tables, fac, lengths, ranks, context, cycle_base))
    if STACKING in numeric:
        if "thickness" not in values:
            raise ConfigError("the stacking feature needs 'thickness' among the numeric columns")
        values[STACKING] = stacking_window(fac, lengths, ranks, values["thickness"], contact)
    return EncodedBeds(lengths, fac, prev, contact, values)


def _context_values(tables, fac, lengths, ranks, names, cycle_base=None) -> dict[str, np.ndarray]:
    """The stacking context of every bed (:func:`faciesseq.cycles.bed_context`)."""
    if ranks is None:
        raise ConfigError(f"the features {names} need a facies scheme with ranks (--scheme)")
    known = fac >= 0
    bed_ranks = np.full(len(fac), np.nan)
    bed_ranks[known] = np.asarray(ranks, dtype=float)[fac[known]]
    thick = [
        pd.to_numeric(t["thickness"], errors="coerce").to_numpy(float)
        if "thickness" in t.columns
        else np.ones(len(t))
        for t in tables
    ]
    thickness = np.concatenate(thick) if thick else np.zeros(0)
    sharp = None
    if any("contact" in t.columns for t in tables):
        sharp = np.concatenate(
            [
                sharp_contacts(t["contact"].to_numpy(object))
                if "contact" in t.columns
                else np.full(len(t), np.nan)
                for t in tables
            ]
        )
    starts = None
    if cycle_base is not None:
        starts = np.zeros(len(fac), dtype=bool)
        starts[known] = np.asarray(cycle_base, dtype=bool)[fac[known]]
    context = bed_context(bed_ranks, lengths, thickness, cycle_base=starts, sharp=sharp)
    return {name: context[name] for name in names}


#: Name of the stacking-pattern feature (a classifier over a window of beds).
STACKING = "stacking"
#: Beds on each side of a bed in the stacking window.
STACKING_HALF_WIDTH = 4


def stacking_columns(half_width: int = STACKING_HALF_WIDTH) -> list[str]:
    """Names of the columns of :func:`stacking_window`, in order."""
    out = []
    for k in range(-half_width, half_width + 1):
        if k != 0:
            out.append(f"rank_step[{k:+d}]")
        out += [f"log_thickness[{k:+d}]", f"contact[{k:+d}]"]
    return [
        *out,
        "rank",
        "rank - deepest below",
        "rank - deepest above",
        "rank - shallowest below",
        "rank - shallowest above",
    ]


def stacking_window(
    facies: np.ndarray,
    lengths: np.ndarray,
    ranks: np.ndarray | None,
    log_thickness: np.ndarray,
    contact: np.ndarray,
    half_width: int = STACKING_HALF_WIDTH,
) -> np.ndarray:
    """Window features of every bed for the ``stacking`` piece, ``(T, F)`` float32.

    For each offset ``k`` in ``-half_width .. half_width`` (beds below are
    negative), within the bed's own succession: the facies rank of bed
    ``i + k`` minus that of bed ``i`` (``k != 0``), the log thickness of bed
    ``i + k`` and its contact code; then the bed's own rank; then the bed's
    rank minus the highest and the lowest rank among the ``half_width`` beds
    below and among those above (0 at the deepest or shallowest bed of its
    window: the turnarounds where, in common practice, the maximum flooding
    surface and the sequence boundary sit). ``NaN`` where the offset leaves the
    succession or the value is unknown (the classifier treats it as missing).
    Rank differences rather than ranks make the window read a trend
    (deepening or shallowing upward) wherever in the facies scale it sits.
    Column names: :func:`stacking_columns`.

    The four turnaround columns could be built by the trees from the rank
    differences, but only with many splits; with them, 3-fold cross-validation
    on the demo database rose from 0.489 to 0.534 of beds and from 0.42 to 0.68
    of MFSs within one bed, and held-out simulated cores moved by -0.005 to
    +0.021 (measured 2026-12-02, docs/hmm.md).
    """
    T = len(facies)
    W = int(half_width)
    r = np.full(T, np.nan)
    if ranks is not None and T:
        rr = np.asarray(ranks, dtype=float)
        r = np.where(facies >= 0, rr[np.maximum(facies, 0)], np.nan)
    c = np.where(contact >= 0, contact, -1).astype(float)
    c[c < 0] = np.nan
    lt = np.asarray(log_thickness, dtype=float)
    starts = np.repeat(np.r_[0, np.cumsum(lengths)[:-1]], lengths) if T else np.zeros(0, int)
    ends = np.repeat(np.cumsum(lengths), lengths) if T else np.zeros(0, int)
    idx = np.arange(T)
    cols = []
    below, above = [], []
    for k in range(-W, W + 1):
        j = idx + k
        inside = (j >= starts) & (j < ends)
        jc = np.clip(j, 0, max(T - 1, 0))
        if k != 0:
            step = np.where(inside, r[jc] - r, np.nan)
            cols.append(step)
            (below if k < 0 else above).append(step)
        cols.append(np.where(inside, lt[jc], np.nan))
        cols.append(np.where(inside, c[jc], np.nan))
    cols.append(r)
    for side in (below, above) if T else ():
        # fmax / fmin skip NaN (NaN only where every bed of that side is unknown);
        # own rank minus the extreme = -(extreme of the neighbour-minus-own steps)
        cols.append(-np.fmax.reduce(side))
    for side in (below, above) if T else ():
        cols.append(-np.fmin.reduce(side))
    if not T:
        return np.zeros((0, len(cols)), dtype=np.float32)
    return np.column_stack(cols).astype(np.float32)


#: Name of the derived feature "rank trend over the neighbouring beds".
RANK_TREND = "rank_trend"
#: Beds on each side in the rank trend (the regression window of Furui 1986).
TREND_HALF_WIDTH = 2


def rank_trends(
    facies: np.ndarray,
    lengths: np.ndarray,
    ranks: np.ndarray | None,
    half_width: int = TREND_HALF_WIDTH,
) -> np.ndarray:
    """Least-squares slope of the facies rank over the beds ``t - N .. t + N`` (ranks/bed).

    ``d_t = sum_n n (r_{t+n} - r_{t-n}) / (2 sum_n n^2)``, ``n = 1..N``: the
    "delta" feature of speech-recognition HMMs (Furui 1986, IEEE Trans. ASSP
    34:52-59), here on the proximality rank of successive beds of one succession
    (base to top; positive = deepening upward). The ends repeat the first / last
    rank; an unknown facies takes the rank of the nearest known bed below (above
    at the base). A succession without a known rank gives ``NaN``.

    Why: a tract is a trend over several beds (a retrogradational or
    progradational *set*, common practice of reading stacking patterns), and a
    TST holds shallowing steps as well (36-45 % of the steps inside true TSTs of
    the simulated scenarios); the slope over five beds tells the set from the
    step. Measured on the ramp scenario's training seeds and the demo: bed
    accuracy up 0.03-0.04 supervised and 0.09-0.10 unsupervised; on the
    project's synthetic cores (whose lowstand deepens) unsupervised accuracy
    fell from 0.91 to 0.67, so the feature is not a default.
    """
    out = np.full(len(facies), np.nan)
    if ranks is None:
        return out
    r_all = np.where(facies >= 0, np.asarray(ranks, dtype=float)[np.maximum(facies, 0)], np.nan)
    den = 2.0 * sum(k * k for k in range(1, half_width + 1))
    start = 0
    for n in np.asarray(lengths, dtype=int):
        r = r_all[start : start + n]
        known = np.isfinite(r)
        if n > 1 and known.any():
            idx = np.where(known, np.arange(n), 0)
            np.maximum.accumulate(idx, out=idx)
            filled = r[idx]
            filled[: int(np.argmax(known))] = r[int(np.argmax(known))]
            padded = np.r_[np.full(half_width, filled[0]), filled, np.full(half_width, filled[-1])]
            d = np.zeros(n)
            for k in range(1, half_width + 1):
                d += k * (
                    padded[half_width + k : half_width + k + n]
                    - padded[half_width - k : half_width - k + n]
                )
            out[start : start + n] = d / den
        start += n
    return out


#: Name of the derived feature "rank jump at the bed's base".
RANK_STEP = "rank_step"
#: Name of the derived feature "rank jump at the bed's top".
RANK_STEP_ABOVE = "rank_step_above"


def rank_steps_above(
    facies: np.ndarray, lengths: np.ndarray, ranks: np.ndarray | None
) -> np.ndarray:
    """Rank of the bed above minus the rank of each bed (``NaN`` where unknown).

    The jump at the bed's top, within each succession (the top bed has none).
    With the jump at the base (:func:`rank_steps`) it tells the deepest bed of
    a deepening-to-shallowing turnaround (base +, top -) from the beds of a
    steady trend: the turnaround of common practice where the maximum
    flooding surface lies (Catuneanu et al. 2009, Earth-Science Reviews 92:1-33).
    """
    out = np.full(len(facies), np.nan)
    if ranks is None or len(facies) < 2:
        return out
    r = np.asarray(ranks, dtype=float)
    rank = np.where(facies >= 0, r[np.maximum(facies, 0)], np.nan)
    out[:-1] = rank[1:] - rank[:-1]
    ends = np.cumsum(lengths) - 1
    out[ends[lengths > 0]] = np.nan
    return out


def rank_steps(facies: np.ndarray, previous: np.ndarray, ranks: np.ndarray | None) -> np.ndarray:
    """Rank of each bed's facies minus the rank of the bed below (``NaN`` where unknown).

    ``facies`` and ``previous`` are coded as in :class:`EncodedBeds`.
    """
    out = np.full(len(facies), np.nan)
    if ranks is None or len(facies) == 0:
        return out
    r = np.asarray(ranks, dtype=float)
    known = (facies >= 0) & (previous >= 0)
    out[known] = r[facies[known]] - r[previous[known]]
    return out


def _log(p: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return np.log(p)


def _check_table(name: str, value: Any, shape: tuple[int, ...], source: str | None) -> np.ndarray:
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ModelFileError(f"emission {name}: not a table of numbers", file=source) from None
    if arr.shape != shape:
        raise ModelFileError(
            f"emission {name}: shape {arr.shape}, expected {shape}", file=source
        ) from None
    if not np.all(np.isfinite(arr)):
        raise ModelFileError(f"emission {name}: contains NaN or infinity", file=source)
    return arr


def _check_probabilities(name: str, arr: np.ndarray, source: str | None) -> None:
    if np.any(arr < 0) or np.any(arr > 1):
        raise ModelFileError(f"emission {name}: probabilities outside [0, 1]", file=source)
    sums = arr.sum(axis=-1)
    if not np.allclose(sums, 1.0, atol=1e-6):
        raise ModelFileError(
            f"emission {name}: rows must sum to 1 (found sums {np.round(sums, 6).tolist()})",
            file=source,
        )


class EmissionPiece:
    """Base of the emission pieces (see the module docstring).

    ``static`` pieces do not change during EM, so their log-probabilities are
    computed once per fit.
    """

    kind: ClassVar[str] = ""
    static: ClassVar[bool] = False
    name: str

    def log_prob(self, beds: EncodedBeds) -> np.ndarray:
        raise NotImplementedError

    def empty_stats(self, n_tracts: int) -> dict[str, np.ndarray]:
        raise NotImplementedError

    def accumulate(self, stats: dict, beds: EncodedBeds, weights: np.ndarray) -> None:
        raise NotImplementedError

    def m_step(self, stats: dict) -> None:
        raise NotImplementedError

    def log_prior(self) -> float:
        return 0.0

    def n_parameters(self) -> int:
        raise NotImplementedError

    def to_dict(self) -> dict[str, Any]:
        raise NotImplementedError


class CategoricalEmission(EmissionPiece):
    """P(category | tract), additive Dirichlet pseudo-counts, a smoothed unseen category.

    ``emissionprob_[s, c]`` is the probability of category ``c`` in tract ``s``.
    The M-step is ``(counts + pseudo) / sum`` (MAP under Dirichlet(pseudo + 1));
    the unseen-category probability of tract ``s`` is
    ``unseen_pseudo / (n_s + unseen_pseudo * (V + 1))`` with ``n_s`` the weighted
    number of beds of the tract (Lidstone smoothing).
    """

    kind = "categorical"
    field = "facies"

    def __init__(
        self,
        categories: Sequence[str],
        n_tracts: int,
        pseudo: np.ndarray | None = None,
        unseen_pseudo: float = 0.5,
        name: str = "categorical",
    ) -> None:
        self.name = name
        self.categories = tuple(categories)
        V = len(self.categories)
        self.pseudo = np.zeros((n_tracts, V)) if pseudo is None else np.asarray(pseudo, float)
        self.unseen_pseudo = float(unseen_pseudo)
        total = self.pseudo.sum(axis=1, keepdims=True)
        self.emissionprob_ = np.where(total > 0, self.pseudo / np.where(total > 0, total, 1), 1 / V)
        self.unseen_prob_ = np.full(n_tracts, 1.0 / (V + 1))

    def _observed(self, beds: EncodedBeds) -> np.ndarray:
        return beds.facies

    def log_prob(self, beds: EncodedBeds) -> np.ndarray:
        obs = self._observed(beds)
        S = self.emissionprob_.shape[0]
        out = np.zeros((len(obs), S))
        known = obs >= 0
        out[known] = _log(self.emissionprob_[:, obs[known]].T)
        unseen = obs == UNSEEN
        if unseen.any():
            # the model warns once per core, naming the depths (see TractHMM.decode)
            out[unseen] = _log(self.unseen_prob_)[None, :]
        return out

    def empty_stats(self, n_tracts: int) -> dict[str, np.ndarray]:
        return {"counts": np.zeros((n_tracts, len(self.categories)))}

    def accumulate(self, stats: dict, beds: EncodedBeds, weights: np.ndarray) -> None:
        obs = self._observed(beds)
        known = obs >= 0
        counts = stats["counts"]
        for s in range(counts.shape[0]):
            counts[s] += np.bincount(obs[known], weights[known, s], minlength=counts.shape[1])

    def m_step(self, stats: dict) -> None:
        total = stats["counts"] + self.pseudo
        rows = total.sum(axis=1, keepdims=True)
        V = len(self.categories)
        self.emissionprob_ = np.where(rows > 0, total / np.where(rows > 0, rows, 1), 1.0 / V)
        n = stats["counts"].sum(axis=1)
        a = self.unseen_pseudo if self.unseen_pseudo > 0 else 0.5
        self.unseen_prob_ = a / (n + a * (V + 1))

    def log_prior(self) -> float:
        mask = self.pseudo > 0
        return float(np.sum(self.pseudo[mask] * np.log(self.emissionprob_[mask])))

    def n_parameters(self) -> int:
        return self.emissionprob_.shape[0] * (len(self.categories) - 1)

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "name": self.name,
            "categories": list(self.categories),
            "emissionprob": self.emissionprob_.tolist(),
            "unseen_prob": self.unseen_prob_.tolist(),
            "pseudo": self.pseudo.tolist(),
            "unseen_pseudo": self.unseen_pseudo,
        }

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        cats = [str(c) for c in data["categories"]]
        piece = cls(cats, n_tracts, unseen_pseudo=float(data["unseen_pseudo"]), name=data["name"])
        return piece._load_tables(data, n_tracts, source)

    def _load_tables(self, data: Mapping, n_tracts: int, source: str | None):
        """Pseudo-counts and probabilities from a model file, shapes and sums checked."""
        V = len(self.categories)
        self.pseudo = _check_table(f"{self.name}.pseudo", data["pseudo"], (n_tracts, V), source)
        self.emissionprob_ = _check_table(
            f"{self.name}.emissionprob", data["emissionprob"], (n_tracts, V), source
        )
        _check_probabilities(f"{self.name}.emissionprob", self.emissionprob_, source)
        self.unseen_prob_ = _check_table(
            f"{self.name}.unseen_prob", data["unseen_prob"], (n_tracts,), source
        )
        return self


class FaciesEmission(CategoricalEmission):
    """P(facies | tract)."""

    kind = "facies"
    field = "facies"

    def __init__(self, categories, n_tracts, pseudo=None, unseen_pseudo=0.5, name="facies"):
        super().__init__(categories, n_tracts, pseudo, unseen_pseudo, name)


class ContactEmission(CategoricalEmission):
    """P(lower contact type | tract)."""

    kind = "contact"
    field = "contact"

    def __init__(self, categories, n_tracts, pseudo=None, unseen_pseudo=0.5, name="contact"):
        super().__init__(categories, n_tracts, pseudo, unseen_pseudo, name)

    def _observed(self, beds: EncodedBeds) -> np.ndarray:
        return beds.contact


class FaciesTrendEmission(EmissionPiece):
    """P(facies_t | facies_t-1, tract): the stacking trend of a tract.

    Parameters are a first-bed table ``firstprob_[s, f]`` (used when the bed
    below is absent, missing or unseen) and a transition table
    ``trendprob_[s, g, f]`` = P(facies f | facies g below, tract s). With
    ``embedded=True`` (beds: successive beds never share a facies) the diagonal
    ``g == f`` is a structural zero. Both tables are MAP estimates under
    additive Dirichlet pseudo-counts (see :func:`trend_pseudo_counts`).
    """

    kind = "facies_trend"

    def __init__(
        self,
        categories: Sequence[str],
        n_tracts: int,
        first_pseudo: np.ndarray | None = None,
        trend_pseudo: np.ndarray | None = None,
        embedded: bool = True,
        unseen_pseudo: float = 0.5,
        name: str = "facies_trend",
    ) -> None:
        self.name = name
        self.categories = tuple(categories)
        self.embedded = bool(embedded)
        V = len(self.categories)
        self.first = FaciesEmission(categories, n_tracts, first_pseudo, unseen_pseudo)
        self.trend_pseudo = (
            np.zeros((n_tracts, V, V)) if trend_pseudo is None else np.asarray(trend_pseudo, float)
        )
        if self.embedded:
            self.trend_pseudo[:, np.arange(V), np.arange(V)] = 0.0
        self.trendprob_ = self._normalise(self.trend_pseudo)

    def _allowed(self) -> np.ndarray:
        V = len(self.categories)
        allowed = np.ones((V, V), dtype=bool)
        if self.embedded:
            np.fill_diagonal(allowed, False)
        return allowed

    def _normalise(self, total: np.ndarray) -> np.ndarray:
        allowed = self._allowed()
        rows = total.sum(axis=2, keepdims=True)
        uniform = allowed / np.maximum(allowed.sum(axis=1, keepdims=True), 1)
        return np.where(rows > 0, total / np.where(rows > 0, rows, 1), uniform[None])

    @property
    def emissionprob_(self) -> np.ndarray:
        return self.first.emissionprob_

    @property
    def unseen_prob_(self) -> np.ndarray:
        return self.first.unseen_prob_

    def log_prob(self, beds: EncodedBeds) -> np.ndarray:
        out = self.first.log_prob(beds)
        has_prev = (beds.previous >= 0) & (beds.facies >= 0)
        if has_prev.any():
            g, f = beds.previous[has_prev], beds.facies[has_prev]
            out[has_prev] = _log(self.trendprob_[:, g, f].T)
        return out

    def empty_stats(self, n_tracts: int) -> dict[str, np.ndarray]:
        V = len(self.categories)
        return {"first": self.first.empty_stats(n_tracts), "trend": np.zeros((n_tracts, V, V))}

    def accumulate(self, stats: dict, beds: EncodedBeds, weights: np.ndarray) -> None:
        has_prev = (beds.previous >= 0) & (beds.facies >= 0)
        first = ~has_prev
        self.first.accumulate(
            stats["first"],
            EncodedBeds(
                beds.lengths,
                np.where(first, beds.facies, MISSING),
                beds.previous,
                beds.contact,
                {},
            ),
            weights,
        )
        V = len(self.categories)
        cell = beds.previous[has_prev] * V + beds.facies[has_prev]
        trend = stats["trend"]
        for s in range(trend.shape[0]):
            trend[s] += np.bincount(cell, weights[has_prev, s], minlength=V * V).reshape(V, V)

    def m_step(self, stats: dict) -> None:
        self.first.m_step(stats["first"])
        # Unseen facies: smoothing from all beds of the tract, not only first beds.
        n = stats["first"]["counts"].sum(axis=1) + stats["trend"].sum(axis=(1, 2))
        V = len(self.categories)
        a = self.first.unseen_pseudo if self.first.unseen_pseudo > 0 else 0.5
        self.first.unseen_prob_ = a / (n + a * (V + 1))
        self.trendprob_ = self._normalise(stats["trend"] + self.trend_pseudo)

    def log_prior(self) -> float:
        mask = self.trend_pseudo > 0
        return self.first.log_prior() + float(
            np.sum(self.trend_pseudo[mask] * np.log(self.trendprob_[mask]))
        )

    def n_parameters(self) -> int:
        S = self.trendprob_.shape[0]
        allowed = self._allowed().sum(axis=1)
        return self.first.n_parameters() + int(S * np.sum(np.maximum(allowed - 1, 0)))

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "name": self.name,
            "categories": list(self.categories),
            "embedded": self.embedded,
            "first": self.first.to_dict(),
            "trendprob": self.trendprob_.tolist(),
            "trend_pseudo": self.trend_pseudo.tolist(),
        }

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        cats = [str(c) for c in data["categories"]]
        V = len(cats)
        piece = cls(cats, n_tracts, embedded=bool(data["embedded"]), name=data["name"])
        piece.first = FaciesEmission.from_dict(data["first"], n_tracts, source)
        if piece.first.categories != piece.categories:
            raise ModelFileError(f"emission {piece.name}: category lists differ", file=source)
        piece.trend_pseudo = _check_table(
            f"{piece.name}.trend_pseudo", data["trend_pseudo"], (n_tracts, V, V), source
        )
        piece.trendprob_ = _check_table(
            f"{piece.name}.trendprob", data["trendprob"], (n_tracts, V, V), source
        )
        _check_probabilities(f"{piece.name}.trendprob", piece.trendprob_, source)
        if piece.embedded and np.any(piece.trendprob_[:, np.arange(V), np.arange(V)] > 0):
            raise ModelFileError(
                f"emission {piece.name}: beds are an embedded chain, the diagonal must be zero",
                file=source,
            )
        return piece


class GaussianEmission(EmissionPiece):
    """A numeric bed attribute (or log thickness), Gaussian per tract.

    M-step: the weighted mean, and the variance
    ``(sum w (x - mean)^2 + nu * s0) / (W + nu)``: the MAP estimate under a
    scaled inverse-chi-square prior on the variance (``nu`` pseudo-beds of
    variance ``s0``; Gelman et al. 2013, Bayesian Data Analysis, ch. 3), which
    keeps a tract with few beds from collapsing onto one value.
    """

    kind = "gaussian"

    def __init__(
        self, name: str, n_tracts: int, nu: float = 1.0, s0: float = 1.0, mean0: float = 0.0
    ) -> None:
        self.name = name
        self.nu = float(nu)
        self.s0 = float(s0)
        self.mean0 = float(mean0)
        self.means_ = np.full(n_tracts, self.mean0)
        self.vars_ = np.full(n_tracts, self.s0)

    def log_prob(self, beds: EncodedBeds) -> np.ndarray:
        x = beds.numeric[self.name]
        out = np.zeros((len(x), len(self.means_)))
        known = np.isfinite(x)
        d = x[known, None] - self.means_[None, :]
        out[known] = -0.5 * (np.log(2 * np.pi * self.vars_)[None, :] + d * d / self.vars_[None, :])
        return out

    def empty_stats(self, n_tracts: int) -> dict[str, np.ndarray]:
        return {"w": np.zeros(n_tracts), "wx": np.zeros(n_tracts), "wxx": np.zeros(n_tracts)}

    def accumulate(self, stats: dict, beds: EncodedBeds, weights: np.ndarray) -> None:
        x = beds.numeric[self.name]
        known = np.isfinite(x)
        w = weights[known]
        xk = x[known]
        stats["w"] += w.sum(axis=0)
        stats["wx"] += xk @ w
        stats["wxx"] += (xk * xk) @ w

    def m_step(self, stats: dict) -> None:
        W = stats["w"]
        safe = np.where(W > 0, W, 1.0)
        mean = np.where(W > 1e-12, stats["wx"] / safe, self.mean0)
        ss = np.maximum(stats["wxx"] - 2 * mean * stats["wx"] + mean * mean * W, 0.0)
        denom = W + self.nu
        var = np.where(denom > 0, (ss + self.nu * self.s0) / np.where(denom > 0, denom, 1), 1.0)
        self.means_ = mean
        self.vars_ = np.maximum(var, 1e-9)

    def log_prior(self) -> float:
        if self.nu <= 0:
            return 0.0
        v = self.vars_
        return float(np.sum(-0.5 * self.nu * np.log(v) - 0.5 * self.nu * self.s0 / v))

    def n_parameters(self) -> int:
        return 2 * len(self.means_)

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "name": self.name,
            "means": self.means_.tolist(),
            "vars": self.vars_.tolist(),
            "nu": self.nu,
            "s0": self.s0,
            "mean0": self.mean0,
        }

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        piece = cls(data["name"], n_tracts, data["nu"], data["s0"], data["mean0"])
        piece.means_ = _check_table(f"{piece.name}.means", data["means"], (n_tracts,), source)
        piece.vars_ = _check_table(f"{piece.name}.vars", data["vars"], (n_tracts,), source)
        if np.any(piece.vars_ <= 0):
            raise ModelFileError(f"emission {piece.name}: variances must be > 0", file=source)
        return piece


class RankStepEmission(CategoricalEmission):
    """P(rank jump at the bed's base | tract), categorical over clipped jumps.

    The jump is the rank of the bed's facies minus the rank of the bed below
    (positive = deepening upward), clipped to ``-3 .. +3``; the first bed of a
    succession and beds next to an unknown facies have none (marginalised).
    Categorical rather than Gaussian because jumps are whole numbers (a Gaussian
    collapses onto one value). Measured on simulated cores to separate the
    tracts better than the facies-to-facies table alone: it pools the same
    shift over all facies (two numbers' worth of trend per tract is learnt from
    every bed, not per pair of facies).
    """

    kind = "rank_step"
    LIMIT = 3

    def __init__(
        self,
        n_tracts: int,
        pseudo: np.ndarray | None = None,
        unseen_pseudo: float = 0.5,
        name: str = RANK_STEP,
    ) -> None:
        cats = [f"{k:+d}" for k in range(-self.LIMIT, self.LIMIT + 1)]
        super().__init__(cats, n_tracts, pseudo, unseen_pseudo, name)

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        expected = [f"{k:+d}" for k in range(-cls.LIMIT, cls.LIMIT + 1)]
        if [str(c) for c in data["categories"]] != expected:
            raise ModelFileError(
                f"emission {data.get('name')!r}: categories must be the rank jumps {expected}",
                file=source,
            )
        piece = cls(n_tracts, unseen_pseudo=float(data["unseen_pseudo"]), name=data["name"])
        return piece._load_tables(data, n_tracts, source)

    def _observed(self, beds: EncodedBeds) -> np.ndarray:
        x = beds.numeric[RANK_STEP]
        known = np.isfinite(x)
        out = np.full(len(x), MISSING, dtype=np.int64)
        out[known] = np.clip(np.rint(x[known]), -self.LIMIT, self.LIMIT).astype(np.int64)
        out[known] += self.LIMIT
        return out


def rank_step_pseudo_counts(
    trends: Sequence[str],
    strength: float,
    base: float,
    values: Sequence[float] | None = None,
    aggrading_limit: float = 1.0,
) -> np.ndarray:
    """Dirichlet pseudo-counts for the rank jump at a bed's base, ``(n_tracts, 7)``.

    Every jump gets ``base``; a deepening tract adds ``strength`` to each
    deepening jump (+1 .. +3), a shallowing tract to each shallowing jump, an
    aggrading tract to jumps of at most ``aggrading_limit`` ranks; no jump (0,
    only on a grid or across unknown facies) gets half of ``strength``: the same
    reading of stacking patterns as :func:`trend_pseudo_counts` (common
    practice). ``values`` are the categories' values (default: the jumps
    -3 .. +3; :class:`RankTrendEmission` passes its bins' centres).
    """
    if values is None:
        values = np.arange(-RankStepEmission.LIMIT, RankStepEmission.LIMIT + 1)
    jumps = np.asarray(values, dtype=float)
    out = np.empty((len(trends), len(jumps)))
    for s, trend in enumerate(trends):
        if trend == "deepening":
            favour = (jumps > 0).astype(float)
        elif trend == "shallowing":
            favour = (jumps < 0).astype(float)
        elif trend == "aggrading":
            favour = (np.abs(jumps) <= aggrading_limit).astype(float)
        else:
            raise ConfigError(f"unknown tract trend {trend!r}")
        out[s] = base + strength * np.where(jumps == 0, 0.5, favour)
    # never an exact zero: under a strict tract graph a zero emission can leave a
    # core with no allowed path (also with prior_strength=0)
    return np.maximum(out, 1e-6)


class RankTrendEmission(CategoricalEmission):
    """P(rank trend over the neighbouring beds | tract), categorical over slope bins.

    The slope (:func:`rank_trends`, ranks per bed) falls into one of seven bins
    with edges ``-0.55, -0.25, -0.05, 0.05, 0.25, 0.55``: strongly, moderately,
    slightly shallowing, flat, and the same deepening. Binned rather than
    Gaussian: the slope takes few values and a tract of alternating facies
    (slope exactly 0) made a Gaussian collapse onto one value (variance 0,
    measured on the project's synthetic cores).
    """

    kind = "rank_trend"
    EDGES = (-0.55, -0.25, -0.05, 0.05, 0.25, 0.55)
    CENTRES = (-0.8, -0.4, -0.15, 0.0, 0.15, 0.4, 0.8)
    CATEGORIES = (
        "<-0.55",
        "-0.55..-0.25",
        "-0.25..-0.05",
        "flat",
        "0.05..0.25",
        "0.25..0.55",
        ">0.55",
    )

    def __init__(
        self,
        n_tracts: int,
        pseudo: np.ndarray | None = None,
        unseen_pseudo: float = 0.5,
        name: str = "rank_trend",
    ) -> None:
        super().__init__(self.CATEGORIES, n_tracts, pseudo, unseen_pseudo, name)

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        if tuple(str(c) for c in data["categories"]) != cls.CATEGORIES:
            raise ModelFileError(
                f"emission {data.get('name')!r}: categories must be the slope bins "
                f"{list(cls.CATEGORIES)}",
                file=source,
            )
        piece = cls(n_tracts, unseen_pseudo=float(data["unseen_pseudo"]), name=data["name"])
        return piece._load_tables(data, n_tracts, source)

    def _observed(self, beds: EncodedBeds) -> np.ndarray:
        x = beds.numeric[RANK_TREND]
        known = np.isfinite(x)
        out = np.full(len(x), MISSING, dtype=np.int64)
        out[known] = np.digitize(x[known], self.EDGES)
        return out


class RankStepAboveEmission(RankStepEmission):
    """P(rank jump at the bed's top | tract): :class:`RankStepEmission` read one bed up.

    Same categories and priors as the jump at the base; the top bed of a
    succession has none (marginalised). See :func:`rank_steps_above`.
    """

    kind = "rank_step_above"

    def __init__(
        self,
        n_tracts: int,
        pseudo: np.ndarray | None = None,
        unseen_pseudo: float = 0.5,
        name: str = RANK_STEP_ABOVE,
    ) -> None:
        super().__init__(n_tracts, pseudo, unseen_pseudo, name)

    def _observed(self, beds: EncodedBeds) -> np.ndarray:
        x = beds.numeric[RANK_STEP_ABOVE]
        known = np.isfinite(x)
        out = np.full(len(x), MISSING, dtype=np.int64)
        out[known] = np.clip(np.rint(x[known]), -self.LIMIT, self.LIMIT).astype(np.int64)
        out[known] += self.LIMIT
        return out


class StackingEmission(EmissionPiece):
    """Scaled likelihood P(tract | stacking window) / P(tract) from boosted trees.

    The hybrid classifier-HMM of Bourlard & Morgan (1994): a classifier's
    posterior divided by the class prior stands for the likelihood of the
    observation, up to a factor common to all tracts, so Viterbi and
    forward-backward use it as they would an emission. Why not only the
    generative pieces: measured on simulated cores, a classifier over a window
    of beds on each side separates the tracts far better than a product of
    per-bed pieces (benchmarks/hmm_model.md), because a tract is a pattern of
    several beds, not one bed. Learnt once from labelled beds (:meth:`train`);
    EM leaves it alone (``static``). Probabilities below ``floor`` are raised
    to it, so no tract is ever impossible from this piece alone; a tract with
    no labelled bed gets ``log(floor)``.
    """

    kind = "stacking"
    static = True

    def __init__(
        self,
        n_tracts: int,
        half_width: int = STACKING_HALF_WIDTH,
        floor: float = 1e-3,
        name: str = STACKING,
    ) -> None:
        self.name = name
        self.n_tracts = int(n_tracts)
        self.half_width = int(half_width)
        self.floor = float(floor)
        self.trees = None
        self.class_prior_ = np.full(self.n_tracts, 1.0 / self.n_tracts)

    def train(self, beds: EncodedBeds, labels: np.ndarray, random_state: int = 0) -> None:
        """Learn the classifier from the beds with a label (``labels`` -1 = none)."""
        from faciesseq.hmm.boosting import fit_boosted

        labels = np.asarray(labels, dtype=np.int64)
        known = labels >= 0
        if not known.any():
            raise ConfigError(
                "the stacking feature is learnt from labelled beds; none are labelled "
                "(give a label column, or leave the feature out)"
            )
        X = beds.numeric[STACKING][known]
        y = labels[known]
        self.trees = fit_boosted(X, y, self.n_tracts, random_state=int(random_state))
        counts = np.bincount(y, minlength=self.n_tracts).astype(float)
        prior = counts / counts.sum()
        self.class_prior_ = np.where(counts > 0, prior, 1.0)

    def log_prob(self, beds: EncodedBeds) -> np.ndarray:
        if self.trees is None:
            raise ConfigError("the stacking piece is not trained")
        p = self.trees.predict_proba(np.asarray(beds.numeric[STACKING], dtype=float))
        return np.log(np.maximum(p, self.floor)) - np.log(self.class_prior_)[None, :]

    def empty_stats(self, n_tracts: int) -> dict[str, np.ndarray]:
        return {}

    def accumulate(self, stats: dict, beds: EncodedBeds, weights: np.ndarray) -> None:
        return None

    def m_step(self, stats: dict) -> None:
        return None

    def n_parameters(self) -> int:
        return 0 if self.trees is None else int(self.trees.n_parameters())

    def to_dict(self) -> dict[str, Any]:
        if self.trees is None:
            raise ConfigError("the stacking piece is not trained")
        return {
            "kind": self.kind,
            "name": self.name,
            "half_width": self.half_width,
            "floor": self.floor,
            "class_prior": self.class_prior_.tolist(),
            "trees": self.trees.to_dict(),
        }

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        from faciesseq.hmm.boosting import BoostedTrees

        if int(data["half_width"]) != STACKING_HALF_WIDTH:
            raise ModelFileError(
                f"emission {data.get('name')!r}: half_width must be {STACKING_HALF_WIDTH}",
                file=source,
            )
        floor = float(data["floor"])
        if not 0 < floor < 1:
            raise ModelFileError(
                f"emission {data.get('name')!r}: floor must lie in (0, 1)", file=source
            )
        piece = cls(n_tracts, floor=floor, name=str(data["name"]))
        prior = _check_table(f"{piece.name}.class_prior", data["class_prior"], (n_tracts,), source)
        if np.any(prior <= 0) or np.any(prior > 1):
            raise ModelFileError(
                f"emission {piece.name}: class_prior must lie in (0, 1]", file=source
            )
        piece.class_prior_ = prior
        width = len(stacking_columns())
        declared = data["trees"].get("n_features") if isinstance(data["trees"], Mapping) else None
        if declared != width:  # checked before the trees are packed into arrays
            raise ModelFileError(
                f"emission {piece.name}: {declared!r} window features, expected {width}",
                file=source,
            )
        trees = BoostedTrees.from_dict(data["trees"], source)
        if trees.n_classes != n_tracts:
            raise ModelFileError(
                f"emission {piece.name}: {trees.n_classes} classes for {n_tracts} tracts",
                file=source,
            )
        width = len(stacking_columns())
        if trees.n_features != width:
            raise ModelFileError(
                f"emission {piece.name}: {trees.n_features} window features, expected {width}",
                file=source,
            )
        piece.trees = trees
        return piece


_KINDS = {
    "stacking": StackingEmission,
    "rank_step": RankStepEmission,
    "rank_step_above": RankStepAboveEmission,
    "rank_trend": RankTrendEmission,
    "facies": FaciesEmission,
    "contact": ContactEmission,
    "facies_trend": FaciesTrendEmission,
    "gaussian": GaussianEmission,
}


def piece_from_dict(data: Any, n_tracts: int, source: str | None = None) -> EmissionPiece:
    """Rebuild an emission piece from :meth:`EmissionPiece.to_dict` output (validated)."""
    from faciesseq.hmm.context import ContextEmission

    kinds = {**_KINDS, "context": ContextEmission}
    if not isinstance(data, Mapping) or data.get("kind") not in kinds:
        kind = data.get("kind") if isinstance(data, Mapping) else None
        raise ModelFileError(
            f"unknown emission kind {kind!r}; expected one of {sorted(kinds)}", file=source
        )
    try:
        return kinds[data["kind"]].from_dict(data, n_tracts, source)
    except KeyError as exc:
        raise ModelFileError(
            f"emission {data.get('name')!r}: missing key {exc.args[0]!r}", file=source
        ) from None


def trend_pseudo_counts(
    ranks: np.ndarray,
    trends: Sequence[str],
    strength: float,
    base: float,
    embedded: bool,
) -> np.ndarray:
    """Dirichlet pseudo-counts for P(facies_t | facies_t-1, tract) built from ranks.

    A step from facies ``g`` (below) to ``f`` (above) is deepening upward when
    ``rank[f] > rank[g]`` (larger rank = more basinward / deeper), shallowing
    when smaller. Every allowed cell gets ``base``; a deepening tract adds
    ``strength`` to each deepening cell, a shallowing tract to each shallowing
    cell, an aggrading tract to cells within one rank; equal-rank steps get
    half of ``strength`` in every tract. (Walther's law and the usual reading of
    stacking patterns: retrogradation in the TST, progradation in the HST, FSST
    and LST -- common practice; e.g. Catuneanu et al. 2009.)

    Returns an array ``(n_tracts, V, V)``.
    """
    ranks = np.asarray(ranks, dtype=float)
    V = len(ranks)
    step = ranks[None, :] - ranks[:, None]  # [g, f]: rank(f) - rank(g)
    out = np.empty((len(trends), V, V))
    for s, trend in enumerate(trends):
        if trend == "deepening":
            favour = (step > 0).astype(float)
        elif trend == "shallowing":
            favour = (step < 0).astype(float)
        elif trend == "aggrading":
            favour = (np.abs(step) <= 1).astype(float)
        else:
            raise ConfigError(f"unknown tract trend {trend!r}")
        favour = np.where(step == 0, 0.5, favour)
        out[s] = base + strength * favour
    if embedded:
        out[:, np.arange(V), np.arange(V)] = 0.0
    return out


def make_piece(
    feature: str,
    *,
    facies: Sequence[str],
    contacts: Sequence[str],
    n_tracts: int,
    ranks: np.ndarray | None,
    trends: Sequence[str],
    prior_strength: float,
    embedded: bool,
    numeric_scale: tuple[float, float] = (0.0, 1.0),
) -> EmissionPiece:
    """A fresh emission piece for ``feature`` with the project's default priors.

    ``prior_strength`` scales every pseudo-count; 0 turns all priors off (plain
    maximum likelihood). ``numeric_scale`` is ``(mean, variance)`` of the
    feature over the training beds, used by Gaussian pieces for their prior.
    """
    V = len(facies)
    base = 0.1 * prior_strength
    if feature == "facies":
        return FaciesEmission(facies, n_tracts, np.full((n_tracts, V), base))
    if feature == "facies_trend":
        if ranks is None:
            trend = np.full((n_tracts, V, V), base + 0.5 * prior_strength)
            if embedded:
                trend[:, np.arange(V), np.arange(V)] = 0.0
        else:
            trend = trend_pseudo_counts(ranks, trends, prior_strength, base, embedded)
        return FaciesTrendEmission(
            facies, n_tracts, np.full((n_tracts, V), base), trend, embedded=embedded
        )
    if feature == "contact":
        return ContactEmission(contacts, n_tracts, np.full((n_tracts, len(contacts)), base))
    if feature == RANK_STEP:
        return RankStepEmission(n_tracts, rank_step_pseudo_counts(trends, prior_strength, base))
    if feature == RANK_STEP_ABOVE:
        return RankStepAboveEmission(
            n_tracts, rank_step_pseudo_counts(trends, prior_strength, base)
        )
    if feature == STACKING:
        return StackingEmission(n_tracts)
    if feature in CONTEXT_FEATURES:
        from faciesseq.hmm.context import ContextEmission, context_pseudo_counts, tract_levels

        levels = tract_levels(range(len(trends)), trends)
        pseudo = context_pseudo_counts(feature, trends, levels, prior_strength)
        return ContextEmission(feature, n_tracts, pseudo)
    if feature == RANK_TREND:
        pseudo = rank_step_pseudo_counts(
            trends, prior_strength, base, RankTrendEmission.CENTRES, aggrading_limit=0.25
        )
        return RankTrendEmission(n_tracts, pseudo)
    mean, var = numeric_scale
    nu = 1.0 if prior_strength > 0 else 0.0
    return GaussianEmission(feature, n_tracts, nu=nu, s0=max(var, 1e-6), mean0=mean)
