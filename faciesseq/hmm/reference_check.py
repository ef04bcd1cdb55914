"""The check of a reference model against the database's own fit without labels.

A reference (:mod:`faciesseq.hmm.reference`) names the tracts by the conventions of the
cores it was learnt from; a fit without labels names them by its priors, which hold on
some databases and not on others. Neither knows which is right, but how far their
columns agree says something of both. With ``reference_use="check"``
(``fit --reference-use check``) the database is fitted with and without the reference,
both columns of its own cores are decoded, and the share of the thickness given one
tract by both is measured: below :data:`KEEP_REFERENCE_BELOW` (about what two unrelated
columns of four tracts share) the fit with the reference is kept, otherwise the fit
without it. The share is kept in the model (``reference_check_``, the model file's
``training.reference_check``) and, below :data:`UNSURE_BELOW`, a caution says the names
are unsure.

Measured on four generators written blind (each read with a reference learnt from the
other three) and the project's scenarios: on the tuning seeds 11-13 and on the report
seeds 651-653 the fit without a reference read 0.39-0.42 of the tracts (balanced
accuracy, near chance) where the share was below 0.5 and 0.54-0.65 above it; below a
third the fit with the reference read 0.66-0.71 against 0.39-0.40 without it
(``python benchmarks/eval_reference.py --seeds 651,652,653 --out /tmp/ref``;
``benchmarks/tract_model.md``, "Checking the reference against the database's own fit").
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "KEEP_REFERENCE_BELOW",
    "REFERENCE_USES",
    "UNSURE_BELOW",
    "agreement",
    "check_reference",
    "recorded_share",
    "unsure",
    "unsure_note",
]

#: ``TractHMM(reference_use=...)``: read the reference always, or check it first.
REFERENCE_USES = ("always", "check")
#: Below this share of the thickness the fit with the reference is kept: about what two
#: unrelated columns of four tracts share (the sum of the squares of the tracts'
#: shares, 0.25-0.35 for the proportions seen), chosen on the tuning seeds 11-13.
KEEP_REFERENCE_BELOW = 1 / 3
#: Below this share a caution says the tract names are unsure (measured above).
UNSURE_BELOW = 0.5


def agreement(first, second) -> float:
    """The share of the thickness two decoded columns of the same beds (tract tables
    of :meth:`~faciesseq.hmm.decoding.Interpretation.tracts_table`, one row per bed in
    the same order) give one tract."""
    thickness = (first["base"] - first["top"]).to_numpy(dtype=float)
    same = first["tract"].to_numpy() == second["tract"].to_numpy()
    total = thickness.sum()
    return float((thickness * same).sum() / total) if total > 0 else float(same.mean())


def check_reference(with_reference, without, successions) -> dict:
    """Which of two fits of ``successions`` to keep, as a record: ``agreement`` (the
    share of the thickness their columns give one tract), ``kept`` (``"reference"``
    below :data:`KEEP_REFERENCE_BELOW`, else ``"without"``) and the two thresholds."""
    share = agreement(
        with_reference.decode(successions).tracts_table(),
        without.decode(successions).tracts_table(),
    )
    kept = "reference" if share < KEEP_REFERENCE_BELOW else "without"
    return {
        "agreement": round(share, 4),
        "kept": kept,
        "keep_reference_below": round(KEEP_REFERENCE_BELOW, 4),
        "unsure_below": UNSURE_BELOW,
    }


def recorded_share(record: dict | None) -> float | None:
    """The share of agreement a check's record (:func:`check_reference`; a model
    file's, which may be damaged) holds, or None where it holds no finite number."""
    share = record.get("agreement") if isinstance(record, dict) else None
    return float(share) if isinstance(share, int | float) and np.isfinite(share) else None


def unsure(record: dict | None) -> bool:
    """Whether a check's record says the tract names are unsure."""
    share = recorded_share(record)
    return share is not None and share < UNSURE_BELOW


def unsure_note(record: dict | None) -> str | None:
    """The sentence added to the probability note of cores decoded by a fit whose
    check says the tract names are unsure (:func:`unsure`), else None."""
    if not unsure(record):
        return None
    return (
        f"The fits with and without the reference gave one tract to {record['agreement']:.2f} "
        "of the thickness: the tract names are unsure (docs/hmm.md, 'Checking a reference')."
    )
