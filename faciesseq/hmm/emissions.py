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

Where they live: the categorical, facies-trend and Gaussian pieces here; the
rank pieces in :mod:`faciesseq.hmm.rank_pieces`, the stacking classifier in
:mod:`faciesseq.hmm.stacking_piece`, the context pieces in
:mod:`faciesseq.hmm.context`; :mod:`faciesseq.hmm.pieces` makes a fresh piece
for a feature name and rebuilds one from a model file. The beds they read come
from :func:`faciesseq.hmm.encoding.encode_beds`.

A facies (or contact type) never seen in training gets the smoothed probability
of an unseen category (additive smoothing, Lidstone 1920 / Chen & Goodman 1999)
and a :class:`UnseenCategoryWarning`; it never raises.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any, ClassVar

import numpy as np

from faciesseq.errors import ConfigError, ModelFileError
from faciesseq.hmm.encoding import MISSING, UNSEEN, EncodedBeds

__all__ = [
    "CategoricalEmission",
    "ContactEmission",
    "EmissionPiece",
    "FaciesEmission",
    "FaciesTrendEmission",
    "GaussianEmission",
    "check_probabilities",
    "check_table",
    "trend_pseudo_counts",
]


def _log(p: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return np.log(p)


def check_table(name: str, value: Any, shape: tuple[int, ...], source: str | None) -> np.ndarray:
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


def check_probabilities(name: str, arr: np.ndarray, source: str | None) -> None:
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
    computed once per fit. ``coded`` pieces observe one integer code per bed
    (``observed``, ``log_prob_of``, ``accumulate_of``), so EM can work on the
    distinct combinations of codes instead of on every bed.
    """

    kind: ClassVar[str] = ""
    static: ClassVar[bool] = False
    coded: ClassVar[bool] = False
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

    coded = True

    def _observed(self, beds: EncodedBeds) -> np.ndarray:
        return beds.facies

    def observed(self, beds: EncodedBeds) -> np.ndarray:
        """``(T,)`` the category code of every bed (``MISSING``, ``UNSEEN`` below 0)."""
        return self._observed(beds)

    def log_prob(self, beds: EncodedBeds) -> np.ndarray:
        return self.log_prob_of(self._observed(beds))

    def log_prob_of(self, obs: np.ndarray) -> np.ndarray:
        """``log_prob`` of observations given as codes (:meth:`observed`): each code's
        row of log-probabilities taken whole (the logs of the table, taken once, are the
        logs of its entries wherever they are taken; a missing code's row is zeros)."""
        S, V = self.emissionprob_.shape
        rows = np.zeros((V + 2, S))  # by code, then a missing code's and an unseen one's
        rows[:V] = _log(self.emissionprob_).T
        # the model warns once per core of unseen codes, naming the depths (TractHMM.decode)
        rows[V + 1] = _log(self.unseen_prob_)
        index = np.where(obs >= 0, obs, np.where(obs == UNSEEN, V + 1, V))
        return np.take(rows, index, axis=0)

    def empty_stats(self, n_tracts: int) -> dict[str, np.ndarray]:
        return {"counts": np.zeros((n_tracts, len(self.categories)))}

    def accumulate(self, stats: dict, beds: EncodedBeds, weights: np.ndarray) -> None:
        self.accumulate_of(stats, self._observed(beds), weights)

    def accumulate_of(self, stats: dict, obs: np.ndarray, weights: np.ndarray) -> None:
        """``accumulate`` of observations given as codes (:meth:`observed`)."""
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
        self.pseudo = check_table(f"{self.name}.pseudo", data["pseudo"], (n_tracts, V), source)
        self.emissionprob_ = check_table(
            f"{self.name}.emissionprob", data["emissionprob"], (n_tracts, V), source
        )
        check_probabilities(f"{self.name}.emissionprob", self.emissionprob_, source)
        self.unseen_prob_ = check_table(
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
        piece.trend_pseudo = check_table(
            f"{piece.name}.trend_pseudo", data["trend_pseudo"], (n_tracts, V, V), source
        )
        piece.trendprob_ = check_table(
            f"{piece.name}.trendprob", data["trendprob"], (n_tracts, V, V), source
        )
        check_probabilities(f"{piece.name}.trendprob", piece.trendprob_, source)
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
        piece.means_ = check_table(f"{piece.name}.means", data["means"], (n_tracts,), source)
        piece.vars_ = check_table(f"{piece.name}.vars", data["vars"], (n_tracts,), source)
        if np.any(piece.vars_ <= 0):
            raise ModelFileError(f"emission {piece.name}: variances must be > 0", file=source)
        return piece


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
